"""The demo step on the invented Vellmarsh Lane record: two readings, a diff, alternatives; a re-run reuses all."""

from __future__ import annotations

import io
import json

import pytest

from demo.interpretations import interpretations_step
from chronology.interpretations.models import Reading, Status, Version
from demo.record import load_demo_record
from projects.models import ChangeLogEntry


@pytest.fixture
def demo_state(db, tmp_path):
    summary = load_demo_record()
    return {"project": summary["project"], "users": summary["users"], "out": tmp_path, "files": []}


def test_demo_step_makes_two_competing_readings_and_is_idempotent(demo_state, django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        interpretations_step(demo_state, io.StringIO())
    approved = demo_state["approved_version"]
    project = demo_state["project"]
    assert approved.status == Status.APPROVED and approved.is_valid
    assert Reading.objects.get(project=project).version_id == approved.pk
    competing = Version.objects.get(pk=demo_state["interpretations"]["competing"])
    assert competing.status == Status.PROPOSED and competing.is_valid

    diff = json.loads((demo_state["out"] / "interpretations-diff.json").read_text())["diff"]
    assert [c["to"] for c in diff["equalities"]["changed"]] == ["undecided"]
    assert sorted(m["to"] for m in diff["contexts"]["moved"]) == ["stone-building", "stone-building"]
    text = (demo_state["out"] / "interpretations-diff.md").read_text()
    assert "Context 3080 moved: Settlement (settlement) → Stone building (stone-building)" in text
    assert "2032 contemporary with 2030" in text
    alternatives = json.loads((demo_state["out"] / "interpretations-alternatives.json").read_text())
    assert alternatives["state"] == "done"
    assert alternatives["result"]["analysis"]["k"] == 3
    assert alternatives["result"]["limits"]["exact"] is True

    versions = Version.objects.filter(project=project).count()
    entries = ChangeLogEntry.objects.filter(project=project).count()
    demo_state["files"] = []
    with django_capture_on_commit_callbacks(execute=True):
        interpretations_step(demo_state, io.StringIO())
    assert Version.objects.filter(project=project).count() == versions
    assert ChangeLogEntry.objects.filter(project=project).count() == entries
    assert demo_state["approved_version"].pk == approved.pk
    assert len(demo_state["files"]) == 4
    assert "Exact: all 3 undecided items" in (demo_state["out"] / "interpretations-alternatives.md").read_text()
