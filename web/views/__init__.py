"""The pages, one module per part of the service."""
