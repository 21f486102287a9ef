"""The stratigraphic diagram: a layered drawing of the reduced temporal order.

Plain data in (:class:`DiagramNode`, :class:`DiagramEdge`, phase names),
geometry out (:class:`Layout`), and SVG text from :func:`render_svg`.
Earlier contexts are drawn below later ones; phases are horizontal bands,
earliest at the bottom; contexts without a phase sit in a side strip on the
right at their stratigraphic height.
"""

from .crossings import bilayer_crossings, count_crossings
from .layout import layout_diagram
from .model import KINDS, UNPHASED_BAND, Band, DiagramEdge, DiagramNode, EdgePath, Layout, NodeBox
from .split import DrawingPart, split_for_drawing
from .svg import render_svg

__all__ = [
    "KINDS",
    "UNPHASED_BAND",
    "DiagramNode",
    "DiagramEdge",
    "NodeBox",
    "EdgePath",
    "Band",
    "Layout",
    "DrawingPart",
    "layout_diagram",
    "render_svg",
    "split_for_drawing",
    "count_crossings",
    "bilayer_crossings",
]
