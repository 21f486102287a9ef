"""Writing the demo's outputs: every step records what it wrote in ``state["files"]``."""

from __future__ import annotations


def write_output(state, name: str, data: str | bytes):
    """Write ``data`` to ``state["out"] / name`` (folders made as needed) and record the path."""
    path = state["out"] / name
    path.parent.mkdir(parents=True, exist_ok=True)
    if isinstance(data, bytes):
        path.write_bytes(data)
    else:
        path.write_text(data)
    state["files"].append(path)
    return path
