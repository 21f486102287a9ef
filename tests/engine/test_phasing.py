"""Tests of phase assignments against the stratigraphic order (small hand-built cases)."""

import pytest

from chronology.engine.errors import OrderError
from chronology.engine.phasing import check_phasing, phase_closure
from chronology.engine.record_data import ContextData, RelationshipData
from chronology.engine.temporal_graph import compile_order


def ctxs(*ids):
    return [ContextData(i, str(i)) for i in ids]


def rel(rid, typ, later, earlier):
    return RelationshipData(rid, typ, later, earlier)


def chain():
    # 1001 < 1002 < 1003 < 1004 (1004 on top).
    rels = [rel(1, "above", 1002, 1001), rel(2, "above", 1003, 1002), rel(3, "above", 1004, 1003)]
    return compile_order(ctxs(1001, 1002, 1003, 1004), rels)


def test_phasing_that_follows_the_stratigraphy_is_ok():
    report = check_phasing(chain(), ["P1", "P2"], {1001: "P1", 1002: "P1", 1003: "P2", 1004: "P2"})
    assert report.ok and report.issues == ()


def test_context_below_a_context_of_an_earlier_phase_is_reported_with_its_path():
    # 1002 is in Phase 2 but lies below 1004 in Phase 1 (through unphased 1003).
    report = check_phasing(chain(), ["Phase 1", "Phase 2"], {1001: "Phase 1", 1002: "Phase 2", 1004: "Phase 1"})
    assert report.contradicting == (1002,)
    issue = next(i for i in report.issues if i.code == "phase-contradiction")
    assert issue.contexts == (1002, 1004)
    assert [s.id for s in issue.path] == [3, 2]
    assert report.unsupported_pairs == (("Phase 1", "Phase 2"),)


def test_equal_contexts_in_ordered_phases_contradict():
    g = compile_order(ctxs(1, 2), [rel(10, "same_as", 2, 1)])
    report = check_phasing(g, ["A", "B"], {1: "A", 2: "B"})
    assert not report.ok
    issue = next(i for i in report.issues if i.code == "phase-contradiction")
    assert [s.id for s in issue.path] == [10]


def test_partial_phase_order_leaves_unordered_phases_free():
    # A before C, B before C; A and B unordered, so 1002 (A) above 1001 (B) is fine.
    report = check_phasing(chain(), [("A", "C"), ("B", "C")], {1001: "B", 1002: "A", 1003: "C", 1004: "C"})
    assert report.ok


def test_phase_order_is_transitive():
    # A < B < C stated as pairs: a C context below an A context contradicts.
    report = check_phasing(chain(), [("A", "B"), ("B", "C")], {1001: "C", 1004: "A"})
    assert report.contradicting == (1001,)
    assert report.unsupported_pairs == (("A", "C"),)


def test_contexts_without_phase_are_warnings():
    report = check_phasing(chain(), ["P1"], {1001: "P1", 1002: "P1"})
    assert report.ok
    assert report.unphased == (1003, 1004)
    assert {i.code for i in report.issues} == {"unphased-context"}


def test_unknown_phase_is_rejected():
    with pytest.raises(OrderError) as err:
        check_phasing(chain(), ["P1"], {1001: "P9"})
    assert err.value.code == "unknown-phase"


def test_cyclic_phase_order_is_rejected():
    with pytest.raises(OrderError) as err:
        phase_closure([("A", "B"), ("B", "A")])
    assert err.value.code == "phase-order-cycle"


def test_phase_list_gives_a_total_order():
    names, after = phase_closure(["A", "B", "C"])
    assert names == ["A", "B", "C"] and after["A"] == {"B", "C"} and after["C"] == set()
