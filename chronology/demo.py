"""The order steps of the demo: the full check, the diagram and the exports."""

STEPS: list = []
