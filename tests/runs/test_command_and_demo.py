"""The run_model management command and the demo's model step."""

from __future__ import annotations

import io
import json

import pytest
from django.core.management import call_command

from demo.runs import model_step
from chronology.runs.models import Run, RunState


@pytest.mark.django_db
def test_run_model_samples_in_process_and_prints_a_progress_bar_and_the_table(site):
    out = io.StringIO()
    call_command("run_model", "--project", "VML24", "--version", str(site["version"].pk), "--chains", "2",
                 "--iterations", "300", "--warmup", "100", "--seed", "4", stdout=out)
    text = out.getvalue()
    assert "\r[" in text and "100.0%" in text
    assert "| Event | Kind | Median |" in text and "specialist" in text
    assert Run.objects.get().state == RunState.DONE


@pytest.mark.django_db
def test_the_demo_step_writes_the_summary_table_and_plots(site, tmp_path):
    state = {"project": site["version"].project, "approved_version": site["version"], "quick": True,
             "out": tmp_path, "files": []}
    stdout = io.StringIO()
    model_step(state, stdout)
    names = sorted(p.name for p in state["files"])
    assert names == ["model-interval-chart.png", "model-interval-chart.svg", "model-results.json",
                     "model-summary.json", "model-summary.md", "model.json"]
    summary = json.loads((tmp_path / "model-summary.json").read_text())
    assert summary["events"] and "specialist" in summary["caution"]
    assert "| Event |" in (tmp_path / "model-summary.md").read_text()
    assert model_step.__doc__.strip().splitlines()[0].startswith("Model:")


@pytest.mark.django_db
def test_the_demo_outputs_step_writes_the_report_the_ranges_and_the_boundary_densities(site, tmp_path):
    from demo.run_outputs import outputs_step

    state = {"project": site["version"].project, "approved_version": site["version"], "quick": True,
             "out": tmp_path, "files": []}
    model_step(state, io.StringIO())
    state["files"] = []
    outputs_step(state, io.StringIO())
    names = sorted(p.name for p in state["files"])
    assert names == ["model-densities.png", "model-densities.svg", "model-ranges.csv", "model-report.html",
                     "model-report.pdf"]
    assert (tmp_path / "model-report.pdf").read_bytes()[:5] == b"%PDF-"
    assert b"SYNTHETIC" in (tmp_path / "model-densities.svg").read_bytes()
