"""Contexts through the write path: adding, editing, retracting."""

from __future__ import annotations

import pytest

from projects.models import Context, RecordState
from projects.record import writes
from projects.record.errors import RecordConflict, RecordInvalid, RecordNotFound
from tests.record.helpers import add_contexts, relate


def test_a_partial_edit_cannot_put_the_base_above_the_stored_top(project, actor):
    ctx = writes.add_context(project, actor, label="1001", kind="deposit", top_level=12.5, base_level=12.0).object
    with pytest.raises(RecordInvalid) as info:
        writes.edit_context(project, actor, ctx.id, {"base_level": 13.0})
    assert (info.value.code, info.value.field) == ("levels-inverted", "base_level")


def test_a_partial_edit_cannot_put_the_top_below_the_stored_base(project, actor):
    ctx = writes.add_context(project, actor, label="1001", kind="deposit", top_level=12.5, base_level=12.0).object
    with pytest.raises(RecordInvalid) as info:
        writes.edit_context(project, actor, ctx.id, {"top_level": 11.0})
    assert info.value.code == "levels-inverted"


def test_an_edit_that_changes_nothing_makes_no_revision(project, actor):
    ctx = add_contexts(project, actor, ["1001"])["1001"]
    writes.edit_context(project, actor, ctx.id, {"area": "A"})
    project.refresh_from_db()
    assert project.revision == 1


def test_an_edit_closes_the_old_version_and_opens_a_new_one(project, actor):
    ctx = add_contexts(project, actor, ["1001"])["1001"]
    writes.edit_context(project, actor, ctx.id, {"description": "charcoal-rich"})
    versions = list(RecordState.objects.filter(kind="context", object_id=ctx.id).values_list("valid_from", "valid_to"))
    assert versions == [(1, 2), (2, None)]


def test_a_label_in_use_cannot_be_taken_by_an_edit(project, actor):
    ctx = add_contexts(project, actor, ["1001", "1002"])
    with pytest.raises(RecordConflict) as info:
        writes.edit_context(project, actor, ctx["1002"].id, {"label": "1001"})
    assert (info.value.code, info.value.field) == ("duplicate-label", "label")


def test_a_retracted_label_can_be_used_again(project, actor):
    ctx = add_contexts(project, actor, ["1001"])["1001"]
    writes.retract_context(project, actor, ctx.id, reason="number issued twice")
    again = writes.add_context(project, actor, label="1001", kind="cut")
    assert again.created and again.object.id != ctx.id


def test_a_retracted_context_cannot_be_edited(project, actor):
    ctx = add_contexts(project, actor, ["1001"])["1001"]
    writes.retract_context(project, actor, ctx.id, reason="void")
    with pytest.raises(RecordConflict) as info:
        writes.edit_context(project, actor, ctx.id, {"description": "x"})
    assert info.value.code == "retracted"


def test_retracting_a_context_twice_makes_one_revision(project, actor):
    ctx = add_contexts(project, actor, ["1001"])["1001"]
    writes.retract_context(project, actor, ctx.id, reason="void")
    writes.retract_context(project, actor, ctx.id, reason="void again")
    project.refresh_from_db()
    assert project.revision == 2


def test_retracting_a_context_retracts_each_of_its_relationships(project, actor):
    ctx = add_contexts(project, actor, ["1001", "1002", "1003"])
    relate(project, actor, "1001", "above", "1002")
    relate(project, actor, "1002", "above", "1003")
    kept = relate(project, actor, "1001", "above", "1003")
    writes.retract_context(project, actor, ctx["1002"].id, reason="spoil")
    project.refresh_from_db()
    retracted = Context.objects.get(pk=ctx["1002"].id).retracted_revision
    from projects.models import Relationship

    assert sorted(Relationship.objects.filter(retracted_revision=retracted).values_list("earlier__label", flat=True)) == [
        "1002", "1003"
    ]
    assert Relationship.objects.get(pk=kept.id).is_active


def test_a_retraction_needs_a_reason(project, actor):
    ctx = add_contexts(project, actor, ["1001"])["1001"]
    with pytest.raises(RecordInvalid) as info:
        writes.retract_context(project, actor, ctx.id, reason="  ")
    assert (info.value.code, info.value.field) == ("required", "reason")


def test_a_context_of_another_project_cannot_be_retracted_through_ours(project, other_project, actor, outsider):
    from projects.record.changes import Actor

    theirs = add_contexts(other_project, Actor(user=outsider), ["Q1"])["Q1"]
    with pytest.raises(RecordNotFound):
        writes.retract_context(project, actor, theirs.id, reason="not ours")


def test_a_batch_label_given_as_a_number_is_kept_as_text(project, actor):
    assert writes.add_context(project, actor, label=1001, kind="deposit").object.label == "1001"
