"""Render a :class:`~.model.Layout` as a standalone SVG document.

Drawing order: title, phase bands and the unphased strip, relation lines,
context boxes, then the legend and the caption below the diagram.  Lines
carry no arrowheads, as up means later; a relation that contradicts the
phase order is dashed vermilion with an arrowhead at its later end and a
warning triangle at its midpoint.  Weak relations (not later than) are
dotted.  Each box has a ``<title>`` with its label, kind, phase and merged
members for hover text.
"""

from __future__ import annotations

import textwrap
from xml.sax.saxutils import escape, quoteattr

from ..errors import DiagramError
from ..labels import label_list
from .model import KINDS, Layout, NodeBox
from .style import (
    BAND_FILLS,
    CONFLICT,
    FONT_FAMILY,
    FONT_SIZE,
    INK,
    KIND_STYLE,
    MUTED_INK,
    STRIP_FILL,
    text_width,
    node_text,
)

__all__ = ["render_svg"]

_TITLE_HEIGHT = 34.0
_LEGEND_ROW = 26.0


def render_svg(layout: Layout, title: str = "", caption: str = "") -> str:
    """Return the drawing as SVG 1.1 text.

    Parameters
    ----------
    layout : Layout
        From :func:`layout_diagram`.
    title : str
        Heading above the diagram (omitted when empty).
    caption : str
        Text below the legend, wrapped to the drawing's width.

    Returns
    -------
    str
        A complete ``<svg>`` document with an XML declaration.

    Raises
    ------
    DiagramError
        ``diagram-bad-layout`` when ``layout`` is not a Layout.
    """
    if not isinstance(layout, Layout):
        raise DiagramError("render_svg needs a Layout", code="diagram-bad-layout", details={})
    width = max(layout.width, 560.0)
    top = _TITLE_HEIGHT if title else 8.0
    legend_items = _legend_items(layout)
    per_row = max(1, int((width - 32) // 170))
    legend_rows = -(-len(legend_items) // per_row)
    caption_lines = _wrap(caption, width - 32)
    legend_top = top + layout.height + 6
    caption_top = legend_top + legend_rows * _LEGEND_ROW + 10
    height = caption_top + len(caption_lines) * 16 + 12
    out: list[str] = [
        '<?xml version="1.0" encoding="UTF-8"?>',
        f'<svg xmlns="http://www.w3.org/2000/svg" version="1.1" width="{width:.0f}" height="{height:.0f}" '
        f'viewBox="0 0 {width:.1f} {height:.1f}" font-family={quoteattr(FONT_FAMILY)} font-size="{FONT_SIZE:g}">',
        f"<title>{escape(title or 'Stratigraphic diagram')}</title>",
    ]
    if caption:
        out.append(f"<desc>{escape(caption)}</desc>")
    out.append(_defs())
    out.append(f'<rect x="0" y="0" width="{width:.1f}" height="{height:.1f}" fill="#FFFFFF"/>')
    if title:
        out.append(f'<text x="16" y="23" font-size="16" font-weight="bold" fill="{INK}">{escape(title)}</text>')
    out.append(f'<g transform="translate(0,{top:.1f})">')
    out.append(_bands(layout))
    out.append(_edges(layout))
    out.append(_nodes(layout))
    out.append("</g>")
    out.append(_legend(legend_items, legend_top, per_row))
    for i, line in enumerate(caption_lines):
        out.append(f'<text x="16" y="{caption_top + 12 + 16 * i:.1f}" fill="{MUTED_INK}" class="caption">{escape(line)}</text>')
    out.append("</svg>")
    return "\n".join(out) + "\n"


def _defs() -> str:
    return (
        "<defs>"
        f'<marker id="later-end" viewBox="0 0 10 10" refX="9" refY="5" markerWidth="7" markerHeight="7" orient="auto-start-reverse">'
        f'<path d="M0,0 L10,5 L0,10 z" fill="{CONFLICT}"/></marker>'
        '<pattern id="strip-hatch" width="8" height="8" patternUnits="userSpaceOnUse" patternTransform="rotate(45)">'
        f'<rect width="8" height="8" fill="{STRIP_FILL}"/><line x1="0" y1="0" x2="0" y2="8" stroke="#E2E2E2" stroke-width="3"/></pattern>'
        "</defs>"
    )


def _bands(layout: Layout) -> str:
    parts = ['<g class="bands">']
    phase_i = 0
    for band in layout.bands:
        if band.kind == "phase":
            fill = BAND_FILLS[phase_i % 2]
            phase_i += 1
            parts.append(
                f'<rect class="band" data-phase={quoteattr(band.name)} x="{band.x:.1f}" y="{band.y:.1f}" '
                f'width="{band.width:.1f}" height="{band.height:.1f}" fill="{fill}" stroke="#C9D1D9" stroke-width="0.8"/>'
            )
            parts.append(
                f'<text x="{band.x + 8:.1f}" y="{band.y + 17:.1f}" font-size="{FONT_SIZE + 1:g}" '
                f'font-weight="bold" fill="{MUTED_INK}">{escape(band.name)}</text>'
            )
        else:
            parts.append(
                f'<rect class="band" data-phase="" x="{band.x:.1f}" y="{band.y:.1f}" width="{band.width:.1f}" '
                f'height="{band.height:.1f}" fill="url(#strip-hatch)" stroke="#BFBFBF" stroke-width="0.8" stroke-dasharray="4 3"/>'
            )
            parts.append(
                f'<text x="{band.x + 8:.1f}" y="{band.y + 17:.1f}" font-size="{FONT_SIZE + 1:g}" '
                f'font-style="italic" fill="{MUTED_INK}">{escape(band.name)}</text>'
            )
    parts.append("</g>")
    return "\n".join(parts)


def _edges(layout: Layout) -> str:
    parts = ['<g class="relations" fill="none">']
    warnings = []
    for edge in layout.edges:
        pts = " ".join(f"{x:.1f},{y:.1f}" for x, y in edge.points)
        ident = f'data-earlier="{edge.earlier_id}" data-later="{edge.later_id}"'
        if edge.conflict:
            parts.append(
                f'<polyline {ident} class="conflict" points="{pts}" stroke="{CONFLICT}" stroke-width="1.8" '
                f'stroke-dasharray="7 4" marker-end="url(#later-end)"/>'
            )
            warnings.append(_warning_glyph(*_midpoint(edge.points)))
        elif edge.strict:
            parts.append(f'<polyline {ident} points="{pts}" stroke="{INK}" stroke-width="1"/>')
        else:
            parts.append(
                f'<polyline {ident} class="weak" points="{pts}" stroke="{INK}" stroke-width="1.2" '
                f'stroke-dasharray="1.5 2.5" stroke-linecap="round"/>'
            )
    parts.extend(warnings)
    parts.append("</g>")
    return "\n".join(parts)


def _midpoint(points) -> tuple[float, float]:
    lengths = [((x2 - x1) ** 2 + (y2 - y1) ** 2) ** 0.5 for (x1, y1), (x2, y2) in zip(points, points[1:])]
    half = sum(lengths) / 2
    for ((x1, y1), (x2, y2)), length in zip(zip(points, points[1:]), lengths):
        if half <= length and length > 0:
            t = half / length
            return x1 + t * (x2 - x1), y1 + t * (y2 - y1)
        half -= length
    return points[-1]


def _warning_glyph(x: float, y: float) -> str:
    return (
        f'<g class="warning" transform="translate({x:.1f},{y:.1f})">'
        f'<path d="M0,-8 L8,6 L-8,6 z" fill="#FFFFFF" stroke="{CONFLICT}" stroke-width="1.6" stroke-linejoin="round"/>'
        f'<text x="0" y="4.5" text-anchor="middle" font-size="10" font-weight="bold" fill="{CONFLICT}">!</text></g>'
    )


def _shape(shape: str, x: float, y: float, w: float, h: float, fill: str, stroke: str) -> str:
    """Outline of one kind's glyph, centred on (x, y)."""
    l, r, t, b = x - w / 2, x + w / 2, y - h / 2, y + h / 2
    common = f'fill="{fill}" stroke="{stroke}" stroke-width="1.3"'
    if shape == "slab":
        return f'<rect x="{l:.1f}" y="{t:.1f}" width="{w:.1f}" height="{h:.1f}" rx="1.5" {common}/>'
    if shape == "bowl":  # flat top, rounded bottom: material in a hollow
        k = min(9.0, w / 4)
        return (f'<path d="M{l:.1f},{t:.1f} H{r:.1f} V{b - k:.1f} Q{r:.1f},{b:.1f} {r - k:.1f},{b:.1f} '
                f'H{l + k:.1f} Q{l:.1f},{b:.1f} {l:.1f},{b - k:.1f} Z" {common}/>')
    if shape == "pit":  # wide top narrowing down: a removal profile
        k = min(7.0, w / 5)
        return (f'<path d="M{l:.1f},{t:.1f} H{r:.1f} L{r - k:.1f},{b:.1f} H{l + k:.1f} Z" {common} '
                f'stroke-dasharray="4 2"/>')
    if shape == "double":  # built: a second frame inside
        return (f'<rect x="{l:.1f}" y="{t:.1f}" width="{w:.1f}" height="{h:.1f}" {common}/>'
                f'<rect x="{l + 2.5:.1f}" y="{t + 2.5:.1f}" width="{w - 5:.1f}" height="{h - 5:.1f}" '
                f'fill="none" stroke="{stroke}" stroke-width="0.8"/>')
    if shape == "beam":  # pointed ends
        k = h / 2
        return (f'<path d="M{l:.1f},{y:.1f} L{l + k:.1f},{t:.1f} H{r - k:.1f} L{r:.1f},{y:.1f} '
                f'L{r - k:.1f},{b:.1f} H{l + k:.1f} Z" {common}/>')
    if shape == "capsule":
        return f'<rect x="{l:.1f}" y="{t:.1f}" width="{w:.1f}" height="{h:.1f}" rx="{h / 2:.1f}" {common}/>'
    # "tab": a clipped top-right corner
    k = 7.0
    return f'<path d="M{l:.1f},{t:.1f} H{r - k:.1f} L{r:.1f},{t + k:.1f} V{b:.1f} H{l:.1f} Z" {common}/>'


def _node_title(box: NodeBox) -> str:
    bits = [f"{box.label} ({KIND_STYLE[box.kind]['name'].lower()})"]
    if box.phase:
        bits.append(f"phase {box.phase}")
    if box.area:
        bits.append(f"area {box.area}")
    if len(box.members) > 1:
        bits.append("one unit with " + label_list(box.members))
    return "; ".join(bits)


def _nodes(layout: Layout) -> str:
    parts = ['<g class="contexts">']
    for box in layout.nodes:
        style = KIND_STYLE[box.kind]
        parts.append(
            f'<g class="context" data-id="{box.id}" data-kind="{box.kind}" data-x="{box.x:.2f}" data-y="{box.y:.2f}">'
            f"<title>{escape(_node_title(box))}</title>"
            + _shape(style["shape"], box.x, box.y, box.width, box.height, style["fill"], style["hue"])
            + f'<text x="{box.x:.1f}" y="{box.y + FONT_SIZE * 0.36:.1f}" text-anchor="middle" fill="{INK}">'
            f"{escape(node_text(box.label, box.members))}</text></g>"
        )
    parts.append("</g>")
    return "\n".join(parts)


def _legend_items(layout: Layout) -> list[tuple[str, str]]:
    present = {box.kind for box in layout.nodes}
    items = [("kind", k) for k in KINDS if k in present] or [("kind", "deposit")]
    items.append(("line", "strict"))
    if any(not e.strict and not e.conflict for e in layout.edges):
        items.append(("line", "weak"))
    if any(e.conflict for e in layout.edges):
        items.append(("line", "conflict"))
    return items


_LINE_WORDS = {
    "strict": "earlier below later",
    "weak": "not later than",
    "conflict": "against phase order",
}


def _legend(items, top: float, per_row: int) -> str:
    parts = [f'<g class="legend" transform="translate(16,{top:.1f})">']
    for i, (what, key) in enumerate(items):
        cx, cy = 170 * (i % per_row), _LEGEND_ROW * (i // per_row) + 12
        if what == "kind":
            style = KIND_STYLE[key]
            parts.append(_shape(style["shape"], cx + 20, cy, 40, 18, style["fill"], style["hue"]))
            word = style["name"]
        else:
            stroke = {"strict": f'stroke="{INK}"', "weak": f'stroke="{INK}" stroke-dasharray="1.5 2.5" stroke-linecap="round" stroke-width="1.2"',
                      "conflict": f'stroke="{CONFLICT}" stroke-dasharray="7 4" stroke-width="1.8"'}[key]
            parts.append(f'<line x1="{cx + 2}" y1="{cy}" x2="{cx + 38}" y2="{cy}" {stroke}/>')
            if key == "conflict":
                parts.append(_warning_glyph(cx + 20, cy))
            word = _LINE_WORDS[key]
        parts.append(f'<text x="{cx + 48}" y="{cy + 4}" fill="{INK}">{escape(word)}</text>')
    parts.append("</g>")
    return "\n".join(parts)


def _wrap(caption: str, width: float) -> list[str]:
    if not caption:
        return []
    chars = max(20, int(width / (text_width("n") or 6.0)))
    lines: list[str] = []
    for para in caption.splitlines() or [caption]:
        lines.extend(textwrap.wrap(para, chars) or [""])
    return lines
