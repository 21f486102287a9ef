"""Models of chronology.runs."""
