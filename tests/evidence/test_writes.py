"""Evidence on the record: append-only, revisioned, logged and idempotent like contexts."""

from __future__ import annotations

import uuid

import pytest

from chronology.evidence import writes
from chronology.evidence.models import Determination, Sample
from projects.models import ChangeLogEntry, RecordState, Role
from projects.models.append_only import AppendOnlyViolation
from projects.record.errors import RecordConflict, RecordInvalid

from .conftest import url


def _sample(project, actor, code="S101", context="1021", **extra):
    return writes.add_sample(project, actor, context=context, code=code, material="charred cereal grain",
                             short_lived=True, **extra)


def _determination(project, actor, curve, sample="S101", lab="VXL-0101", **extra):
    fields = {"cra": 2200, "cra_sigma": 30, **extra}
    return writes.add_determination(project, actor, sample=sample, lab_code=lab, curve=curve.name, **fields)


def test_each_evidence_write_makes_one_revision_with_one_log_entry(project, actor, contexts, curve):
    before = project.revision
    sample = _sample(project, actor).object
    det = _determination(project, actor, curve).object
    assert project.revision == before + 2
    entries = list(ChangeLogEntry.objects.filter(project=project, revision__gt=before).order_by("revision"))
    assert [(e.revision, e.action, e.object_id) for e in entries] == [
        (before + 1, "record.sample.added", sample.id),
        (before + 2, "record.determination.added", det.id),
    ]
    assert entries[1].after["lab_code"] == "VXL-0101" and entries[1].before is None


def test_a_past_revision_reads_the_evidence_exactly_as_it_was(client_for, project, actor, contexts, curve):
    _sample(project, actor)
    det = _determination(project, actor, curve).object
    at_creation = project.revision
    api = client_for(Role.VIEWER)
    then = api.get(url("VML24", "determinations", det.id)).json()
    writes.retract_evidence(project, actor, "sample", Sample.objects.get(code="S101").id, reason="mislabelled bag")
    assert api.get(url("VML24", "determinations")).json()["results"] == []
    assert api.get(url("VML24", "determinations", det.id)).status_code == 404
    past = api.get(url("VML24", "determinations", det.id) + f"?at={at_creation}")
    assert past.status_code == 200 and past.json() == then
    listed = api.get(url("VML24", "samples") + f"?at={at_creation}").json()
    assert listed["revision"] == at_creation and [s["code"] for s in listed["results"]] == ["S101"]


def test_retracting_a_sample_retracts_its_determinations_in_the_same_revision(project, actor, contexts, curve):
    sample = _sample(project, actor).object
    det = _determination(project, actor, curve).object
    writes.retract_evidence(project, actor, "sample", sample.id, reason="contaminated")
    det.refresh_from_db()
    assert det.retracted_revision == project.revision
    actions = set(ChangeLogEntry.objects.filter(project=project, revision=project.revision).values_list("action", flat=True))
    assert actions == {"record.sample.retracted", "record.determination.retracted"}
    open_states = RecordState.objects.filter(project=project, kind__in=["sample", "determination"], valid_to__isnull=True)
    assert not open_states.exists()


def test_retraction_needs_a_reason(project, actor, contexts):
    sample = _sample(project, actor).object
    with pytest.raises(RecordInvalid) as err:
        writes.retract_evidence(project, actor, "sample", sample.id, reason=" ")
    assert (err.value.field, err.value.code) == ("reason", "required")


def test_evidence_rows_and_their_states_refuse_deletion(project, actor, contexts, curve):
    _sample(project, actor)
    with pytest.raises(AppendOnlyViolation):
        RecordState.objects.filter(project=project, kind="sample").delete()
    with pytest.raises(AppendOnlyViolation):
        curve.delete()


def test_reposting_the_same_uid_is_a_no_op(project, actor, contexts, curve):
    uid = uuid.uuid4()
    first = _sample(project, actor, uid=uid)
    revision = project.revision
    again = _sample(project, actor, uid=uid)
    assert again.object.id == first.object.id and not again.created and project.revision == revision


def test_reposting_a_uid_with_other_values_is_refused(project, actor, contexts):
    uid = uuid.uuid4()
    _sample(project, actor, uid=uid)
    with pytest.raises(RecordConflict) as err:
        _sample(project, actor, uid=uid, context="1015")
    assert (err.value.field, err.value.code) == ("uid", "uid-reused")


def test_f14c_is_stored_as_primary_and_the_age_derived(project, actor, contexts, curve):
    _sample(project, actor)
    det = writes.add_determination(project, actor, sample="S101", lab_code="VXL-0101", f14c=0.7376,
                                   f14c_sigma=0.0027, curve=curve.id).object
    # Stuiver & Polach (1977) via the domain primer's worked example: 0.7376 ± 0.0027 gives 2445 ± 29 BP.
    assert det.measured == "f14c" and det.f14c == 0.7376
    assert round(det.cra) == 2445 and round(det.cra_sigma) == 29


def test_a_sample_code_is_unique_among_the_projects_active_samples(project, actor, contexts):
    first = _sample(project, actor).object
    with pytest.raises(RecordConflict) as err:
        _sample(project, actor, context="1015")
    assert (err.value.field, err.value.code) == ("code", "duplicate-code")
    writes.retract_evidence(project, actor, "sample", first.id, reason="wrong number")
    assert _sample(project, actor, context="1015").created


def test_calendar_dates_and_termini_are_recorded_with_their_text(project, actor, contexts):
    _sample(project, actor, code="S107", context="3041")
    felled = writes.add_calendar_date(project, actor, sample="S107", kind="normal", mean=118, sd=1,
                                      method="dendrochronology").object
    coin = writes.add_terminus(project, actor, context="3031", kind="post_quem", year=260, year_end=268,
                               find="coin").object
    assert felled.context.label == "3041"  # taken from the sample
    states = dict(RecordState.objects.filter(project=project, kind__in=["calendar_date", "terminus"])
                  .values_list("kind", "data"))
    assert states["calendar_date"]["text"] == "AD 118 ± 1"
    assert states["terminus"]["text"] == "not earlier than AD 260" and coin.year_end == 268


def test_a_range_date_before_ad_1_is_shown_without_a_year_zero(project, actor, contexts):
    writes.add_calendar_date(project, actor, context="1011", kind="uniform", start=-9, end=10)
    data = RecordState.objects.get(project=project, kind="calendar_date").data
    # Domain primer §3.5: 10 BC is astronomical -9; there is no year 0.
    assert data["text"] == "10 BC – AD 10"


def test_lab_code_is_unique_across_the_organisation(project, actor, contexts, curve, org):
    from projects.models import Project
    from projects.record import writes as record_writes

    _sample(project, actor)
    _determination(project, actor, curve)
    sibling = Project.objects.create(organisation=org, code="VML25", name="Vellmarsh Lane evaluation")
    record_writes.add_context(sibling, actor, label="5004", kind="fill")
    _sample(sibling, actor, context="5004")
    with pytest.raises(RecordConflict) as err:
        _determination(sibling, actor, curve)
    assert (err.value.field, err.value.code) == ("lab_code", "duplicate-lab-code")
    assert Determination.objects.filter(lab_code="VXL-0101").count() == 1


def test_the_same_lab_code_is_allowed_in_another_organisation(project, actor, contexts, curve, other_project,
                                                            outsider):
    from projects.record import writes as record_writes
    from projects.record.changes import Actor

    _sample(project, actor)
    _determination(project, actor, curve)
    foreign = Actor(user=outsider, device="quillmoor tablet")
    record_writes.add_context(other_project, foreign, label="Q1", kind="fill")
    _sample(other_project, foreign, context="Q1")
    assert _determination(other_project, foreign, curve).created


def test_evidence_changes_appear_in_the_projects_change_feed(client_for, project, actor, contexts):
    since = project.revision
    sample = _sample(project, actor).object
    writes.retract_evidence(project, actor, "sample", sample.id, reason="duplicate bag")
    feed = client_for(Role.VIEWER).get(url("VML24", "changes") + f"?since={since}").json()["results"]
    assert [(c["action"], c["object_id"]) for c in feed] == [
        ("record.sample.added", sample.id), ("record.sample.retracted", sample.id)]
    assert feed[1]["message"] == "duplicate bag"
