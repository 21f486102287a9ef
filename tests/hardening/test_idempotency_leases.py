"""An Idempotency-Key left in progress by a killed request can be retried once its lease runs out."""

from __future__ import annotations

from datetime import timedelta

from django.utils import timezone

from projects.models import Context, IdempotencyRecord
from tests.api.conftest import assert_error_body, url

BODY = {"label": "1001", "kind": "deposit"}
KEY = {"HTTP_IDEMPOTENCY_KEY": "tablet-7-0001"}


def _crash_mid_request(recorder, path=None, body=BODY, lease_left=timedelta(seconds=-1)):
    """What a worker killed mid-request leaves: the key claimed, still running, no answer stored."""
    from api.idempotency import body_digest, body_parts

    return IdempotencyRecord.objects.create(
        user=recorder, key=KEY["HTTP_IDEMPOTENCY_KEY"], method="POST", path=path or url("VML24", "contexts"),
        body_digest=body_digest(body), body_parts=body_parts(body),
        lease_expires_at=timezone.now() + lease_left,
    )


def test_a_retry_after_a_crash_mid_request_succeeds_once_the_lease_has_run_out(api, project, recorder):
    _crash_mid_request(recorder)
    response = api.post(url("VML24", "contexts"), BODY, format="json", **KEY)
    assert response.status_code == 201, response.content
    assert Context.objects.filter(project=project).count() == 1


def test_the_retry_that_claimed_an_expired_key_stores_its_answer_for_the_next_retry(api, project, recorder):
    _crash_mid_request(recorder)
    first = api.post(url("VML24", "contexts"), BODY, format="json", **KEY)
    again = api.post(url("VML24", "contexts"), BODY, format="json", **KEY)
    assert (again.status_code, again.content, again["Idempotent-Replayed"]) == (201, first.content, "true")
    assert Context.objects.filter(project=project).count() == 1


def test_a_retry_while_the_lease_is_held_gets_409_with_retry_after(api, project, recorder):
    _crash_mid_request(recorder, lease_left=timedelta(seconds=30))
    response = api.post(url("VML24", "contexts"), BODY, format="json", **KEY)
    error = assert_error_body(response, 409, "idempotency-in-progress")
    assert 1 <= int(response["Retry-After"]) <= 30 and error["retry_after"] == int(response["Retry-After"])
    assert not Context.objects.exists()


def test_a_key_stored_before_leases_were_kept_expires_a_lease_after_it_was_made(api, project, recorder, settings):
    record = _crash_mid_request(recorder)
    IdempotencyRecord.objects.filter(pk=record.pk).update(
        lease_expires_at=None, created_at=timezone.now() - timedelta(seconds=settings.TELLSTACK_IDEMPOTENCY_LEASE_SECONDS + 1)
    )
    assert api.post(url("VML24", "contexts"), BODY, format="json", **KEY).status_code == 201


def test_a_request_that_lost_its_claim_does_not_overwrite_the_answer_of_the_retry(api, project, recorder):
    from api.idempotency import _store

    stale = _crash_mid_request(recorder)
    winner = api.post(url("VML24", "contexts"), BODY, format="json", **KEY)

    class Late:
        status_code, data = 500, {"late": True}

    _store(stale, Late())
    again = api.post(url("VML24", "contexts"), BODY, format="json", **KEY)
    assert again.content == winner.content


def test_a_key_reused_with_another_body_is_refused_naming_the_field_that_differs(api, project):
    api.post(url("VML24", "contexts"), BODY, format="json", **KEY)
    response = api.post(url("VML24", "contexts"), {**BODY, "kind": "cut"}, format="json", **KEY)
    error = assert_error_body(response, 422, "idempotency-key-reused")
    assert error["differences"] == ["kind"] and "kind" in error["message"]


def test_a_key_reused_for_another_batch_names_the_items_that_differ(api, project):
    items = [{"uid": f"00000000-0000-4000-8000-00000000000{i}", "label": f"C{i}", "kind": "deposit"} for i in range(3)]
    body = {"batch_id": "00000000-0000-4000-8000-0000000000aa", "contexts": items}
    api.post(url("VML24", "sync"), body, format="json", **KEY)
    changed = {**body, "contexts": [items[0], {**items[1], "label": "C9"}, items[2], {**items[2], "label": "C3"}]}
    error = assert_error_body(api.post(url("VML24", "sync"), changed, format="json", **KEY), 422, "idempotency-key-reused")
    assert error["differences"] == ["contexts[1]", "contexts[3]"]


def test_a_key_reused_on_another_path_is_refused_naming_the_path(api, project):
    api.post(url("VML24", "contexts"), BODY, format="json", **KEY)
    response = api.post(url("VML24", "relationships"), BODY, format="json", **KEY)
    assert assert_error_body(response, 422, "idempotency-key-reused")["differences"] == ["path"]


def test_differences_name_a_field_present_in_only_one_body():
    from api.idempotency import body_parts, differences

    assert differences(body_parts({"a": 1}), body_parts({"a": 1, "b": 2})) == ["b"]
