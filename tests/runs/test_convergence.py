"""Converged by default: runs extend themselves until every quantity converges, or say which budget ran out.

Thresholds (R-hat <= 1.01, bulk and tail ESS >= 400) are those of Vehtari,
Gelman, Simpson, Carpenter & Bürkner 2021, "Rank-normalization, folding, and
localization: an improved R-hat for assessing convergence of MCMC".
"""

from __future__ import annotations

import io
import json
import time

import pytest

from chronology.runs import convergence
from chronology.runs.models import RunState
from chronology.runs.service import DEFAULTS, run_inline, start_inline
from projects.models import Role

from .generated_site import build_generated_site


def _assessment(**kw):
    base = dict(converged=False, max_r_hat=1.05, min_ess_bulk=120.0, min_ess_tail=90.0, failing=("date[0]",),
                draws_per_chain=1000)
    return convergence.Assessment(**{**base, **kw})


def _plan(**kw):
    base = dict(assessment=_assessment(), iterations=1000, chains=4, warmup=500, thin=1, max_iterations=200_000,
                elapsed=10.0, budget=900.0, seconds_per_sweep=0.001)
    return convergence.plan_extension(**{**base, **kw})


def test_an_unconverged_run_within_budget_gets_more_iterations_first():
    plan = _plan()
    assert plan.stop is None and plan.add_iterations >= 1000 and plan.add_chains == 0


def test_chains_at_the_iteration_budget_get_more_chains():
    plan = _plan(max_iterations=1000)
    assert plan.stop is None and plan.add_chains == 4 and plan.add_iterations == 0


def test_the_iteration_budget_stops_a_run_with_the_most_chains():
    plan = _plan(max_iterations=1000, chains=convergence.MAX_CHAINS)
    assert plan.stop == "iteration-budget"


def test_the_time_budget_stops_a_run_that_has_no_time_left():
    assert _plan(elapsed=899.0, seconds_per_sweep=0.1).stop == "time-budget"


def test_the_verdict_of_a_stopped_run_names_the_budget_and_the_worst_diagnostics():
    plan = _plan(elapsed=899.0, seconds_per_sweep=0.1)
    verdict = convergence.verdict(_assessment(), plan, converge=True)
    assert verdict["code"] == "time-budget"
    assert verdict["message"].startswith("not converged: the time budget ran out")
    assert "worst R-hat 1.050" in verdict["message"] and "smallest tail ESS 90" in verdict["message"]


@pytest.mark.django_db
def test_a_run_whose_time_budget_is_too_small_ends_not_converged_and_says_so(site, users):
    run = start_inline(site["version"].project, site["version"], users[Role.ANALYST], chains=2, iterations=200,
                       warmup=100, budget_seconds=1, seed=9)
    slow = []

    def on_progress(k, done, total):
        if not slow:  # a slow machine: the first report comes after the whole budget
            slow.append(k)
            time.sleep(1.2)

    run = run_inline(run, on_progress=on_progress)
    assert run.state == RunState.DONE and run.converged is False
    assert run.verdict["code"] == "time-budget"
    assert "not converged" in run.verdict["message"] and "time budget ran out" in run.verdict["message"]
    assert run.rounds == []  # no time was left for an extension
    results = json.loads(run.path("results.json").read_text())
    assert results["convergence"]["warning"].startswith("NOT CONVERGED")


def _converged(run):
    assert run.state == RunState.DONE, run.error
    assert run.converged is True, (run.verdict, run.rounds)
    assert run.verdict["code"] == "converged"
    c = run.summary["convergence"]
    assert c["converged"] and not c["failing"]


@pytest.mark.slow
@pytest.mark.django_db
def test_the_default_settings_converge_on_the_demo(tmp_path, django_capture_on_commit_callbacks):
    from demo.evidence import evidence_step
    from demo.interpretations import interpretations_step
    from demo.record import load_demo_record
    from demo.runs import DEMO_SEED

    loaded = load_demo_record()
    state = {"project": loaded["project"], "users": loaded["users"], "out": tmp_path, "files": []}
    with django_capture_on_commit_callbacks(execute=True):
        evidence_step(state, io.StringIO())
        interpretations_step(state, io.StringIO())
    run = start_inline(state["project"], state["approved_version"], state["users"]["cleo.analyst"], seed=DEMO_SEED)
    assert (run.chains, run.iterations, run.warmup, run.converge) == (
        DEFAULTS["chains"], DEFAULTS["iterations"], DEFAULTS["warmup"], True)
    _converged(run_inline(run))


@pytest.mark.slow
@pytest.mark.django_db
def test_the_default_settings_converge_on_a_generated_site(project, actor, analyst_actor, users):
    version = build_generated_site(project, actor, analyst_actor)
    run = start_inline(project, version, users[Role.ANALYST], seed=17)
    _converged(run_inline(run))
