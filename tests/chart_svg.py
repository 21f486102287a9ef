"""Reading numbers back out of our SVG figures, to check them against the results they were drawn from.

Matplotlib writes each tick's label as text (``svg.fonttype`` none) at the
tick's x position, and each range line as a ``<g id="range-...">`` holding
one path ``M x0 y L x1 y``.  Two ticks fix the linear map from SVG x to
astronomical years.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

from chronology.engine.calendar_scales import from_bc_ad

_NS = {"svg": "http://www.w3.org/2000/svg"}
_LABEL = re.compile(r"^(?:(\d+) cal BC|cal AD (\d+))$")


def _year(label: str) -> int | None:
    m = _LABEL.match(label.strip())
    if not m:
        return None
    return from_bc_ad(int(m.group(1)), "BC") if m.group(1) else from_bc_ad(int(m.group(2)), "AD")


def tick_labels(svg: bytes, axis: str = "xtick") -> list[tuple[float, str]]:
    """(x position, label) of every tick of the first axes, left to right."""
    root = ET.fromstring(svg)
    out = []
    for g in root.iter("{http://www.w3.org/2000/svg}g"):
        if g.get("id", "").startswith(f"{axis}_"):
            text = g.find(".//svg:text", _NS)
            if text is not None and text.text:
                out.append((float(text.get("x")), text.text))
    return sorted(out)


def x_to_year(svg: bytes):
    """The map from SVG x to astronomical years, fitted on the first and last tick."""
    ticks = [(x, _year(label)) for x, label in tick_labels(svg) if _year(label) is not None]
    (x0, y0), (x1, y1) = ticks[0], ticks[-1]
    scale = (y1 - y0) / (x1 - x0)
    return lambda x: y0 + (x - x0) * scale, abs(scale)


def range_lines(svg: bytes) -> dict[str, tuple[float, float]]:
    """``range-...`` id -> (from, to) in astronomical years, read from the drawn paths."""
    to_year, _ = x_to_year(svg)
    root = ET.fromstring(svg)
    out = {}
    for g in root.iter("{http://www.w3.org/2000/svg}g"):
        gid = g.get("id", "")
        if gid.startswith("range-"):
            path = g.find("svg:path", _NS)
            nums = [float(v) for v in re.findall(r"-?\d+(?:\.\d+)?", path.get("d"))]
            out[gid] = (to_year(nums[0]), to_year(nums[2]))
    return out


def year_per_unit(svg: bytes) -> float:
    return x_to_year(svg)[1]


def all_text(svg: bytes) -> str:
    root = ET.fromstring(svg)
    return "\n".join("".join(t.itertext()) for t in root.iter("{http://www.w3.org/2000/svg}text"))


def title(svg: bytes) -> str:
    """The text of the figure's title (``<g id="figure-title">``)."""
    root = ET.fromstring(svg)
    for g in root.iter("{http://www.w3.org/2000/svg}g"):
        if g.get("id") == "figure-title":
            return "\n".join("".join(t.itertext()) for t in g.iter("{http://www.w3.org/2000/svg}text"))
    raise AssertionError("the figure has no title")
