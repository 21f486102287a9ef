"""Models of chronology.evidence."""
