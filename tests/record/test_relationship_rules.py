"""Each relationship the record refuses, with its reason code and field; and what it accepts."""

from __future__ import annotations

import pytest

from projects.models import Relationship, Revision
from projects.record import writes
from projects.record.changes import Actor
from projects.record.errors import RecordConflict, RecordInvalid
from tests.api.conftest import assert_error_body, url
from tests.record.helpers import add_contexts, relate


def _refusal(project, actor, subject, type_, obj, **extra):
    with pytest.raises((RecordInvalid, RecordConflict)) as info:
        relate(project, actor, subject, type_, obj, **extra)
    return info.value


def _path(err):
    return [(s["from"], s["type"], s["to"]) for s in err.details["cycle"]]


def _closed(steps):
    """Each step's `to` is the next step's `from`, and the last returns to the first."""
    return all(steps[i]["to"] == steps[(i + 1) % len(steps)]["from"] for i in range(len(steps)))


def test_an_unknown_subject_is_refused_as_unknown_context(project, actor):
    add_contexts(project, actor, ["1001"])
    err = _refusal(project, actor, "9999", "above", "1001")
    assert (err.code, err.field, err.status) == ("unknown-context", "subject", 400)


def test_an_unknown_object_is_refused_as_unknown_context(project, actor):
    add_contexts(project, actor, ["1001"])
    err = _refusal(project, actor, "1001", "above", "9999")
    assert (err.code, err.field) == ("unknown-context", "object")


def test_a_retracted_context_is_refused_as_unknown_context(project, actor):
    ctx = add_contexts(project, actor, ["1001", "1002"])
    writes.retract_context(project, actor, ctx["1002"].id, reason="duplicate number")
    err = _refusal(project, actor, "1001", "above", "1002")
    assert (err.code, err.field) == ("unknown-context", "object")


def test_a_context_of_another_project_is_refused_exactly_as_a_missing_one(project, other_project, outsider, actor):
    ours = add_contexts(project, actor, ["1001"])
    theirs = add_contexts(other_project, Actor(user=outsider), ["Q1"])
    missing_id = theirs["Q1"].id + 1000
    elsewhere = _refusal(project, actor, ours["1001"].id, "above", theirs["Q1"].id)
    missing = _refusal(project, actor, ours["1001"].id, "above", missing_id)
    # No existence oracle: the same code, and a message that differs only by the id asked for.
    assert (elsewhere.code, elsewhere.field) == (missing.code, missing.field) == ("unknown-context", "object")
    asked = (f"context {theirs['Q1'].id} ", f"context {missing_id} ")
    assert elsewhere.message.replace(asked[0], "context N ") == missing.message.replace(asked[1], "context N ")


def test_a_context_related_to_itself_is_refused(project, actor):
    add_contexts(project, actor, ["1001"])
    err = _refusal(project, actor, "1001", "above", "1001")
    assert (err.code, err.field) == ("self-relationship", "object")


def test_a_context_named_by_label_and_by_id_is_still_itself(project, actor):
    ctx = add_contexts(project, actor, ["1001"])
    err = _refusal(project, actor, "1001", "cuts", ctx["1001"].id)
    assert err.code == "self-relationship"


def test_posting_the_same_relationship_again_returns_the_same_one(project, actor):
    add_contexts(project, actor, ["1001", "1002"])
    first = writes.add_relationship(project, actor, subject="1001", type="above", object="1002")
    again = writes.add_relationship(project, actor, subject="1001", type="above", object="1002")
    assert (again.object.id, again.created) == (first.object.id, False)


def test_posting_the_same_relationship_again_makes_no_revision(project, actor):
    add_contexts(project, actor, ["1001", "1002"])
    relate(project, actor, "1001", "above", "1002")
    revisions = Revision.objects.filter(project=project).count()
    relate(project, actor, "1002", "below", "1001")
    project.refresh_from_db()
    assert (Revision.objects.filter(project=project).count(), project.revision) == (revisions, revisions)


def test_a_duplicate_posted_again_through_the_api_answers_200_with_the_same_id(api, project, actor):
    add_contexts(project, actor, ["1001", "1002"])
    body = {"subject": "1001", "type": "above", "object": "1002"}
    first = api.post(url("VML24", "relationships"), body, format="json")
    again = api.post(url("VML24", "relationships"), body, format="json")
    assert (first.status_code, again.status_code) == (201, 200)
    assert again.json() == first.json()
    assert again["X-Record-Revision"] == first["X-Record-Revision"]


def test_a_duplicate_with_another_certainty_is_refused(project, actor):
    add_contexts(project, actor, ["1001", "1002"])
    rel = relate(project, actor, "1001", "above", "1002")
    err = _refusal(project, actor, "1001", "above", "1002", certainty="uncertain")
    assert (err.code, err.field, err.status, err.details["existing_id"]) == ("duplicate-differs", "certainty", 409, rel.id)


def test_an_equality_posted_the_other_way_round_is_a_duplicate(project, actor):
    add_contexts(project, actor, ["1001", "1002"])
    rel = relate(project, actor, "1001", "same_as", "1002")
    assert relate(project, actor, "1002", "same_as", "1001").id == rel.id


def test_the_inverse_of_a_recorded_relationship_is_refused(project, actor):
    add_contexts(project, actor, ["1001", "1002"])
    rel = relate(project, actor, "1001", "above", "1002")
    err = _refusal(project, actor, "1002", "above", "1001")
    assert (err.code, err.field, err.status) == ("inverse-recorded", "type", 409)
    assert err.details["existing"] == {"id": rel.id, "type": "above", "later": "1001", "earlier": "1002"}


def test_an_inverse_of_another_ordered_type_is_refused(project, actor):
    add_contexts(project, actor, ["1001", "1002"])
    relate(project, actor, "1001", "cuts", "1002")
    err = _refusal(project, actor, "1002", "above", "1001")
    assert err.code == "inverse-recorded"


def test_a_relationship_closing_a_cycle_is_refused_with_the_exact_path(project, actor):
    add_contexts(project, actor, ["A", "B", "C"])
    relate(project, actor, "A", "above", "B")
    relate(project, actor, "B", "cuts", "C")
    err = _refusal(project, actor, "C", "fills", "A")
    assert (err.code, err.field, err.status) == ("cycle", "type", 409)
    assert _path(err) == [("C", "fills", "A"), ("A", "above", "B"), ("B", "cuts", "C")]


def test_a_cycle_names_the_recorded_relationships_and_marks_the_proposed_one(project, actor):
    add_contexts(project, actor, ["A", "B", "C"])
    ab = relate(project, actor, "A", "above", "B")
    bc = relate(project, actor, "B", "above", "C")
    steps = _refusal(project, actor, "C", "above", "A").details["cycle"]
    assert [(s["id"], s["proposed"]) for s in steps] == [(None, True), (ab.id, False), (bc.id, False)]
    assert [s["relationship"] for s in steps] == ["C above A", "A above B", "B above C"]
    assert _closed(steps)


def test_a_cycle_posted_through_the_api_answers_409_with_the_path(api, project, actor):
    add_contexts(project, actor, ["A", "B", "C"])
    relate(project, actor, "A", "above", "B")
    relate(project, actor, "B", "above", "C")
    response = api.post(url("VML24", "relationships"), {"subject": "A", "type": "below", "object": "C"}, format="json")
    error = assert_error_body(response, 409, "cycle")
    assert error["field"] == "type"
    assert [(s["from"], s["to"]) for s in error["cycle"]] == [("C", "A"), ("A", "B"), ("B", "C")]
    assert _closed(error["cycle"])


def test_merging_equal_contexts_exposes_a_cycle_with_the_exact_path(api, project, actor):
    add_contexts(project, actor, ["A", "B", "C"])
    relate(project, actor, "A", "same_as", "B")
    relate(project, actor, "B", "above", "C")
    response = api.post(url("VML24", "relationships"), {"subject": "C", "type": "above", "object": "A"}, format="json")
    error = assert_error_body(response, 409, "cycle")
    assert [(s["from"], s["type"], s["to"], s["proposed"]) for s in error["cycle"]] == [
        ("C", "above", "A", True), ("A", "same_as", "B", False), ("B", "above", "C", False)
    ]
    assert _closed(error["cycle"])


def test_a_certain_same_as_between_ordered_contexts_is_refused(project, actor):
    add_contexts(project, actor, ["A", "B"])
    relate(project, actor, "A", "above", "B")
    err = _refusal(project, actor, "A", "same_as", "B")
    assert (err.code, err.field, err.status) == ("equality-contradicts-order", "type", 409)
    assert _path(err) == [("B", "same_as", "A"), ("A", "above", "B")]
    assert _closed(err.details["cycle"])


def test_a_certain_bonded_with_between_indirectly_ordered_contexts_is_refused(project, actor):
    add_contexts(project, actor, ["A", "B", "C"])
    relate(project, actor, "A", "above", "B")
    relate(project, actor, "B", "abuts", "C")
    err = _refusal(project, actor, "C", "bonded_with", "A")
    assert err.code == "equality-contradicts-order"
    assert _path(err) == [("C", "bonded_with", "A"), ("A", "above", "B"), ("B", "abuts", "C")]


def test_an_uncertain_same_as_between_ordered_contexts_is_accepted(project, actor):
    add_contexts(project, actor, ["A", "B"])
    relate(project, actor, "A", "above", "B")
    rel = relate(project, actor, "A", "same_as", "B", certainty="uncertain")
    assert (rel.type, rel.certainty) == ("same_as", "uncertain")


def test_an_uncertain_same_as_does_not_merge_its_contexts(project, actor):
    add_contexts(project, actor, ["A", "B", "C"])
    relate(project, actor, "A", "same_as", "B", certainty="uncertain")
    relate(project, actor, "B", "above", "C")
    assert relate(project, actor, "C", "above", "A").type == "above"


def test_contemporary_with_is_accepted_between_ordered_contexts(project, actor):
    add_contexts(project, actor, ["A", "B"])
    relate(project, actor, "A", "above", "B")
    assert relate(project, actor, "A", "contemporary_with", "B").type == "contemporary_with"


def test_contemporary_with_never_merges_contexts_for_the_cycle_check(project, actor):
    add_contexts(project, actor, ["A", "B", "C"])
    relate(project, actor, "A", "contemporary_with", "B")
    relate(project, actor, "B", "above", "C")
    assert relate(project, actor, "C", "above", "A").type == "above"


def test_an_uncertain_ordered_relationship_still_counts_for_the_cycle_check(project, actor):
    add_contexts(project, actor, ["A", "B", "C"])
    relate(project, actor, "A", "above", "B", certainty="uncertain")
    relate(project, actor, "B", "above", "C")
    assert _refusal(project, actor, "C", "above", "A").code == "cycle"


def test_retracting_a_relationship_lets_the_opposite_order_be_recorded(project, actor):
    add_contexts(project, actor, ["A", "B", "C"])
    relate(project, actor, "A", "above", "B")
    bc = relate(project, actor, "B", "above", "C")
    writes.retract_relationship(project, actor, bc.id, reason="misread section")
    assert relate(project, actor, "C", "above", "A").type == "above"


def test_retracting_an_equality_splits_the_merged_contexts_again(project, actor):
    add_contexts(project, actor, ["A", "B", "C"])
    ab = relate(project, actor, "A", "same_as", "B")
    relate(project, actor, "B", "above", "C")
    writes.retract_relationship(project, actor, ab.id, reason="not the same layer")
    assert relate(project, actor, "C", "above", "A").type == "above"


@pytest.mark.parametrize(
    ("wording", "canonical"),
    [("below", "above"), ("cut_by", "cuts"), ("filled_by", "fills"), ("abutted_by", "abuts")],
)
def test_an_inverse_wording_is_stored_as_later_type_earlier(wording, canonical, project, actor):
    ctx = add_contexts(project, actor, ["1002", "1004"])
    rel = relate(project, actor, "1002", wording, "1004")
    stored = Relationship.objects.get(pk=rel.id)
    assert (stored.type, stored.later_id, stored.earlier_id, stored.recorded_as) == (
        canonical, ctx["1004"].id, ctx["1002"].id, wording
    )


def test_an_inverse_wording_is_served_canonically_by_the_api(api, project, actor):
    add_contexts(project, actor, ["1002", "1004"])
    body = api.post(url("VML24", "relationships"), {"subject": "1002", "type": "cut_by", "object": "1004"}, format="json").json()
    assert (body["later"], body["type"], body["earlier"], body["text"]) == ("1004", "cuts", "1002", "1004 cuts 1002")


def test_an_unknown_wording_is_refused(project, actor):
    add_contexts(project, actor, ["1001", "1002"])
    err = _refusal(project, actor, "1001", "sideways_of", "1002")
    assert (err.code, err.field) == ("invalid-choice", "type")


def test_a_refused_relationship_writes_nothing(project, actor):
    add_contexts(project, actor, ["A", "B"])
    relate(project, actor, "A", "above", "B")
    project.refresh_from_db()
    before = (project.revision, Relationship.objects.count())
    _refusal(project, actor, "B", "above", "A")
    project.refresh_from_db()
    assert (project.revision, Relationship.objects.count()) == before
