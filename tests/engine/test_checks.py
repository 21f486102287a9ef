"""Tests of the consistency checks and their explanations."""

import pytest

from chronology.engine.checks import check_order, is_acyclic, strongly_connected_components, topological_order
from chronology.engine.errors import ContradictionError, CycleError
from chronology.engine.record_data import ContextData, RelationshipData
from chronology.engine.temporal_graph import OrderPolicy, compile_order


def ctxs(*ids, area=""):
    return [ContextData(i, str(i), area=area) for i in ids]


def rel(rid, typ, later, earlier, certain=True):
    return RelationshipData(rid, typ, later, earlier, certain)


def codes(report):
    return sorted(i.code for i in report.issues)


def test_consistent_record_is_ok_and_acyclic():
    g = compile_order(ctxs(1, 2, 3), [rel(10, "above", 2, 1), rel(11, "cuts", 3, 2)])
    report = check_order(g)
    assert report.ok and report.acyclic and report.issues == ()


def test_cycle_is_explained_as_ordered_recorded_relationships():
    g = compile_order(ctxs(1, 2, 3), [rel(10, "above", 2, 1), rel(11, "above", 3, 2), rel(12, "cuts", 1, 3)])
    report = check_order(g)
    (issue,) = report.errors
    assert issue.code == "cycle"
    assert sorted(issue.relationships) == [10, 11, 12]
    # Each step's earlier context is the next step's later one, closing the loop.
    path = issue.path
    for a, b in zip(path, path[1:] + path[:1]):
        assert a.earlier == b.later


def test_one_shortest_cycle_is_reported_per_component():
    # Two cycles share context 1: 1<2<1 (length 2) and 1<3<4<1 (length 3).
    rels = [rel(10, "above", 2, 1), rel(11, "above", 1, 2), rel(12, "above", 3, 1), rel(13, "above", 4, 3),
            rel(14, "above", 1, 4)]
    report = check_order(compile_order(ctxs(1, 2, 3, 4), rels))
    (issue,) = report.errors
    assert sorted(issue.relationships) == [10, 11]


def test_equality_merging_exposes_a_cycle():
    # 1 same as 2, 2 above 3, 3 above 1: after merging, {1,2} is both above and below 3.
    g = compile_order(ctxs(1, 2, 3), [rel(10, "same_as", 1, 2), rel(11, "above", 2, 3), rel(12, "above", 3, 1)])
    (issue,) = check_order(g).errors
    assert issue.code == "contradiction"
    assert {s.id for s in issue.path} == {10, 11, 12}
    for a, b in zip(issue.path, issue.path[1:] + issue.path[:1]):
        assert a.earlier == b.later


def test_equality_between_directly_ordered_contexts_is_a_contradiction():
    g = compile_order(ctxs(1, 2), [rel(10, "same_as", 1, 2), rel(11, "above", 2, 1)])
    report = check_order(g)
    (issue,) = report.errors
    assert issue.code == "contradiction"
    assert [s.id for s in issue.path] == [11, 10]
    assert not report.acyclic and not is_acyclic(g)


def test_weak_only_cycle_is_reported_as_implied_equality():
    g = compile_order(ctxs(1, 2), [rel(10, "abuts", 2, 1), rel(11, "abuts", 1, 2)])
    report = check_order(g)
    assert codes(report) == ["implied-equality"]
    assert report.ok and not report.acyclic


def test_cycle_with_one_strict_edge_is_an_error():
    g = compile_order(ctxs(1, 2), [rel(10, "abuts", 2, 1), rel(11, "above", 1, 2)])
    assert codes(check_order(g)) == ["cycle"]


def test_isolated_contexts_are_warned_about():
    g = compile_order(ctxs(1, 2, 3), [rel(10, "above", 2, 1)])
    report = check_order(g)
    assert [(i.code, i.contexts) for i in report.issues] == [("isolated-context", (3,))]


def test_merged_contexts_in_two_areas_are_warned_about():
    contexts = [ContextData(1, "1", area="Area 1"), ContextData(2, "2", area="Area 2"),
                ContextData(3, "3", area="Area 1")]
    g = compile_order(contexts, [rel(10, "same_as", 2, 1), rel(11, "above", 3, 1)])
    (issue,) = check_order(g).warnings
    assert issue.code == "areas-joined-by-equality"
    assert issue.relationships == (10,)


def test_deepest_sequence_is_reported_with_one_example_path():
    rels = [rel(10, "above", 2, 1), rel(11, "above", 3, 2), rel(12, "above", 3, 1), rel(13, "above", 4, 1)]
    report = check_order(compile_order(ctxs(1, 2, 3, 4), rels))
    assert report.longest_path_length == 2
    assert report.longest_path == (1, 2, 3)


def test_deep_sequences_do_not_hit_the_recursion_limit():
    n = 30000
    rels = [rel(i, "above", i + 1, i) for i in range(1, n)] + [rel(n, "above", 1, n)]
    report = check_order(compile_order(ctxs(*range(1, n + 1)), rels))
    (issue,) = report.errors
    assert len(issue.path) == n


def test_topological_order_is_earliest_first_and_refuses_cycles():
    g = compile_order(ctxs(1, 2, 3), [rel(10, "above", 3, 2), rel(11, "above", 2, 1)])
    assert [g.node_context_ids(v)[0] for v in topological_order(g)] == [1, 2, 3]
    cyclic = compile_order(ctxs(1, 2), [rel(10, "above", 2, 1), rel(11, "above", 1, 2)])
    with pytest.raises(CycleError):
        topological_order(cyclic)


def test_components_cover_every_node_once():
    g = compile_order(ctxs(1, 2, 3, 4), [rel(10, "above", 2, 1), rel(11, "above", 1, 2), rel(12, "above", 3, 2)])
    comps = strongly_connected_components(g)
    assert sorted(len(c) for c in comps) == [1, 1, 2]


def test_rejecting_an_uncertain_relationship_removes_its_cycle():
    rels = [rel(10, "above", 2, 1), rel(11, "above", 1, 2, certain=False)]
    assert not check_order(compile_order(ctxs(1, 2), rels)).ok
    assert check_order(compile_order(ctxs(1, 2), rels, OrderPolicy(reject={11}))).ok


def test_errors_can_be_raised_as_typed_exceptions():
    cyclic = check_order(compile_order(ctxs(1, 2), [rel(10, "above", 2, 1), rel(11, "above", 1, 2)]))
    with pytest.raises(CycleError) as err:
        cyclic.raise_for_errors()
    assert err.value.code == "cycle"
    merged = check_order(compile_order(ctxs(1, 2), [rel(10, "same_as", 1, 2), rel(11, "above", 2, 1)]))
    with pytest.raises(ContradictionError):
        merged.raise_for_errors()


def test_report_is_plain_data():
    report = check_order(compile_order(ctxs(1, 2), [rel(10, "above", 2, 1), rel(11, "above", 1, 2)]))
    data = report.as_dict()
    assert data["issues"][0]["code"] == "cycle"
    assert data["issues"][0]["path"][0]["type"] == "above"


def test_weak_only_cycle_can_be_merged_into_one_node():
    from chronology.engine.checks import merge_implied_equalities

    rels = [rel(10, "abuts", 2, 1), rel(11, "abuts", 1, 2), rel(12, "above", 3, 2)]
    merged = merge_implied_equalities(compile_order(ctxs(1, 2, 3), rels))
    assert merged.node_context_ids(merged.node_for_id(2)) == [1, 2]
    assert sorted(merged.implied) == [10, 11]
    assert is_acyclic(merged) and check_order(merged).ok


def test_strict_cycle_cannot_be_merged_away():
    from chronology.engine.checks import merge_implied_equalities

    g = compile_order(ctxs(1, 2), [rel(10, "abuts", 2, 1), rel(11, "above", 1, 2)])
    with pytest.raises(CycleError):
        merge_implied_equalities(g)
