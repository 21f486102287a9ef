"""Models of chronology.interpretations."""
