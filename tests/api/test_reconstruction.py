"""Reading at a past revision gives exactly what a read gave when that revision was current."""

from __future__ import annotations

import uuid

import pytest

from tests.api.conftest import assert_error_body, url


def _read(api, at=None):
    suffix = "" if at is None else f"?at={at}"
    contexts = api.get(url("VML24", "contexts") + suffix)
    relationships = api.get(url("VML24", "relationships") + suffix)
    assert contexts.status_code == relationships.status_code == 200
    return {"contexts": contexts.json(), "relationships": relationships.json()}


def _current(api):
    return api.get("/api/v1/projects/VML24/").json()["revision"]


def _post(api, path, body):
    response = api.post(path, body, format="json")
    assert response.status_code in (200, 201), response.content
    return response.json()


@pytest.fixture
def history(api, project):
    """A short excavation: additions, edits, retractions (with cascade) and a batch; snapshots as it goes."""
    snapshots = {0: _read(api)}

    def snap():
        snapshots[_current(api)] = _read(api)

    ids = {}
    for label, kind in [("1001", "deposit"), ("1002", "deposit"), ("1003", "cut"), ("1004", "fill")]:
        ids[label] = _post(api, url("VML24", "contexts"), {"label": label, "kind": kind, "area": "Trench 1"})["id"]
        snap()
    rels = {}
    for subject, type_, obj in [("1001", "above", "1002"), ("1003", "cuts", "1002"), ("1004", "fills", "1003")]:
        rels[subject] = _post(api, url("VML24", "relationships"), {"subject": subject, "type": type_, "object": obj})["id"]
        snap()
    response = api.patch(url("VML24", "contexts", ids["1002"]), {"label": "1002a", "description": "re-numbered"}, format="json")
    assert response.status_code == 200
    snap()
    _post(api, url("VML24", "relationships", rels["1001"], "retract"), {"reason": "misread section"})
    snap()
    _post(api, url("VML24", "contexts", ids["1003"], "retract"), {"reason": "not a cut: root hole"})
    snap()
    _post(api, url("VML24", "contexts"), {"label": "1003", "kind": "deposit", "top_level": 12.4, "base_level": 12.1})
    snap()
    _post(api, url("VML24", "sync"), {
        "batch_id": str(uuid.uuid4()),
        "contexts": [{"label": "1005", "kind": "masonry"}],
        "relationships": [{"subject": "1005", "type": "abuts", "object": "1003"}],
    })
    snap()
    response = api.patch(url("VML24", "contexts", ids["1004"]), {"top_level": 11.9}, format="json")
    assert response.status_code == 200
    snap()
    return {"snapshots": snapshots, "ids": ids, "rels": rels}


def test_every_past_revision_reads_exactly_as_it_did_when_current(api, history):
    snapshots = history["snapshots"]
    assert sorted(snapshots) == list(range(len(snapshots)))
    for revision, expected in snapshots.items():
        assert _read(api, revision) == expected, f"revision {revision}"


def test_retracting_a_context_retracts_its_relationships_in_the_same_revision(api, history):
    rels = api.get(url("VML24", "relationships")).json()["results"]
    assert [(r["later"], r["type"], r["earlier"]) for r in rels] == [("1005", "abuts", "1003")]
    changes = api.get(url("VML24", "changes") + "?since=9&action=record.").json()["results"]
    retraction = [c for c in changes if c["revision"] == 10]
    assert sorted(c["action"] for c in retraction) == [
        "record.context.retracted", "record.relationship.retracted", "record.relationship.retracted"
    ]


def test_a_past_revision_shows_the_label_in_force_then(api, history):
    before_edit = api.get(url("VML24", "relationships") + "?at=7").json()["results"]
    after_edit = api.get(url("VML24", "relationships") + "?at=8").json()["results"]
    assert before_edit[0]["text"] == "1001 above 1002"
    assert after_edit[0]["text"] == "1001 above 1002a"


def test_a_context_detail_at_a_past_revision_is_its_version_then(api, history):
    ctx = history["ids"]["1002"]
    assert api.get(url("VML24", "contexts", ctx) + "?at=2").json()["label"] == "1002"
    assert api.get(url("VML24", "contexts", ctx)).json()["label"] == "1002a"


def test_a_context_detail_before_it_existed_answers_not_found(api, history):
    assert_error_body(api.get(url("VML24", "contexts", history["ids"]["1004"]) + "?at=3"), 404, "not-found")


def test_a_retracted_context_is_readable_at_the_revisions_it_existed(api, history):
    ctx = history["ids"]["1003"]
    assert api.get(url("VML24", "contexts", ctx) + "?at=9").status_code == 200
    assert_error_body(api.get(url("VML24", "contexts", ctx) + "?at=10"), 404, "not-found")
    assert_error_body(api.get(url("VML24", "contexts", ctx)), 404, "not-found")


def test_reading_beyond_the_current_revision_is_refused(api, history):
    current = _current(api)
    for kind in ("contexts", "relationships"):
        error = assert_error_body(api.get(url("VML24", kind) + f"?at={current + 1}"), 400, "unknown-revision")
        assert error["field"] == "at"


def test_a_negative_revision_is_refused(api, project):
    assert_error_body(api.get(url("VML24", "contexts") + "?at=-1"), 400, "unknown-revision")


def test_a_revision_that_is_not_a_number_is_refused(api, project):
    assert_error_body(api.get(url("VML24", "contexts") + "?at=yesterday"), 400, "invalid-number")


def test_every_read_names_the_revision_it_shows(api, history):
    assert api.get(url("VML24", "contexts") + "?at=5").json()["revision"] == 5
    assert api.get(url("VML24", "relationships")).json()["revision"] == _current(api)
