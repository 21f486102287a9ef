"""A version's own overall range: used by the model, and a warning when the posterior presses against it."""

from __future__ import annotations

import pytest

from chronology.runs.compile import compile_version
from projects.models import Role

from .conftest import commit_content
from .test_runs import _submit


@pytest.mark.django_db
def test_a_range_set_in_the_version_is_the_model_range(project, site, analyst_actor):
    content = dict(site["content"], range={"earliest": -1500, "latest": 300})
    compiled = compile_version(commit_content(project, analyst_actor, content, "Set range"))
    assert (compiled.model.range_lo, compiled.model.range_hi) == (-1500.0, 300.0)
    assert any(n.startswith("overall range set by the version") for n in compiled.notes)


@pytest.mark.django_db
def test_without_a_range_the_model_range_is_derived_from_the_evidence(site):
    compiled = compile_version(site["version"])
    assert not any(n.startswith("overall range set by the version") for n in compiled.notes)
    assert (compiled.model.range_lo, compiled.model.range_hi) == (-1614.0, 318.0)


@pytest.mark.django_db
def test_a_range_that_cuts_into_the_evidence_is_warned_about_in_the_results(project, site, analyst_actor, users):
    content = dict(site["content"], range={"earliest": -900, "latest": 300})
    site = dict(site, version=commit_content(project, analyst_actor, content, "Narrow range"))
    run = _submit(site, users[Role.ANALYST])
    check = run.summary["range_check"]
    assert check["warning"] and any(p["end"] == "earliest" for p in check["pressed"])


@pytest.mark.django_db
def test_with_the_default_range_only_an_end_the_evidence_leaves_open_is_pressed(site, users):
    # the late phase has a terminus post quem and one date before it: nothing bounds its close
    # from above but the range, so the range decides that close's ranges
    run = _submit(site, users[Role.ANALYST])
    assert [(p["event"], p["end"]) for p in run.summary["range_check"]["pressed"]] == [("close:late", "latest")]
