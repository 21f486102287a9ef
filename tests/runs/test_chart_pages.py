"""A long interval chart is cut into printed pages without losing or repeating an event."""

from __future__ import annotations

from chronology.engine.plots.interval_chart import ChartGroup, ChartRow
from chronology.runs.figures import chart_pages


def _groups(sizes):
    return [ChartGroup(f"Phase {j}", tuple(ChartRow(f"e{j}-{i}", f"{1000 * (j + 1) + i}", "dated", float(i),
                                                     ((i - 1.0, i + 1.0),), ((i - 2.0, i + 2.0),))
                                           for i in range(n))) for j, n in enumerate(sizes)]


def test_every_event_is_on_exactly_one_page_in_reading_order():
    groups = _groups([30, 5, 50])
    pages = chart_pages(groups, rows_per_page=20)
    keys = [r.key for page in pages for g in page for r in g.rows]
    assert keys == [r.key for g in groups for r in g.rows]


def test_no_page_holds_more_lines_than_asked_counting_the_phase_headings():
    pages = chart_pages(_groups([30, 5, 50]), rows_per_page=20)
    assert all(sum(len(g.rows) + 1 for g in page) <= 20 for page in pages)


def test_a_phase_cut_across_pages_is_headed_continued_on_the_next():
    pages = chart_pages(_groups([30]), rows_per_page=20)
    assert [g.label for page in pages for g in page] == ["Phase 0", "Phase 0 (continued)"]
