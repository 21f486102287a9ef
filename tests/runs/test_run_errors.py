"""What users see when a run goes wrong: a code, a plain reason and a log reference; never a traceback."""

from __future__ import annotations

import json
import logging

import pytest

from chronology.runs import rounds, tasks
from chronology.runs.models import Run, RunState
from chronology.runs.service import submit_run
from projects.models import Role

from .conftest import SMALL

pytestmark = pytest.mark.django_db

SECRET = "/srv/tellstack/private/chronology/engine/sampler.py"


def _runs(project, *parts):
    return f"/api/v1/projects/{project.code}/runs/" + "".join(f"{p}/" for p in parts)


def _submit(site, client_for, django_capture_on_commit_callbacks, **extra):
    with django_capture_on_commit_callbacks(execute=True):
        response = client_for(Role.ANALYST).post(_runs(site["version"].project),
                                                 {"version": site["version"].pk, **SMALL, **extra}, format="json")
    return response


def _boom(*_args, **_kwargs):
    raise RuntimeError(f"unexpected failure in {SECRET} line 12")


def _assert_clean(text: str) -> None:
    assert "Traceback" not in text and SECRET not in text and "RuntimeError" not in text
    assert ".py" not in text and "/srv/" not in text


def test_a_chain_that_crashes_shows_users_a_reference_and_logs_the_traceback(site, client_for, caplog,
                                                                             monkeypatch,
                                                                             django_capture_on_commit_callbacks):
    monkeypatch.setattr(tasks, "run_chain", _boom)
    with caplog.at_level(logging.ERROR, logger="chronology.runs"):
        run_id = _submit(site, client_for, django_capture_on_commit_callbacks).json()["id"]
    run = Run.objects.get(pk=run_id)
    assert run.state == RunState.FAILED and run.error["code"] == "crashed"
    body = client_for(Role.VIEWER).get(_runs(site["version"].project, run_id)).json()
    _assert_clean(json.dumps(body))
    assert body["error"]["reference"] in body["error"]["message"]
    logged = "\n".join(r.getMessage() + (r.exc_text or "") for r in caplog.records)
    assert body["error"]["reference"] in logged
    assert any(r.exc_info and SECRET in str(r.exc_info[1]) for r in caplog.records)


def test_a_combine_that_crashes_shows_users_a_reference_and_no_traceback(site, client_for, monkeypatch,
                                                                         django_capture_on_commit_callbacks):
    monkeypatch.setattr(rounds, "compute_results", _boom)
    run_id = _submit(site, client_for, django_capture_on_commit_callbacks).json()["id"]
    body = client_for(Role.VIEWER).get(_runs(site["version"].project, run_id)).json()
    assert body["state"] == "failed" and body["error"]["code"] == "combine-failed"
    _assert_clean(json.dumps(body))


def test_a_run_of_ten_iterations_is_refused_naming_the_field(site, client_for, django_capture_on_commit_callbacks):
    response = _submit(site, client_for, django_capture_on_commit_callbacks, iterations=10, warmup=0)
    assert response.status_code == 400
    body = response.json()
    assert body["code"] == "min-value" and "iterations" in json.dumps(body)
    assert not Run.objects.exists()


def test_the_fewest_draws_allowed_per_chain_are_refused_when_thinning_leaves_fewer(site, users):
    from chronology.runs.compile import ModelRefused

    with pytest.raises(ModelRefused) as refused:
        submit_run(site["version"].project, site["version"], users[Role.ANALYST], chains=2, iterations=1000,
                   thin=20, warmup=0)
    assert refused.value.code == "too-few-draws"


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_the_smallest_run_allowed_always_combines(site, users, seed, monkeypatch):
    monkeypatch.setattr("django.db.transaction.on_commit", lambda fn, using=None, robust=False: fn())
    run = submit_run(site["version"].project, site["version"], users[Role.ANALYST], chains=2, iterations=100,
                     warmup=0, converge=False, seed=seed)
    run.refresh_from_db()
    assert run.state == RunState.DONE, run.error
    assert run.summary["events"]
