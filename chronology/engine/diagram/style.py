"""Look of the stratigraphic diagram: palette, glyph sizes, text metrics.

Hues come from the colour-blind-safe palette of Okabe & Ito (2008).  Boxes
are filled with light tints of a hue and outlined in the full hue, and every
kind also has its own outline *shape*, so kinds stay distinct in grey-scale
or for any colour vision.  Vermilion is kept for relations that contradict
the phase order and for nothing else.
"""

from __future__ import annotations

from ..labels import label_list, sort_labels

__all__ = [
    "OKABE_ITO",
    "KIND_STYLE",
    "INK",
    "MUTED_INK",
    "CONFLICT",
    "BAND_FILLS",
    "STRIP_FILL",
    "FONT_FAMILY",
    "FONT_SIZE",
    "NODE_HEIGHT",
    "LAYER_GAP",
    "tint",
    "text_width",
    "node_text",
]

#: Okabe, M. & Ito, K. (2008). Color Universal Design (CUD): how to make
#: figures and presentations that are friendly to colorblind people.
OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermilion": "#D55E00",
    "reddish_purple": "#CC79A7",
}

INK = "#1F2328"
MUTED_INK = "#59626C"
CONFLICT = OKABE_ITO["vermilion"]
#: Alternating phase band fills, very light so lines stay readable.
BAND_FILLS = ("#F4F6F8", "#FBFAF4")
STRIP_FILL = "#F2F2F2"
FONT_FAMILY = "DejaVu Sans, Verdana, sans-serif"
FONT_SIZE = 11.0
NODE_HEIGHT = 22.0
LAYER_GAP = 58.0


def tint(hex_colour: str, amount: float) -> str:
    """Mix ``hex_colour`` with white; ``amount`` is the share of white."""
    r, g, b = (int(hex_colour[i : i + 2], 16) for i in (1, 3, 5))
    mix = [round(c + (255 - c) * amount) for c in (r, g, b)]
    return "#{:02X}{:02X}{:02X}".format(*mix)


#: Per kind: outline shape, outline colour, fill, and the legend wording.
KIND_STYLE = {
    "deposit": {"shape": "slab", "hue": OKABE_ITO["sky_blue"], "name": "Deposit"},
    "fill": {"shape": "bowl", "hue": OKABE_ITO["bluish_green"], "name": "Fill"},
    "cut": {"shape": "pit", "hue": OKABE_ITO["orange"], "name": "Cut (interface)"},
    "masonry": {"shape": "double", "hue": "#B8A600", "name": "Masonry"},
    "timber": {"shape": "beam", "hue": OKABE_ITO["reddish_purple"], "name": "Timber"},
    "skeleton": {"shape": "capsule", "hue": OKABE_ITO["blue"], "name": "Skeleton"},
    "other": {"shape": "tab", "hue": "#7F7F7F", "name": "Other"},
}
for _style in KIND_STYLE.values():
    _style["fill"] = tint(_style["hue"], 0.78)
del _style


def text_width(text: str, size: float = FONT_SIZE) -> float:
    """Estimated advance width of ``text``; digits and capitals are wider.

    The factors are a rough average of common sans-serif faces (from memory);
    they only size boxes, so a small error merely adds slack.
    """
    width = 0.0
    for ch in text:
        if ch.isupper() or ch in "mwMW@%":
            width += 0.72
        elif ch.isdigit():
            width += 0.64
        elif ch in " .,:;'|!il":
            width += 0.32
        else:
            width += 0.58
    return width * size


def node_text(label: str, members) -> str:
    """Text shown in a box: the label, then the other labels of a merged class in words.

    Two or three labels are all shown ("1013 and 2013"); a longer class shows
    two and says how many more there are ("1013, 2013 and two more"); the box's
    tooltip lists them all.
    """
    others = [m for m in members if m != label]
    if not others:
        return label
    return label_list([label, *sort_labels(others)], limit=3, sort=False)
