"""Retracting a context retracts its evidence in the same revision."""

from chronology.evidence.models import Sample, Terminus
from chronology.evidence.writes import add_sample, add_terminus
from projects.models import ChangeLogEntry
from projects.record import writes
from tests.record.helpers import add_contexts


def test_retracting_a_context_retracts_its_samples_and_termini_in_the_same_revision(project, actor):
    ctx = add_contexts(project, actor, ["3031"])["3031"]
    sample = add_sample(project, actor, context="3031", code="S1", material="charcoal").object
    terminus = add_terminus(project, actor, context="3031", kind="post_quem", year=260, find="coin").object
    result = writes.retract_context(project, actor, ctx.id, reason="number issued twice")
    assert Sample.objects.get(pk=sample.pk).retracted_revision == result.revision
    assert Terminus.objects.get(pk=terminus.pk).retracted_revision == result.revision
    actions = set(ChangeLogEntry.objects.filter(project=project, revision=result.revision).values_list("action", flat=True))
    assert actions == {"record.context.retracted", "record.sample.retracted", "record.terminus.retracted"}
