"""Duration and gap priors set in a version: compiled into the model, named in its notes and results."""

from __future__ import annotations

import json

import jsonschema
import pytest

from chronology.engine.model import MODEL_JSON_SCHEMA
from chronology.runs.compile import compile_version
from projects.models import Role

from .conftest import commit_content
from .test_runs import _submit


def _with_priors(content: dict) -> dict:
    early, late = content["phases"]
    early = dict(early, duration={"distribution": "uniform", "min": 50, "max": 400},
                 to_next={"arrangement": "sequential", "gap": {"distribution": "lognormal", "median": 40,
                                                               "sd_log": 0.8}})
    late = dict(late, duration={"distribution": "normal", "mean": 150, "sd": 60})
    return dict(content, phases=[early, late])


@pytest.mark.django_db
def test_duration_and_gap_priors_reach_the_model(project, site, analyst_actor):
    version = commit_content(project, analyst_actor, _with_priors(site["content"]), "Duration priors")
    model = compile_version(version).model
    got = {(p.kind, p.phase, p.distribution, p.parameters) for p in model.interval_priors}
    assert got == {("duration", "early", "uniform", (50.0, 400.0)), ("gap", "early", "lognormal", (40.0, 0.8)),
                   ("duration", "late", "normal", (150.0, 60.0))}
    gap = next(p for p in model.interval_priors if p.kind == "gap")
    assert (gap.earlier, gap.later) == (model.phase("early").end, model.phase("late").start)
    jsonschema.validate(json.loads(model.to_json()), MODEL_JSON_SCHEMA)


@pytest.mark.django_db
def test_the_compile_notes_say_a_duration_prior_was_used(project, site, analyst_actor):
    version = commit_content(project, analyst_actor, _with_priors(site["content"]), "Duration priors")
    notes = compile_version(version).notes
    assert "phase early: duration prior uniform 50-400 years multiplies the span-uniform prior" in notes


@pytest.mark.django_db
def test_versions_without_them_compile_to_models_without_the_key(site):
    compiled = compile_version(site["version"])
    assert "interval_priors" not in compiled.model.as_dict()
    assert not any("duration prior" in n for n in compiled.notes)


@pytest.mark.django_db
def test_the_results_name_the_duration_priors_with_the_boundary_prior(project, site, analyst_actor, users):
    site = dict(site, version=commit_content(project, analyst_actor, _with_priors(site["content"]), "Priors"))
    run = _submit(site, users[Role.ANALYST])
    from chronology.runs.report import load_results

    text = load_results(run)["prior_text"]
    assert "times the priors on the duration of Early uniform 50-400 years" in text
