"""The evidence step of the demo: what it writes and that a re-run changes nothing."""

from __future__ import annotations

import io
import json

from demo.evidence import evidence_step
from chronology.evidence.models import Curve, Determination
from demo.record import record_step


def test_the_evidence_step_is_idempotent_and_says_the_curve_is_synthetic(db, tmp_path):
    state = {"out": tmp_path, "files": [], "quick": True}
    record_step(state, io.StringIO())
    evidence_step(state, io.StringIO())
    revision = state["project"].revision
    again = {"out": tmp_path, "files": [], "quick": True}
    record_step(again, io.StringIO())
    evidence_step(again, io.StringIO())
    assert again["project"].revision == revision
    assert again["evidence"]["determinations"] == state["evidence"]["determinations"]
    assert Curve.objects.count() == 1 and Determination.objects.count() == 7
    report = json.loads((tmp_path / "evidence-calibrations.json").read_text())
    assert report["curve"]["synthetic"] and "not for dating real samples" in report["warning"]
    assert all(r["synthetic"] for r in report["determinations"])
    markdown = (tmp_path / "evidence-calibrations.md").read_text()
    assert "SYNTHETIC" in markdown and "VXL-0107" in markdown
    assert report["combination"]["test"]["n"] == 2
    assert (tmp_path / "evidence-plots" / "VXL-0101.svg").exists()
