"""The per-process order kept between writes gives the same answers as a fresh one."""

from __future__ import annotations

import pytest

from projects.record import order_cache, writes
from projects.record.errors import RecordConflict, RecordInvalid
from tests.record.helpers import add_contexts, relate


@pytest.fixture
def committed(django_capture_on_commit_callbacks):
    """Run each write's on-commit hooks, so the order goes back to the registry as in production."""

    def run(fn, *args, **kwargs):
        with django_capture_on_commit_callbacks(execute=True):
            return fn(*args, **kwargs)

    return run


def test_the_order_is_kept_for_the_next_write(project, actor, committed):
    committed(add_contexts, project, actor, ["A", "B"])
    committed(relate, project, actor, "A", "above", "B")
    assert order_cache._registry[project.pk].revision == project.revision


def test_a_kept_order_still_refuses_a_cycle(project, actor, committed):
    committed(add_contexts, project, actor, ["A", "B", "C"])
    committed(relate, project, actor, "A", "above", "B")
    committed(relate, project, actor, "B", "above", "C")
    with pytest.raises(RecordConflict) as info:
        committed(relate, project, actor, "C", "above", "A")
    assert info.value.code == "cycle"


def test_a_kept_order_catches_up_with_a_cascaded_retraction(project, actor, committed):
    ctx = committed(add_contexts, project, actor, ["A", "B", "C"])
    committed(relate, project, actor, "A", "above", "B")
    committed(relate, project, actor, "B", "above", "C")
    committed(writes.retract_context, project, actor, ctx["B"].id, reason="not a layer")
    assert committed(relate, project, actor, "C", "above", "A").type == "above"


def test_a_kept_order_catches_up_with_a_split_equality(project, actor, committed):
    ctx = committed(add_contexts, project, actor, ["A", "B", "C", "D"])
    committed(relate, project, actor, "A", "same_as", "D")
    committed(relate, project, actor, "D", "above", "B")
    committed(relate, project, actor, "B", "above", "C")
    committed(writes.retract_context, project, actor, ctx["D"].id, reason="same as A after all? no")
    assert committed(relate, project, actor, "C", "above", "A").type == "above"


def test_a_refused_write_does_not_leave_its_proposal_in_the_kept_order(project, actor, committed):
    committed(add_contexts, project, actor, ["A", "B", "C"])
    committed(relate, project, actor, "A", "above", "B")
    with pytest.raises(RecordInvalid):
        committed(relate, project, actor, "B", "above", "Z")
    with pytest.raises(RecordConflict):
        committed(relate, project, actor, "B", "above", "A")
    assert committed(relate, project, actor, "B", "above", "C").type == "above"


def test_a_stale_kept_order_is_rebuilt(project, actor, committed):
    committed(add_contexts, project, actor, ["A", "B"])
    committed(relate, project, actor, "A", "above", "B")
    order_cache._registry[project.pk].digest = "not the digest of that revision"
    with pytest.raises(RecordConflict) as info:
        committed(relate, project, actor, "B", "above", "A")
    assert info.value.code == "inverse-recorded"
    with pytest.raises(RecordConflict):
        committed(relate, project, actor, "B", "same_as", "A")
