"""Package tables open safely in a spreadsheet and still read back exactly.

A label that a spreadsheet would run as a formula is written with a leading
quote (OWASP, "CSV Injection"); the reader takes the quote off again, so the
round trip stays lossless.
"""

from __future__ import annotations

import csv
import io
import zipfile

import pytest
from django.core.management import call_command
from hypothesis import given
from hypothesis import strategies as st

from chronology.engine.csv_cells import TRIGGERS, neutralise_reversibly, restore
from projects.models import Context, Project, Role
from projects.record.writes import add_context

FORMULA = '=HYPERLINK("http://example.invalid","open")'


@given(st.text(alphabet=st.sampled_from([*TRIGGERS, "'", "a", "1", ".", "e"]), max_size=6))
def test_restoring_a_reversibly_neutralised_cell_gives_the_text_back(text):
    assert restore(neutralise_reversibly(text)) == text


@given(st.text(max_size=8))
def test_no_reversibly_neutralised_cell_starts_a_formula(text):
    cell = neutralise_reversibly(text)
    assert not cell.startswith(("=", "@", "\t", "\r"))


@pytest.mark.django_db
def test_a_formula_label_is_quoted_in_the_package_and_restored_on_import(project, users, target, other_org, tmp_path):
    from projects.record.changes import Actor

    add_context(project, Actor(user=users[Role.RECORDER], device="test"), label=FORMULA, kind="deposit")
    out = tmp_path / "site.zip"
    call_command("export_project", project.code, "--out", str(out), stdout=io.StringIO())
    with zipfile.ZipFile(out) as zf:
        name = next(n for n in zf.namelist() if n.endswith("contexts.csv"))
        rows = list(csv.DictReader(io.TextIOWrapper(zf.open(name), encoding="utf-8")))
    assert rows[0]["label"] == "'" + FORMULA
    call_command("import_project", str(out), "--into", "QHX09", "--org", other_org.slug,
                 "--user", users[Role.MANAGER].username, stdout=io.StringIO())
    copy = Project.objects.get(organisation=other_org, code="QHX09")
    assert Context.objects.get(project=copy).label == FORMULA
