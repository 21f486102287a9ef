"""A committed version never changes: not through the API, not through save(), not through update()."""

from __future__ import annotations

import pytest

from chronology.interpretations import services
from chronology.interpretations.models import ImmutableVersion, Status, Version
from projects.models import Role
from tests.api.conftest import assert_error_body
from tests.interpretations.conftest import phased_content, vurl


@pytest.fixture
def committed(draft, analyst_actor):
    return services.commit(draft, analyst_actor, message="first reading")


def test_commit_stores_the_sha256_of_the_canonical_content(committed):
    import hashlib
    import json

    payload = json.dumps({"record_revision": committed.record_revision, "content": committed.content},
                         sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    assert committed.content_hash == hashlib.sha256(payload.encode()).hexdigest()
    assert committed.committed_at is not None


def test_saving_a_changed_content_of_a_committed_version_raises(committed):
    version = Version.objects.get(pk=committed.pk)
    version.content = {**version.content, "estimate": [1]}
    with pytest.raises(ImmutableVersion):
        version.save()
    with pytest.raises(ImmutableVersion):
        version.save(update_fields=["content"])
    assert Version.objects.get(pk=committed.pk).content == committed.content


@pytest.mark.parametrize("field, value", [
    ("message", "rewritten"), ("record_revision", 0), ("content_hash", "0" * 64), ("is_valid", False),
])
def test_queryset_update_of_a_frozen_field_raises(committed, field, value):
    with pytest.raises(ImmutableVersion):
        Version.objects.filter(pk=committed.pk).update(**{field: value})
    assert getattr(Version.objects.get(pk=committed.pk), field) == getattr(committed, field)


def test_bulk_update_goes_through_the_guard(committed):
    version = Version.objects.get(pk=committed.pk)
    version.message = "rewritten"
    with pytest.raises(ImmutableVersion):
        Version.objects.bulk_update([version], ["message"])


def test_a_committed_version_never_returns_to_draft(committed):
    with pytest.raises(ImmutableVersion):
        Version.objects.filter(pk=committed.pk).update(status=Status.DRAFT)
    version = Version.objects.get(pk=committed.pk)
    version.status = Status.DRAFT
    with pytest.raises(ImmutableVersion):
        version.save()


def test_a_committed_version_is_never_deleted(committed):
    with pytest.raises(ImmutableVersion):
        Version.objects.get(pk=committed.pk).delete()
    with pytest.raises(ImmutableVersion):
        Version.objects.filter(pk=committed.pk).delete()
    assert Version.objects.filter(pk=committed.pk).exists()


def test_a_draft_may_still_be_changed_through_the_orm(draft):
    Version.objects.filter(pk=draft.pk).update(message="still a draft")
    assert Version.objects.get(pk=draft.pk).message == "still a draft"


def test_no_api_call_changes_a_committed_version(committed, small, client_for):
    analyst, manager = client_for(Role.ANALYST), client_for(Role.MANAGER)
    before = Version.objects.filter(pk=committed.pk).values().get()
    path = vurl(committed.pk)
    edit = analyst.patch(path, {"content": phased_content(small, estimate=["103"])}, format="json",
                         HTTP_IF_MATCH=committed.etag)
    assert_error_body(edit, 409, "not-a-draft")
    assert_error_body(analyst.post(vurl(committed.pk, "commit"), {}, format="json"), 409, "invalid-transition")
    assert_error_body(manager.post(vurl(committed.pk, "approve"), {}, format="json"), 409, "invalid-transition")
    assert analyst.put(path, {}, format="json").status_code == 405
    assert analyst.delete(path).status_code == 405
    after = Version.objects.filter(pk=committed.pk).values().get()
    assert {k: v for k, v in after.items() if k != "updated_at"} == {k: v for k, v in before.items() if k != "updated_at"}


def test_status_moves_on_but_content_stays(committed, analyst_actor, manager_actor):
    approved = services.approve(services.propose(committed, analyst_actor), manager_actor)
    stored = Version.objects.get(pk=approved.pk)
    assert stored.status == Status.APPROVED
    assert (stored.content, stored.content_hash, stored.message) == (committed.content, committed.content_hash,
                                                                     committed.message)
