"""The model figures: calendar ticks, the interval chart, density panels and the two-run comparison."""

from __future__ import annotations

import re

import numpy as np
import pytest

from chronology.engine.plots.comparison_chart import ComparisonGroup, PairedRow, comparison_chart
from chronology.engine.plots.density_grid import DensityPanel, density_grid
from chronology.engine.plots.figure_parts import SYNTHETIC_WARNING, FigureHeading, calendar_ticks, tick_label
from chronology.engine.plots.interval_chart import ChartGroup, ChartRow, interval_chart
from tests.chart_svg import all_text, range_lines, tick_labels, title, year_per_unit

HEADING = FigureHeading("Vellmarsh Lane (VML24)", "Settlement phasing v2", 14, "run-a", ("TELLSTACK-SYNTHETIC-1",),
                        synthetic=True, converged=True, caution="Results need review by a qualified specialist.")
GROUPS = [
    ChartGroup("Enclosure", (
        ChartRow("beginning:e", "Beginning of Enclosure", "boundary", -420, ((-450, -400),), ((-520, -380),)),
        ChartRow("ctx:1", "1013 and 2013", "dated", -390, ((-400, -380),), ((-410, -360),), ((-420, -340),)),
        ChartRow("ctx:2", "1020", "undated", -350, ((-370, -330),), ((-390, -320), (-300, -280))),
    )),
    ChartGroup("Settlement", (ChartRow("ctx:3", "1030", "dated", -10, ((-40, 20),), ((-150, 30),), ((-200, 60),)),)),
]


@pytest.mark.parametrize("year, label", [(-1, "2 cal BC"), (0, "1 cal BC"), (1, "cal AD 1"), (-499, "500 cal BC"),
                                         (100, "cal AD 100")])
def test_tick_labels_have_no_year_zero(year, label):
    # ISO 8601 astronomical numbering: year 0 is 1 BC, -1 is 2 BC (Stuiver & Polach 1977 for cal BC/AD)
    assert tick_label(year) == label


def test_ticks_across_the_bc_ad_change_fall_on_round_printed_years():
    ticks = calendar_ticks(-350, 150)
    labels = [tick_label(t) for t in ticks]
    assert labels == ["300 cal BC", "200 cal BC", "100 cal BC", "cal AD 100"]
    assert ticks == [-299, -199, -99, 100]


def test_ticks_of_a_short_range_stay_round():
    numbers = [int(re.search(r"\d+", tick_label(t)).group()) for t in calendar_ticks(-23, 7)]
    assert numbers and all(n % 5 == 0 for n in numbers)


def test_every_drawn_range_is_the_range_given():
    svg = interval_chart(GROUPS, HEADING, "svg")
    lines = range_lines(svg)
    tolerance = 1.5 * year_per_unit(svg)  # one and a half SVG units, in years
    rows = [r for g in GROUPS for r in g.rows]
    for i, r in enumerate(rows):
        for mass, ranges in (("95.4", r.hpd95), ("68.3", r.hpd68), ("unmodelled", r.unmodelled95)):
            for j, (a, b) in enumerate(ranges):
                drawn = lines[f"range-{i}-{mass}-{j}"]
                assert drawn == pytest.approx((a, b), abs=tolerance)
    assert len(lines) == sum(len(r.hpd95) + len(r.hpd68) + len(r.unmodelled95) for r in rows)


def test_the_chart_names_site_version_revision_run_curve_and_carries_the_warnings():
    text = all_text(interval_chart(GROUPS, HEADING, "svg"))
    for words in ("Vellmarsh Lane (VML24)", "Settlement phasing v2", "record revision 14", "run run-a",
                  "TELLSTACK-SYNTHETIC-1", SYNTHETIC_WARNING, "qualified specialist", "Enclosure", "Settlement",
                  "1013 and 2013", "unmodelled", "68.3%", "95.4%"):
        assert words in text, words
    assert "NOT CONVERGED" not in text


def test_a_run_that_has_not_converged_says_so_in_the_title():
    from dataclasses import replace

    svg = interval_chart(GROUPS, replace(HEADING, converged=False), "svg")
    assert title(svg).startswith("NOT CONVERGED")


def test_a_real_curve_carries_no_synthetic_warning():
    from dataclasses import replace

    assert SYNTHETIC_WARNING not in all_text(interval_chart(GROUPS, replace(HEADING, synthetic=False), "svg"))


def test_the_chart_renders_as_png():
    assert interval_chart(GROUPS, HEADING, "png")[:8] == b"\x89PNG\r\n\x1a\n"


def test_density_panels_have_round_calendar_ticks_and_the_warnings():
    years = np.arange(-600.0, 200.0)
    dens = np.exp(-0.5 * ((years + 300) / 30) ** 2)
    panels = [DensityPanel(f"10{i}", "dated", years, dens, ((-360.0, -240.0),), np.roll(dens, 10)) for i in range(4)]
    svg = density_grid(panels, HEADING, "svg", columns=3)
    text = all_text(svg)
    assert SYNTHETIC_WARNING in text and "qualified specialist" in text and "unmodelled" in text
    assert all(_round(label) for _x, label in tick_labels(svg))


def _round(label: str) -> bool:
    return int(re.search(r"\d+", label).group()) % 5 == 0


def test_the_comparison_lists_the_difference_of_medians():
    a = ChartRow("ctx:3", "1030", "dated", -10, ((-40, 20),), ((-150, 30),))
    b = ChartRow("ctx:3", "1030", "dated", 5, ((-20, 30),), ((-90, 60),))
    second = FigureHeading("Vellmarsh Lane (VML24)", "Settlement phasing v3", 15, "run-b", ("TELLSTACK-SYNTHETIC-1",),
                           synthetic=True, converged=False, caution="Results need review.")
    svg = comparison_chart([ComparisonGroup("Settlement", (PairedRow("1030", a, b),))], HEADING, second, "svg")
    text = all_text(svg)
    assert "+15 years" in text and "run run-b" in text and "run run-a" in text
    assert title(svg).startswith("NOT CONVERGED") and SYNTHETIC_WARNING in text
