"""The evidence step of the demo (see projects/demo/steps.py)."""

STEPS: list = []
