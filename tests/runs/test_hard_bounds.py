"""No reported range crosses a hard bound of the model: the demo's context after a coin."""

from __future__ import annotations

import io

import pytest

from demo.evidence import COIN, evidence_step
from demo.interpretations import interpretations_step
from demo.record import load_demo_record


@pytest.fixture
def demo_run(db, tmp_path, django_capture_on_commit_callbacks):
    from chronology.runs.service import run_inline, start_inline

    summary = load_demo_record()
    state = {"project": summary["project"], "users": summary["users"], "out": tmp_path, "files": []}
    with django_capture_on_commit_callbacks(execute=True):
        evidence_step(state, io.StringIO())
        interpretations_step(state, io.StringIO())
    run = start_inline(state["project"], state["approved_version"], state["users"]["cleo.analyst"], seed=260,
                       thin=1, chains=2, iterations=1500, warmup=500)
    return run_inline(run)


def test_the_range_of_the_context_after_the_coin_starts_at_or_after_the_coin(demo_run):
    # the coin is a terminus post quem with no outlier chance: every draw is at or after its year's cell
    assert demo_run.state == "done", demo_run.error
    event = next(e for e in demo_run.summary["events"] if e["label"] == COIN["context"])
    ranges = event["hpd"]["95.4"]
    year = COIN["year"]
    assert ranges[0]["from"] >= year - 0.5, ranges  # the model's year AD 260 is the cell [259.5, 260.5)
    assert event["hpd"]["95.4"][0]["text"].startswith("cal AD 26"), ranges
