"""Plain-data types of the stratigraphic diagram: its input and its layout.

The input is the *reduced* temporal order (only direct relations, Harris's
law of stratigraphic succession), one node per context or merged equality
class.  The output is geometry only; :mod:`.svg` turns it into a drawing.
Coordinates are in drawing units (SVG user units, about one pixel), with
``y`` growing downwards as in SVG, so later contexts have *smaller* ``y``.
"""

from __future__ import annotations

from dataclasses import dataclass, field

__all__ = [
    "KINDS",
    "DiagramNode",
    "DiagramEdge",
    "NodeBox",
    "EdgePath",
    "Band",
    "Layout",
    "UNPHASED_BAND",
]

#: Context kinds the diagram knows a glyph for.
KINDS = ("deposit", "cut", "fill", "masonry", "timber", "skeleton", "other")

#: Name of the side strip that holds contexts without a phase.
UNPHASED_BAND = "Unphased"


@dataclass(frozen=True, slots=True)
class DiagramNode:
    """One context, or one class of contexts merged by equalities.

    ``members`` lists the labels of every context in a merged class (the
    node's own label included); leave it empty for a single context.
    """

    id: int
    label: str
    kind: str = "deposit"
    area: str = ""
    phase: str | None = None
    members: tuple[str, ...] | list[str] = ()


@dataclass(frozen=True, slots=True)
class DiagramEdge:
    """A direct relation ``earlier_id`` before ``later_id``.

    ``strict`` is False for a weak relation (earlier not later than later).
    """

    earlier_id: int
    later_id: int
    strict: bool = True


@dataclass(frozen=True, slots=True)
class NodeBox:
    """Where one node is drawn: centre ``(x, y)`` and box size."""

    id: int
    label: str
    kind: str
    phase: str | None
    area: str
    members: tuple[str, ...]
    layer: int
    x: float
    y: float
    width: float
    height: float


@dataclass(frozen=True, slots=True)
class EdgePath:
    """One drawn relation as a polyline from the earlier to the later node.

    ``conflict`` marks a relation that contradicts the phase order: the
    earlier context sits in a later phase, so the line runs downwards.
    """

    earlier_id: int
    later_id: int
    strict: bool
    conflict: bool
    points: tuple[tuple[float, float], ...]


@dataclass(frozen=True, slots=True)
class Band:
    """A horizontal phase band, or the vertical strip of unphased contexts."""

    name: str
    kind: str  # "phase" or "unphased"
    x: float
    y: float
    width: float
    height: float
    first_layer: int
    last_layer: int


@dataclass(frozen=True, slots=True)
class Layout:
    """A complete layered drawing, ready to render.

    ``layer_orders[i]`` lists layer ``i`` (0 = bottom) from left to right:
    node ids, and negative numbers ``-1, -2, ...`` for the bend points of
    long relations, numbered along ``edges`` in order.  ``crossings``
    counts segment crossings between adjacent layers of that order.
    """

    nodes: tuple[NodeBox, ...]
    edges: tuple[EdgePath, ...]
    bands: tuple[Band, ...]
    crossings: int
    width: float
    height: float
    n_layers: int
    layer_orders: tuple[tuple[int, ...], ...] = field(default=(), repr=False)

    def node(self, node_id: int) -> NodeBox:
        """Return the box of ``node_id`` (linear scan; fine for tests)."""
        for box in self.nodes:
            if box.id == node_id:
                return box
        raise KeyError(node_id)
