"""The status workflow through the API: who may do what, locking, supersession, the change log."""

from __future__ import annotations

import pytest

from chronology.interpretations import services
from chronology.interpretations.models import Reading, Status, Version
from projects.models import ChangeLogEntry, Role
from tests.api.conftest import assert_error_body, url
from tests.conftest import token_client
from tests.interpretations.conftest import iurl, phased_content, vurl

V, R, A, M = Role.VIEWER, Role.RECORDER, Role.ANALYST, Role.MANAGER


def _version(version_id) -> Version:
    return Version.objects.get(pk=version_id)


@pytest.fixture
def proposed(draft, analyst_actor):
    return services.propose(services.commit(draft, analyst_actor), analyst_actor)


@pytest.fixture
def approved(proposed, manager_actor):
    return services.approve(proposed, manager_actor)


# -- who may do what -------------------------------------------------------------

def _call(name, ctx, small):
    """(fixture needed, method, path, body, expected status when allowed)."""
    return {
        "list interpretations": ("draft", "get", iurl(), None, 200),
        "read interpretation": ("draft", "get", iurl(ctx.interpretation_id), None, 200),
        "list versions": ("draft", "get", vurl(), None, 200),
        "read version": ("draft", "get", vurl(ctx.pk), None, 200),
        "read validity": ("draft", "get", vurl(ctx.pk, "validity"), None, 200),
        "read record changes": ("draft", "get", vurl(ctx.pk, "record-changes"), None, 200),
        "diff": ("draft", "get", vurl(ctx.pk, "diff") + f"?against={ctx.pk}", None, 200),
        "create interpretation": ("draft", "post", iurl(), {"name": "Other", "content": phased_content(small)}, 201),
        "edit draft": ("draft", "patch", vurl(ctx.pk), {"message": "edited"}, 200),
        "commit": ("draft", "post", vurl(ctx.pk, "commit"), {}, 200),
        "new draft": ("draft", "post", vurl(ctx.pk, "drafts"), {}, 201),
        "move on": ("draft", "post", vurl(ctx.pk, "move-on"), {}, 201),
        "propose": ("committed", "post", vurl(ctx.pk, "propose"), {}, 200),
        "approve": ("proposed", "post", vurl(ctx.pk, "approve"), {}, 200),
        "reject": ("proposed", "post", vurl(ctx.pk, "reject"), {"reason": "phasing of 105 unconvincing"}, 200),
        "make current": ("approved", "post", vurl(ctx.pk, "make-current"), {}, 200),
    }[name]


READS = ["list interpretations", "read interpretation", "list versions", "read version", "read validity",
         "read record changes", "diff"]
ANALYST_WRITES = ["create interpretation", "edit draft", "commit", "new draft", "move on", "propose"]
MANAGER_ONLY = ["approve", "reject", "make current"]

MATRIX = (
    [(role, name, True) for role in (V, R, A, M) for name in READS]
    + [(role, name, role in (A, M)) for role in (V, R, A, M) for name in ANALYST_WRITES]
    + [(role, name, role == M) for role in (V, R, A, M) for name in MANAGER_ONLY]
)


@pytest.mark.parametrize("role, name, allowed", MATRIX, ids=[f"{r}-{n}" for r, n, _ in MATRIX])
def test_role_matrix(role, name, allowed, small, draft, analyst_actor, manager_actor, client_for):
    stage = _call(name, draft, small)[0]
    target = draft
    if stage in ("committed", "proposed", "approved"):
        target = services.commit(draft, analyst_actor)
    if stage in ("proposed", "approved"):
        target = services.propose(target, analyst_actor)
    if stage == "approved":
        target = services.approve(target, manager_actor)
    _stage, method, path, body, ok_status = _call(name, target, small)
    headers = {"HTTP_IF_MATCH": target.etag} if method == "patch" else {}
    client = client_for(role)
    response = getattr(client, method)(path, body, format="json", **headers) if body is not None else \
        getattr(client, method)(path)
    if allowed:
        assert response.status_code == ok_status, response.content
    else:
        assert_error_body(response, 403, "permission-denied")


def test_another_organisations_versions_are_not_found(draft, outsider, other_project):
    client = token_client(outsider)
    assert_error_body(client.get(vurl(draft.pk)), 404)
    assert_error_body(client.get(url(other_project.code, "versions", draft.pk)), 404)


# -- the workflow ---------------------------------------------------------------------

def test_full_workflow_to_the_current_reading(small, client_for):
    analyst, manager = client_for(A), client_for(M)
    created = analyst.post(iurl(), {"name": "Hearth with floor", "content": phased_content(small)}, format="json")
    assert created.status_code == 201, created.content
    vid = created.json()["id"]
    assert created.json()["status"] == "draft" and created.json()["is_valid"] is True
    assert analyst.post(vurl(vid, "commit"), {"message": "phasing checked"}, format="json").json()["status"] == "committed"
    assert analyst.post(vurl(vid, "propose"), {}, format="json").json()["status"] == "proposed"
    assert manager.post(vurl(vid, "approve"), {}, format="json").json()["status"] == "approved"
    reading = manager.post(vurl(vid, "make-current"), {}, format="json")
    assert reading.status_code == 200 and reading.json()["version"]["id"] == vid
    assert analyst.get(url("VML24", "reading")).json()["version"]["is_current"] is True


def test_approving_supersedes_the_previous_approved_version_and_moves_the_reading(approved, analyst_actor,
                                                                                 manager_actor):
    services.make_current(approved, manager_actor)
    second = services.propose(services.commit(services.new_draft(approved, analyst_actor, message="v2"),
                                              analyst_actor), analyst_actor)
    services.approve(second, manager_actor)
    assert _version(approved.pk).status == Status.SUPERSEDED
    assert _version(second.pk).status == Status.APPROVED
    assert Reading.objects.get(project=approved.project).version_id == second.pk


def test_only_approved_versions_can_be_the_current_reading(proposed, client_for):
    assert_error_body(client_for(M).post(vurl(proposed.pk, "make-current"), {}, format="json"), 409, "not-approved")


def test_rejecting_needs_a_reason_and_is_final(proposed, client_for):
    manager = client_for(M)
    assert_error_body(manager.post(vurl(proposed.pk, "reject"), {}, format="json"), 400, "required")
    assert manager.post(vurl(proposed.pk, "reject"), {"reason": "no"}, format="json").json()["status"] == "rejected"
    assert_error_body(manager.post(vurl(proposed.pk, "approve"), {}, format="json"), 409, "invalid-transition")


def test_a_draft_cannot_be_proposed_before_it_is_committed(draft, client_for):
    assert_error_body(client_for(A).post(vurl(draft.pk, "propose"), {}, format="json"), 409, "invalid-transition")


# -- optimistic locking ----------------------------------------------------------------

def test_editing_a_draft_needs_its_current_etag(draft, small, client_for):
    analyst = client_for(A)
    read = analyst.get(vurl(draft.pk))
    etag = read["ETag"]
    assert_error_body(analyst.patch(vurl(draft.pk), {"message": "x"}, format="json"), 428, "precondition-required")
    first = analyst.patch(vurl(draft.pk), {"message": "first"}, format="json", HTTP_IF_MATCH=etag)
    assert first.status_code == 200 and first["ETag"] != etag
    stale = analyst.patch(vurl(draft.pk), {"message": "second"}, format="json", HTTP_IF_MATCH=etag)
    error = assert_error_body(stale, 412, "precondition-failed")
    assert error["current_etag"] == first["ETag"]
    assert _version(draft.pk).message == "first"


def test_an_edit_with_labels_stores_ids_and_revalidates(draft, small, client_for):
    analyst = client_for(A)
    content = phased_content(small, orderings=[{"earlier": "105", "later": "101", "reason": "test"}])
    response = analyst.patch(vurl(draft.pk), {"content": content}, format="json", HTTP_IF_MATCH=draft.etag)
    assert response.status_code == 200, response.content
    body = response.json()
    assert body["content"]["orderings"][0]["earlier"] == small["ids"]["105"]
    assert body["is_valid"] is False


def test_a_malformed_document_is_refused_with_every_path(small, client_for):
    bad = {"phases": [{"key": "a", "name": "A"}], "assignments": [{"context": "101", "phase": "b"}],
           "estimate": ["nope"]}
    response = client_for(A).post(iurl(), {"name": "Bad", "content": bad}, format="json")
    assert_error_body(response, 400)
    assert [(e["field"], e["code"]) for e in response.json()["errors"]] == [
        ("estimate[0]", "unknown-context"), ("assignments[0].phase", "unknown-phase")]


# -- the change log ----------------------------------------------------------------------

def test_every_action_is_logged_at_the_current_revision_without_bumping_it(small, client_for, users):
    project = small["project"]
    revision = project.revision
    analyst, manager = client_for(A, "analyst laptop"), client_for(M)
    vid = analyst.post(iurl(), {"name": "Logged", "content": phased_content(small)}, format="json",
                       HTTP_X_REQUEST_ID="req-interp-1").json()["id"]
    analyst.post(vurl(vid, "commit"), {}, format="json")
    analyst.post(vurl(vid, "propose"), {}, format="json")
    manager.post(vurl(vid, "approve"), {}, format="json")
    manager.post(vurl(vid, "make-current"), {}, format="json")
    project.refresh_from_db()
    assert project.revision == revision
    entries = list(ChangeLogEntry.objects.filter(project=project, action__startswith="interpretation.")
                   .order_by("id"))
    assert [e.action for e in entries] == [
        "interpretation.created", "interpretation.version.created", "interpretation.version.committed",
        "interpretation.version.proposed", "interpretation.version.approved", "interpretation.reading.changed",
    ]
    assert all(e.revision == revision for e in entries)
    first = entries[0]
    # The server's own request id is the entry's; the client's is kept beside it, never in its place.
    assert (first.user, first.user_name, first.device, first.client_request_id) == (
        users[A], "cleo.analyst", "analyst laptop", "req-interp-1")
    assert first.request_id and first.request_id != "req-interp-1"
    assert first.token is not None
    assert entries[4].user_name == "dan.manager"
    assert entries[2].after["content_hash"] == _version(vid).content_hash


def test_the_service_keeps_to_the_roles_without_the_api(proposed, analyst_actor):
    with pytest.raises(services.NotAllowed):
        services.approve(proposed, analyst_actor)
    assert _version(proposed.pk).status == Status.PROPOSED


def test_creating_with_an_idempotency_key_twice_makes_one_interpretation(small, client_for):
    analyst = client_for(A)
    body = {"name": "Retried", "content": phased_content(small)}
    first = analyst.post(iurl(), body, format="json", HTTP_IDEMPOTENCY_KEY="k-1")
    again = analyst.post(iurl(), body, format="json", HTTP_IDEMPOTENCY_KEY="k-1")
    assert first.status_code == again.status_code == 201
    assert again["Idempotent-Replayed"] == "true"
    assert again.json()["id"] == first.json()["id"]
    assert Version.objects.filter(interpretation__name="Retried").count() == 1


def test_versions_are_listed_in_a_stable_order_page_by_page(draft, analyst_actor, client_for):
    for n in range(3):
        services.new_draft(draft, analyst_actor, message=f"branch {n}")
    viewer = client_for(V)
    page = viewer.get(vurl() + "?page_size=2").json()
    assert page["count"] == 4
    second = viewer.get(vurl() + "?page_size=2&page=2").json()
    numbers = [v["number"] for v in page["results"] + second["results"]]
    assert numbers == [1, 2, 3, 4]
    assert [v["number"] for v in viewer.get(vurl() + "?status=draft").json()["results"]] == [1, 2, 3, 4]
