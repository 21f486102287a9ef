"""Pages for people: server-rendered views over the same services the API uses."""
