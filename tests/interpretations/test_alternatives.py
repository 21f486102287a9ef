"""Alternatives of a version through the service: job, polling, paging, a choice as a new draft."""

from __future__ import annotations

from itertools import combinations

import pytest

from chronology.engine.checks import check_order
from chronology.engine.temporal_graph import compile_order
from chronology.interpretations import services
from chronology.interpretations.alternatives import build_problem
from chronology.interpretations.content import order_policy
from chronology.interpretations.models import Version
from chronology.models import Job
from projects.models import Role
from tests.api.conftest import assert_error_body, url
from tests.conftest import token_client
from tests.interpretations.conftest import phased_content, vurl


def _start(client, version, django_capture_on_commit_callbacks, **body):
    with django_capture_on_commit_callbacks(execute=True):
        response = client.post(vurl(version.pk, "alternatives"), body, format="json")
    assert response.status_code == 202, response.content
    return response


def _consistent_by_brute_force(version, items):
    """Every subset of the items checked directly by compiling and checking its order."""
    record = services.record_at(version.project, version.record_revision)
    base = order_policy(version.content, record.by_id, contexts=record.context_ids, leave_out=set(items))
    good = []
    for size in range(len(items) + 1):
        for chosen in combinations(items, size):
            policy = type(base)(accept=base.accept | set(chosen), reject=base.reject - set(chosen),
                                set_aside=base.set_aside - set(chosen), extra_orderings=base.extra_orderings)
            if check_order(compile_order(record.contexts, record.relationships, policy)).ok:
                good.append(frozenset(chosen))
    return good


def test_the_problem_has_the_undecided_equalities_as_items(draft, small):
    record = services.record_at(draft.project, draft.record_revision)
    problem, graph, item_ids = build_problem(draft.content, record)
    rels = small["rels"]
    assert item_ids == sorted([rels["e1"], rels["e4"], rels["e3"]])
    assert [i.kind for i in problem.items] == ["equal", "equal", "equal"]
    assert problem.n_nodes == 7  # eight contexts, 108 merged with 106


def test_job_counts_the_consistent_choices_exactly(draft, small, client_for, django_capture_on_commit_callbacks):
    analyst = client_for(Role.ANALYST)
    started = _start(analyst, draft, django_capture_on_commit_callbacks)
    job_url = started.json()["url"]
    assert started["Location"] == job_url
    polled = analyst.get(job_url).json()
    assert polled["state"] == "done", polled
    assert polled["progress"] == 1.0
    result = polled["result"]
    rels = small["rels"]
    assert result["analysis"]["consistent_count"] == 3
    assert sorted(map(sorted, result["analysis"]["minimal_conflicts"])) == sorted(
        [[rels["e3"]], sorted([rels["e1"], rels["e4"]])])
    assert result["limits"]["exact"] is True
    assert result["limits"]["statement"].startswith("Exact: all 3 undecided items")
    # Reference: every one of the 2^3 subsets compiled and checked on its own.
    brute = _consistent_by_brute_force(draft, [rels["e1"], rels["e4"], rels["e3"]])
    assert len(brute) == 3


def test_undecided_uncertain_orderings_join_the_items(small, analyst_actor, client_for,
                                                      django_capture_on_commit_callbacks):
    rels = small["rels"]
    _i, version = services.create_interpretation(small["project"], analyst_actor, name="Open", content=phased_content(
        small, uncertain=[{"relationship": rels["u1"], "decision": "undecided"}]))
    analyst = client_for(Role.ANALYST)
    job = analyst.get(_start(analyst, version, django_capture_on_commit_callbacks).json()["url"]).json()
    assert job["result"]["analysis"]["k"] == 4
    assert job["result"]["analysis"]["consistent_count"] == 6
    brute = _consistent_by_brute_force(version, [rels["e1"], rels["e4"], rels["e3"], rels["u1"]])
    assert len(brute) == 6
    pages = []
    for offset in (0, 4):
        page = analyst.get(url("VML24", "jobs", job["id"], "choices") + f"?offset={offset}&limit=4").json()
        assert page["count"] == 6
        pages.extend(frozenset(c["accepted"]) for c in page["results"])
    assert sorted(pages, key=sorted) == sorted(brute, key=sorted)
    assert [c for c in pages if not c] == [frozenset()]  # choice 0 accepts nothing


def test_a_listed_choice_becomes_a_new_valid_draft(draft, small, client_for, django_capture_on_commit_callbacks):
    analyst = client_for(Role.ANALYST)
    job = analyst.get(_start(analyst, draft, django_capture_on_commit_callbacks).json()["url"]).json()
    choices = analyst.get(url("VML24", "jobs", job["id"], "choices")).json()["results"]
    pick = next(c for c in choices if c["accepted"])
    response = analyst.post(vurl(draft.pk, "from-alternative"), {"job": job["id"], "index": pick["index"]},
                            format="json")
    assert response.status_code == 201, response.content
    new = Version.objects.get(pk=response.json()["id"])
    assert new.parent_id == draft.pk and new.is_valid
    decisions = {e["relationship"]: e["decision"] for e in new.content["equalities"]}
    for rid in pick["accepted"]:
        assert decisions[rid] == "accepted"
    for rid in pick["not_accepted"]:
        assert decisions[rid] == "set_aside"
    assert "alternative" in new.message


def test_choices_out_of_range_and_of_an_unfinished_job(draft, client_for, django_capture_on_commit_callbacks):
    analyst = client_for(Role.ANALYST)
    job = analyst.get(_start(analyst, draft, django_capture_on_commit_callbacks).json()["url"]).json()
    assert_error_body(analyst.post(vurl(draft.pk, "from-alternative"), {"job": job["id"], "index": 3},
                                   format="json"), 400, "out-of-range")
    queued = Job.objects.create(project=draft.project, kind="alternatives", params={"version": draft.pk})
    assert_error_body(analyst.get(url("VML24", "jobs", queued.pk, "choices")), 409, "job-not-done")


def test_a_cancelled_queued_job_never_runs(draft, client_for):
    analyst = client_for(Role.ANALYST)
    queued = Job.objects.create(project=draft.project, kind="alternatives", params={"version": draft.pk})
    body = analyst.post(url("VML24", "jobs", queued.pk, "cancel"), {}, format="json").json()
    assert body["state"] == "cancelled"


def test_jobs_of_another_organisation_are_not_found(draft, outsider, other_project):
    job = Job.objects.create(project=draft.project, kind="alternatives", params={"version": draft.pk})
    client = token_client(outsider)
    assert_error_body(client.get(url("VML24", "jobs", job.pk)), 404)
    assert_error_body(client.get(url(other_project.code, "jobs", job.pk)), 404)


def test_viewers_poll_but_do_not_start_jobs(draft, client_for):
    assert_error_body(client_for(Role.VIEWER).post(vurl(draft.pk, "alternatives"), {}, format="json"), 403)
    assert_error_body(client_for(Role.RECORDER).post(vurl(draft.pk, "alternatives"), {}, format="json"), 403)


def test_an_inconsistent_decided_part_fails_the_job_with_its_reason(small, analyst_actor, client_for,
                                                                    django_capture_on_commit_callbacks):
    _i, version = services.create_interpretation(small["project"], analyst_actor, name="Broken", content=phased_content(
        small, orderings=[{"earlier": "105", "later": "101", "reason": "a guess"}]))
    analyst = client_for(Role.ANALYST)
    job = analyst.get(_start(analyst, version, django_capture_on_commit_callbacks).json()["url"]).json()
    assert job["state"] == "failed"
    assert job["error"]["code"] == "base-inconsistent"


@pytest.mark.parametrize("body, field", [({"time_budget": 0}, "time_budget"), ({"max_k_exact": 99}, "max_k_exact")])
def test_limits_of_the_search_are_checked(draft, client_for, body, field):
    error = assert_error_body(client_for(Role.ANALYST).post(vurl(draft.pk, "alternatives"), body, format="json"), 400)
    assert error["field"] == field
