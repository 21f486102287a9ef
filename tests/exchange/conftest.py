"""A small invented site with every kind of record object, built through the write paths.

The site of the run tests (seven contexts in sequence, evidence against the
labelled SYNTHETIC curve, a committed interpretation), plus a retracted
relationship, a retracted sample, an edited context, an approved version
and one short model run.
"""

from __future__ import annotations

import pytest

from chronology.evidence import writes as evidence_writes
from chronology.interpretations import services as interpretations
from chronology.runs.service import run_inline, start_inline
from projects.models import Membership, Project, Role
from projects.record import writes
from projects.record.changes import Actor
from tests.runs.conftest import SMALL, build_site
from tests.runs.conftest import _media  # noqa: F401 - media root per test, curve cache cleared


@pytest.fixture
def manager_actor(users):
    return Actor(user=users[Role.MANAGER], device="office desk", request_id="req-manager")


def build_full_site(project, users, *, run=True):
    """The record of the run tests with retractions, an edit, an approval and (optionally) a run."""
    actor = Actor(user=users[Role.RECORDER], device="trench tablet", request_id="req-recorder")
    analyst = Actor(user=users[Role.ANALYST], device="post-excavation desk")
    manager = Actor(user=users[Role.MANAGER], device="office desk")
    site = build_site(project, actor, analyst)
    writes.add_context(project, actor, label="1099", kind="other", description="recorded in error")
    wrong = writes.add_relationship(project, actor, subject="1099", type="below", object="1001", note="doubtful").object
    writes.retract_relationship(project, actor, wrong.id, reason="misread section drawing")
    writes.retract_context(project, actor, Project.objects.get(pk=project.pk) and
                           writes.add_context(project, actor, label="1098", kind="deposit").object.id,
                           reason="duplicate number")
    writes.edit_context(project, actor, site["contexts"]["1002"].id, {"description": "dark silt", "top_level": 9.5})
    extra = evidence_writes.add_sample(project, actor, context="1007", code="S9", material="charcoal").object
    evidence_writes.retract_evidence(project, actor, "sample", extra.id, reason="contaminated")
    version = interpretations.commit(site["draft"], analyst)
    interpretations.propose(version, analyst)
    interpretations.approve(version, manager, reason="agrees with the section drawings")
    interpretations.make_current(version, manager)
    site["version"] = version
    if run:
        site["run"] = run_inline(start_inline(project, version, users[Role.ANALYST], seed=11, **SMALL))
    return site


@pytest.fixture
def full_site(project, users):
    return build_full_site(project, users)


@pytest.fixture
def target(other_org, users):
    """An empty project in another organisation whose members include the same people."""
    for role, user in users.items():
        Membership.objects.create(user=user, organisation=other_org, role=role)
    return Project.objects.create(organisation=other_org, code="QHX02", name="Copy of Vellmarsh Lane")
