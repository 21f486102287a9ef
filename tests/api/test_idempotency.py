"""Retries are safe: client uids and the Idempotency-Key header."""

from __future__ import annotations

import uuid

from projects.models import Context, Revision
from tests.api.conftest import assert_error_body, url
from tests.record.helpers import add_contexts


def test_a_context_reposted_with_the_same_uid_is_returned_unchanged(api, project):
    body = {"uid": str(uuid.uuid4()), "label": "1001", "kind": "deposit"}
    first = api.post(url("VML24", "contexts"), body, format="json")
    again = api.post(url("VML24", "contexts"), body, format="json")
    assert (first.status_code, again.status_code) == (201, 200)
    assert again.json() == first.json()
    assert Context.objects.filter(project=project).count() == 1


def test_a_context_reposted_with_the_same_uid_makes_no_revision(api, project):
    body = {"uid": str(uuid.uuid4()), "label": "1001", "kind": "deposit"}
    api.post(url("VML24", "contexts"), body, format="json")
    api.post(url("VML24", "contexts"), body, format="json")
    assert Revision.objects.filter(project=project).count() == 1


def test_a_relationship_reposted_with_the_same_uid_is_a_no_op(api, project, actor):
    add_contexts(project, actor, ["1001", "1002"])
    body = {"uid": str(uuid.uuid4()), "subject": "1001", "type": "above", "object": "1002"}
    first = api.post(url("VML24", "relationships"), body, format="json")
    again = api.post(url("VML24", "relationships"), body, format="json")
    assert (again.status_code, again.json()["id"]) == (200, first.json()["id"])
    assert Revision.objects.filter(project=project).count() == 3


def test_a_uid_reused_for_a_different_relationship_is_refused(api, project, actor):
    add_contexts(project, actor, ["1001", "1002", "1003"])
    uid = str(uuid.uuid4())
    api.post(url("VML24", "relationships"), {"uid": uid, "subject": "1001", "type": "above", "object": "1002"}, format="json")
    response = api.post(url("VML24", "relationships"), {"uid": uid, "subject": "1001", "type": "above", "object": "1003"}, format="json")
    assert assert_error_body(response, 409, "uid-reused")["field"] == "uid"


def test_a_uid_reused_for_a_different_context_is_refused(api, project):
    uid = str(uuid.uuid4())
    api.post(url("VML24", "contexts"), {"uid": uid, "label": "1001", "kind": "deposit"}, format="json")
    response = api.post(url("VML24", "contexts"), {"uid": uid, "label": "1001", "kind": "cut"}, format="json")
    assert_error_body(response, 409, "uid-reused")


def test_an_idempotency_key_replay_returns_the_identical_body(api, project):
    headers = {"HTTP_IDEMPOTENCY_KEY": "tablet-2-0001"}
    first = api.post(url("VML24", "contexts"), {"label": "1001", "kind": "deposit"}, format="json", **headers)
    again = api.post(url("VML24", "contexts"), {"label": "1001", "kind": "deposit"}, format="json", **headers)
    assert (first.status_code, again.status_code) == (201, 201)
    assert again.content == first.content
    assert again["Idempotent-Replayed"] == "true"
    assert "Idempotent-Replayed" not in first


def test_an_idempotency_key_replay_writes_nothing(api, project):
    headers = {"HTTP_IDEMPOTENCY_KEY": "tablet-2-0002"}
    for _ in range(3):
        api.post(url("VML24", "contexts"), {"label": "1001", "kind": "deposit"}, format="json", **headers)
    project.refresh_from_db()
    assert (project.revision, Context.objects.count()) == (1, 1)


def test_an_idempotency_key_replays_a_refusal_too(api, project, actor):
    add_contexts(project, actor, ["A", "B"])
    api.post(url("VML24", "relationships"), {"subject": "A", "type": "above", "object": "B"}, format="json")
    headers = {"HTTP_IDEMPOTENCY_KEY": "tablet-2-0003"}
    body = {"subject": "B", "type": "above", "object": "A"}
    first = api.post(url("VML24", "relationships"), body, format="json", **headers)
    again = api.post(url("VML24", "relationships"), body, format="json", **headers)
    assert (first.status_code, again.status_code) == (409, 409)
    assert again.json() == first.json()
    assert again["Idempotent-Replayed"] == "true"


def test_the_same_idempotency_key_with_another_body_is_refused(api, project):
    headers = {"HTTP_IDEMPOTENCY_KEY": "tablet-2-0004"}
    api.post(url("VML24", "contexts"), {"label": "1001", "kind": "deposit"}, format="json", **headers)
    response = api.post(url("VML24", "contexts"), {"label": "1002", "kind": "deposit"}, format="json", **headers)
    error = assert_error_body(response, 422, "idempotency-key-reused")
    assert error["field"] == "Idempotency-Key"
    assert not Context.objects.filter(label="1002").exists()


def test_the_same_idempotency_key_on_another_endpoint_is_refused(api, project, actor):
    add_contexts(project, actor, ["1001", "1002"])
    headers = {"HTTP_IDEMPOTENCY_KEY": "tablet-2-0005"}
    api.post(url("VML24", "contexts"), {"label": "1003", "kind": "deposit"}, format="json", **headers)
    response = api.post(url("VML24", "relationships"), {"label": "1003", "kind": "deposit"}, format="json", **headers)
    assert_error_body(response, 422, "idempotency-key-reused")


def test_idempotency_keys_are_kept_per_user(client_for, project):
    headers = {"HTTP_IDEMPOTENCY_KEY": "shared-key"}
    first = client_for("recorder").post(url("VML24", "contexts"), {"label": "1001", "kind": "deposit"}, format="json", **headers)
    second = client_for("analyst").post(url("VML24", "contexts"), {"label": "1002", "kind": "deposit"}, format="json", **headers)
    assert (first.status_code, second.status_code) == (201, 201)
    assert "Idempotent-Replayed" not in second
