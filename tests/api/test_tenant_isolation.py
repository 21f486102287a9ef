"""Another organisation's project and everything in it answers 404, never 403."""

from __future__ import annotations

import uuid

import pytest

from tests.api.conftest import assert_error_body, url

FOREIGN = "QHX01"


def _foreign_requests(record):
    ctx = record["contexts"]["Q1"].id
    rel = record["relationship"].id
    return {
        "context list": ("get", url(FOREIGN, "contexts"), None),
        "context list at a revision": ("get", url(FOREIGN, "contexts") + "?at=1", None),
        "context detail": ("get", url(FOREIGN, "contexts", ctx), None),
        "context create": ("post", url(FOREIGN, "contexts"), {"label": "X1", "kind": "deposit"}),
        "context edit": ("patch", url(FOREIGN, "contexts", ctx), {"description": "mine now"}),
        "context retract": ("post", url(FOREIGN, "contexts", ctx, "retract"), {"reason": "gone"}),
        "relationship list": ("get", url(FOREIGN, "relationships"), None),
        "relationship detail": ("get", url(FOREIGN, "relationships", rel), None),
        "relationship create": (
            "post", url(FOREIGN, "relationships"), {"subject": "Q2", "type": "above", "object": "Q1"}
        ),
        "relationship retract": ("post", url(FOREIGN, "relationships", rel, "retract"), {"reason": "gone"}),
        "changes": ("get", url(FOREIGN, "changes"), None),
        "changes since": ("get", url(FOREIGN, "changes") + "?since=0", None),
        "revisions": ("get", url(FOREIGN, "revisions"), None),
        "sync": ("post", url(FOREIGN, "sync"), {"batch_id": str(uuid.uuid4()), "contexts": [{"label": "X", "kind": "cut"}]}),
        "project detail": ("get", f"/api/v1/projects/{FOREIGN}/", None),
    }


REQUESTS = [
    "context list", "context list at a revision", "context detail", "context create", "context edit",
    "context retract", "relationship list", "relationship detail", "relationship create",
    "relationship retract", "changes", "changes since", "revisions", "sync", "project detail",
]


@pytest.mark.parametrize("name", REQUESTS)
def test_another_organisations_project_answers_not_found(name, api, project, foreign_record):
    method, path, body = _foreign_requests(foreign_record)[name]
    response = getattr(api, method)(path, body, format="json") if body is not None else getattr(api, method)(path)
    assert_error_body(response, 404, "not-found")


def test_a_refused_foreign_request_leaves_the_other_record_unchanged(api, project, foreign_record):
    other = foreign_record["project"]
    before = other.revision
    for method, path, body in _foreign_requests(foreign_record).values():
        if method != "get":
            getattr(api, method)(path, body, format="json")
    other.refresh_from_db()
    assert other.revision == before


@pytest.mark.parametrize("kind", ["contexts", "relationships"])
def test_a_foreign_object_id_under_our_own_project_answers_not_found(kind, api, project, foreign_record):
    foreign_id = foreign_record["contexts"]["Q1"].id if kind == "contexts" else foreign_record["relationship"].id
    assert_error_body(api.get(url(project.code, kind, foreign_id)), 404, "not-found")


@pytest.mark.parametrize("kind", ["contexts", "relationships"])
def test_retracting_a_foreign_object_through_our_own_project_answers_not_found(kind, api, project, foreign_record):
    foreign_id = foreign_record["contexts"]["Q1"].id if kind == "contexts" else foreign_record["relationship"].id
    response = api.post(url(project.code, kind, foreign_id, "retract"), {"reason": "not ours"}, format="json")
    assert_error_body(response, 404, "not-found")
    other = foreign_record["project"]
    other.refresh_from_db()
    assert other.revision == 3


def test_editing_a_foreign_context_through_our_own_project_answers_not_found(api, project, foreign_record):
    foreign_id = foreign_record["contexts"]["Q1"].id
    response = api.patch(url(project.code, "contexts", foreign_id), {"description": "x"}, format="json")
    assert_error_body(response, 404, "not-found")


def test_the_project_list_shows_only_the_callers_organisation(api, project, foreign_record):
    response = api.get("/api/v1/projects/")
    assert response.status_code == 200
    assert [(p["organisation"], p["code"]) for p in response.json()["results"]] == [("northfold", "VML24")]


def test_the_organisation_list_shows_only_the_callers_organisation(api, project, foreign_record):
    response = api.get("/api/v1/organisations/")
    assert [o["slug"] for o in response.json()["results"]] == ["northfold"]


def test_the_outsider_cannot_see_our_project_either(project, outsider):
    from tests.conftest import token_client

    client = token_client(outsider)
    assert_error_body(client.get(url(project.code, "contexts")), 404, "not-found")
    assert client.get("/api/v1/projects/").json()["results"] == []
