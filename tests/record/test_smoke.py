import pytest

from projects.record.errors import RecordConflict
from tests.record.helpers import add_contexts, relate


def test_equality_merge_exposes_a_cycle(project, actor):
    add_contexts(project, actor, ["A", "B", "C"])
    relate(project, actor, "A", "same_as", "B")
    relate(project, actor, "B", "above", "C")
    with pytest.raises(RecordConflict) as info:
        relate(project, actor, "C", "above", "A")
    assert info.value.code == "cycle"
    steps = info.value.details["cycle"]
    assert [(s["from"], s["type"], s["to"]) for s in steps] == [
        ("C", "above", "A"), ("A", "same_as", "B"), ("B", "above", "C")
    ]
