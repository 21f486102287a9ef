"""Bulk additions: the same record as one-at-a-time additions, and the same refusals, with nothing written."""

from __future__ import annotations

import pytest

from projects.models import ChangeLogEntry, Context, Project, RecordState
from projects.record import bulk, writes
from projects.record.changes import record_change
from projects.record.errors import RecordConflict

CONTEXTS = [{"label": "1001", "kind": "deposit", "area": "A"}, {"label": "1002", "kind": "cut", "area": "A"},
            {"label": "1003", "kind": "fill", "area": "A", "description": "dark silt"}]
RELATIONSHIPS = [{"subject": "1002", "type": "cuts", "object": "1001"},
                 {"subject": "1002", "type": "filled_by", "object": "1003", "certainty": "uncertain", "note": "edge"}]


def _record(project) -> tuple[list, list]:
    entries = list(ChangeLogEntry.objects.filter(project=project).order_by("id").values_list("action", "object_repr"))
    states = [{k: v for k, v in d.items() if not k.endswith("id")}
              for d in RecordState.objects.filter(project=project).order_by("id").values_list("data", flat=True)]
    return entries, states


@pytest.mark.django_db
def test_bulk_additions_write_the_same_log_and_states_as_one_at_a_time(project, other_project, actor):
    with record_change(project, actor) as changes:
        for fields in CONTEXTS:
            writes._add_context(changes, fields, None)
        for data in RELATIONSHIPS:
            writes._add_relationship(changes, data)
    with record_change(other_project, actor) as changes:
        bulk.add_contexts(changes, [(fields, None) for fields in CONTEXTS])
        bulk.add_relationships(changes, RELATIONSHIPS)
    assert _record(other_project) == _record(project)


@pytest.mark.django_db
def test_a_set_that_closes_a_cycle_is_refused_with_the_cycle_and_nothing_is_written(project, actor):
    with pytest.raises(RecordConflict) as refused:
        with record_change(project, actor) as changes:
            bulk.add_contexts(changes, [(fields, None) for fields in CONTEXTS])
            bulk.add_relationships(changes, [*RELATIONSHIPS, {"subject": "1001", "type": "above", "object": "1003"}])
    assert refused.value.code == "cycle" and refused.value.details["index"] == 2
    assert [step["from"] for step in refused.value.details["cycle"]][0] == "1001"
    assert not Context.objects.filter(project=project).exists()
    assert Project.objects.get(pk=project.pk).revision == 0


@pytest.mark.django_db
def test_a_label_already_in_the_record_is_a_conflict(project, actor):
    writes.add_context(project, actor, label="1001", kind="deposit")
    with pytest.raises(RecordConflict, match="1001 already exists"):
        with record_change(project, actor) as changes:
            bulk.add_contexts(changes, [(fields, None) for fields in CONTEXTS])
    assert Context.objects.filter(project=project).count() == 1


@pytest.mark.django_db
def test_two_ordered_types_the_same_way_are_allowed_but_an_inverse_is_not(project, actor):
    with record_change(project, actor) as changes:
        bulk.add_contexts(changes, [(fields, None) for fields in CONTEXTS])
        bulk.add_relationships(changes, [{"subject": "1002", "type": "cuts", "object": "1001"},
                                         {"subject": "1002", "type": "above", "object": "1001"}])
    with pytest.raises(RecordConflict) as refused:
        with record_change(project, actor) as changes:
            bulk.add_relationships(changes, [{"subject": "1001", "type": "above", "object": "1002"}])
    assert refused.value.code == "inverse-recorded"
