"""Vellmarsh Lane (VML24): an invented rescue excavation of Northfold Field Archaeology.

Nothing here is a real place, excavation or person.  The stratigraphy tells,
earliest first: natural subsoil in each area; an enclosure ditch across areas
A and B, recut once, whose fills are recorded under different numbers in the
two areas but are one deposit ("same as"); a settlement phase of pits with
several fills, post-holes, a clay floor and a hearth in area B (one pit cuts
the ditch's upper fill); a stone building in area C (wall and construction
cut, a floor abutting the wall, a robber trench cutting the wall, its
backfill; a timber-lined well); garden soils sealing everything.

The site is data: ``CONTEXTS`` (label, kind, area, description) and
``RELATIONSHIPS`` (subject, wording, object, certainty, note) in the order a
field team would post them.  ``MISTAKE`` is a relationship recorded in error
that would close a cycle; the demo shows it being refused with its path.
"""

from __future__ import annotations

CONTEXTS: list[tuple[str, str, str, str]] = []
RELATIONSHIPS: list[tuple[str, str, str, str, str]] = []

#: Phase of each context in the demo interpretations (earliest first).
PHASES = ["Natural", "Enclosure", "Settlement", "Stone building", "Garden soils"]
PHASE_OF: dict[str, str] = {}


def _ctx(label, kind, area, description, phase):
    CONTEXTS.append((label, kind, area, description))
    PHASE_OF[label] = phase


def _rel(subject, wording, obj, certainty="certain", note=""):
    RELATIONSHIPS.append((subject, wording, obj, certainty, note))


def _pit(area, cut, fills, cuts, phase, sealed_by=None, shape="pit"):
    """A cut with fills stacked in it; returns the uppermost fill."""
    _ctx(cut, "cut", area, f"cut of {shape}", phase)
    for c in cuts:
        _rel(cut, "cuts", c)
    previous = None
    for index, fill in enumerate(fills):
        _ctx(fill, "fill", area, f"{'primary' if index == 0 else 'upper' if index == len(fills) - 1 else 'secondary'} fill of {shape} {cut}", phase)
        _rel(fill, "fills", cut)
        if previous is not None:
            _rel(fill, "above", previous)
        previous = fill
    if sealed_by:
        _rel(sealed_by, "above", previous)
    return previous


def _area(area: str, base: int, ditch: bool):
    n = lambda k: str(base + k)  # noqa: E731 - local numbering helper
    _ctx(n(99), "deposit", area, "natural sand and gravel", "Natural")
    _ctx(n(98), "deposit", area, "natural clay lens", "Natural")
    _rel(n(98), "above", n(99))
    _ctx(n(5), "deposit", area, "subsoil, buried ground surface", "Enclosure")
    _rel(n(5), "above", n(98))
    _rel(n(5), "above", n(99), note="also seen directly on the sand in the section")
    return n


def _build():
    # ---- Area A: the ditch and settlement pits --------------------------------
    a = _area("A", 1000, True)
    _ctx("1010", "cut", "A", "cut of enclosure ditch", "Enclosure")
    _rel("1010", "cuts", a(5))
    _rel("1010", "cuts", a(98))
    for label, desc in [("1011", "primary silt of enclosure ditch"), ("1012", "secondary fill of enclosure ditch"),
                        ("1013", "upper fill of enclosure ditch")]:
        _ctx(label, "fill", "A", desc, "Enclosure")
        _rel(label, "fills", "1010")
    _rel("1012", "above", "1011")
    _rel("1013", "above", "1012")
    _rel("1013", "above", "1011", note="redundant: seen in the terminal section")
    _ctx("1014", "cut", "A", "cut of ditch recut", "Enclosure")
    _rel("1014", "cuts", "1013")
    _rel("1014", "cuts", "1012")
    for label, desc in [("1015", "primary fill of ditch recut"), ("1016", "upper fill of ditch recut")]:
        _ctx(label, "fill", "A", desc, "Enclosure")
        _rel(label, "fills", "1014")
    _rel("1016", "above", "1015")
    _ctx("1003", "deposit", "A", "occupation layer", "Settlement")
    _rel("1003", "above", "1016")
    _rel("1003", "above", a(5))
    _ctx("1004", "deposit", "A", "trampled surface within the enclosure", "Settlement")
    _rel("1004", "above", "1003")
    # Pits of the settlement, each with several fills.
    top_fills = []
    top_fills.append(_pit("A", "1020", ["1021", "1022", "1023"], ["1004"], "Settlement"))
    top_fills.append(_pit("A", "1030", ["1031", "1032"], ["1004", "1003"], "Settlement"))
    top_fills.append(_pit("A", "1040", ["1041", "1042", "1043"], ["1016"], "Settlement"))  # cuts the ditch's upper fill
    top_fills.append(_pit("A", "1060", ["1061", "1062"], [], "Settlement"))
    _rel("1060", "cuts", "1004", certainty="uncertain", note="edge unclear in wet conditions")
    top_fills.append(_pit("A", "1070", ["1071", "1072", "1073", "1074"], ["1023"], "Settlement"))
    for k in range(4):
        cut, fill = str(1050 + 2 * k), str(1051 + 2 * k)
        top_fills.append(_pit("A", cut, [fill], ["1004"], "Settlement", shape="post-hole"))
    top_fills.append(_pit("A", "1080", ["1081", "1082", "1083"], ["1023", "1004"], "Settlement"))
    top_fills.append(_pit("A", "1090", ["1091", "1092"], ["1003"], "Settlement"))
    for k in range(3):
        cut, fill = str(1100 + 2 * k), str(1101 + 2 * k)
        top_fills.append(_pit("A", cut, [fill], ["1004"], "Settlement", shape="post-hole"))
    # Garden soils seal everything in A.
    _ctx("1002", "deposit", "A", "lower garden soil", "Garden soils")
    _ctx("1001", "deposit", "A", "topsoil and upper garden soil", "Garden soils")
    _rel("1001", "above", "1002")
    for fill in top_fills:
        _rel("1002", "above", fill)
    _rel("1002", "above", "1004")
    _rel("1002", "above", "1003", note="redundant: recorded at the baulk")

    # ---- Area B: the ditch continues; floor, hearth, pits ---------------------
    b = _area("B", 2000, True)
    _ctx("2010", "cut", "B", "cut of enclosure ditch (continuation)", "Enclosure")
    _rel("2010", "cuts", b(5))
    _rel("2010", "same_as", "1010", note="one ditch, excavated in two areas")
    for label, desc, same in [("2011", "primary silt of enclosure ditch", "1011"),
                              ("2013", "upper fill of enclosure ditch", "1013")]:
        _ctx(label, "fill", "B", desc, "Enclosure")
        _rel(label, "fills", "2010")
        _rel(label, "same_as", same, note="same deposit recorded in area A")
    _rel("2013", "above", "2011")
    _ctx("2014", "cut", "B", "cut of ditch recut (continuation)", "Enclosure")
    _rel("2014", "cuts", "2013")
    _ctx("2015", "fill", "B", "fill of ditch recut", "Enclosure")
    _rel("2015", "fills", "2014")
    _ctx("2029", "deposit", "B", "make-up layer for the floor", "Settlement")
    _rel("2029", "above", "2015")
    _rel("2029", "above", b(5))
    _ctx("2030", "deposit", "B", "clay floor", "Settlement")
    _rel("2030", "above", "2029")
    _ctx("2031", "cut", "B", "hearth pit cut", "Settlement")
    _rel("2031", "cuts", "2029")
    _ctx("2032", "masonry", "B", "hearth: burnt clay and stone", "Settlement")
    _rel("2032", "fills", "2031")
    _rel("2032", "contemporary_with", "2030", certainty="uncertain", note="doubtful: no physical link survives")
    _ctx("2020", "deposit", "B", "occupation deposit over floor and hearth", "Settlement")
    _rel("2020", "above", "2030")
    _rel("2020", "above", "2032")
    _rel("2020", "above", "2029", note="redundant: seen where the floor is worn away")
    b_tops = []
    b_tops.append(_pit("B", "2040", ["2041", "2042", "2043"], ["2020"], "Settlement"))
    b_tops.append(_pit("B", "2050", ["2051", "2052"], ["2020", "2030"], "Settlement"))
    b_tops.append(_pit("B", "2070", ["2071", "2072", "2073"], ["2013"], "Settlement"))
    for k in range(3):
        cut, fill = str(2060 + 2 * k), str(2061 + 2 * k)
        b_tops.append(_pit("B", cut, [fill], ["2020"], "Settlement", shape="post-hole"))
    b_tops.append(_pit("B", "2080", ["2081", "2082", "2083"], ["2020"], "Settlement"))
    b_tops.append(_pit("B", "2090", ["2091", "2092"], ["2043"], "Settlement"))
    for k in range(2):
        cut, fill = str(2100 + 2 * k), str(2101 + 2 * k)
        b_tops.append(_pit("B", cut, [fill], ["2020"], "Settlement", shape="post-hole"))
    _ctx("2002", "deposit", "B", "lower garden soil", "Garden soils")
    _ctx("2001", "deposit", "B", "topsoil and upper garden soil", "Garden soils")
    _rel("2001", "above", "2002")
    for fill in b_tops:
        _rel("2002", "above", fill)
    _rel("2002", "above", "2020")
    _rel("2001", "above", "2020", note="redundant: recorded in the machine strip")

    # ---- Area C: the stone building and a well ------------------------------
    c = _area("C", 3000, False)
    _ctx("3006", "deposit", "C", "settlement-period dump layer", "Settlement")
    _rel("3006", "above", c(5))
    _pit("C", "3060", ["3061", "3062"], ["3006"], "Settlement")
    _ctx("3010", "cut", "C", "construction cut for wall 3011", "Stone building")
    _rel("3010", "cuts", "3006")
    _rel("3010", "cuts", "3062")
    _ctx("3011", "masonry", "C", "limestone wall footing", "Stone building")
    _rel("3011", "fills", "3010")
    _ctx("3012", "fill", "C", "backfill of construction cut", "Stone building")
    _rel("3012", "fills", "3010")
    _rel("3012", "abuts", "3011")
    _ctx("3019", "deposit", "C", "floor make-up", "Stone building")
    _rel("3019", "above", "3012")
    _rel("3019", "above", "3006")
    _ctx("3020", "deposit", "C", "mortar floor", "Stone building")
    _rel("3020", "above", "3019")
    _rel("3020", "abuts", "3011")
    _ctx("3021", "deposit", "C", "occupation on the floor", "Stone building")
    _rel("3021", "above", "3020")
    _ctx("3013", "masonry", "C", "cross wall", "Stone building")
    _rel("3013", "bonded_with", "3011", note="coursing runs through")
    _rel("3013", "above", "3006")
    _ctx("3040", "cut", "C", "well shaft", "Stone building")
    _rel("3040", "cuts", "3006")
    _ctx("3041", "timber", "C", "oak well lining", "Stone building")
    _rel("3041", "fills", "3040")
    _ctx("3042", "fill", "C", "silt in the well", "Stone building")
    _rel("3042", "fills", "3040")
    _rel("3042", "abuts", "3041")
    _ctx("3043", "fill", "C", "upper well fill", "Stone building")
    _rel("3043", "above", "3042")
    _ctx("3050", "cut", "C", "grave cut", "Stone building")
    _rel("3050", "cuts", "3021")
    _ctx("3051", "skeleton", "C", "inhumation, adult", "Stone building")
    _rel("3051", "fills", "3050")
    _ctx("3052", "fill", "C", "grave fill", "Stone building")
    _rel("3052", "above", "3051")
    _rel("3052", "fills", "3050")
    _ctx("3030", "cut", "C", "robber trench of wall 3011", "Garden soils")
    _rel("3030", "cuts", "3011")
    _rel("3030", "cuts", "3021")
    _rel("3030", "cuts", "3052", certainty="uncertain", note="grave edge lost in the robbing")
    _rel("3030", "cuts", "3020", note="redundant with the cut through the occupation")
    _ctx("3031", "fill", "C", "robber trench backfill, rubble", "Garden soils")
    _rel("3031", "fills", "3030")
    _ctx("3032", "fill", "C", "robber trench upper backfill", "Garden soils")
    _rel("3032", "fills", "3030")
    _rel("3032", "above", "3031")
    _pit("C", "3070", ["3071", "3072"], ["3021"], "Garden soils")
    _pit("C", "3080", ["3081"], ["3006"], "Settlement", sealed_by="3019", shape="post-hole")
    _ctx("3002", "deposit", "C", "lower garden soil", "Garden soils")
    _ctx("3001", "deposit", "C", "topsoil and upper garden soil", "Garden soils")
    _rel("3001", "above", "3002")
    for top in ("3032", "3043", "3013", "3061", "3072"):
        _rel("3002", "above", top)
    _rel("3002", "above", "3021", note="redundant: recorded where the robbing stops")
    _rel("3001", "above", "3032", note="redundant")


_build()

#: Recorded by mistake (the recorder swapped the numbers): the primary silt of
#: the ditch in area B cannot lie above the recut's upper fill in area A, since
#: 2011 is the same deposit as 1011, which lies at the bottom of the ditch.
MISTAKE = ("2011", "above", "1016", "certain", "entered from the wrong pro-forma sheet")

#: The second, smaller project: an evaluation trench nearby.
EVALUATION_CONTEXTS = [
    ("5001", "deposit", "T1", "topsoil"),
    ("5002", "deposit", "T1", "subsoil"),
    ("5003", "cut", "T1", "cut of gully"),
    ("5004", "fill", "T1", "fill of gully"),
    ("5005", "deposit", "T1", "natural"),
]
EVALUATION_RELATIONSHIPS = [
    ("5001", "above", "5002", "certain", ""),
    ("5002", "above", "5004", "certain", ""),
    ("5004", "fills", "5003", "certain", ""),
    ("5003", "cuts", "5005", "certain", ""),
]
