"""Property-based tests of compiling, checking and reducing orders (hypothesis)."""

import networkx as nx
from hypothesis import given, settings
from hypothesis import strategies as st

from chronology.engine.checks import check_order, is_acyclic
from chronology.engine.record_data import ContextData, RelationshipData
from chronology.engine.reduction import implying_path, reduce_order, reduced_edge_mask
from chronology.engine.temporal_graph import compile_order

TYPES = ("above", "cuts", "fills", "abuts", "same_as", "bonded_with")
ORDERED = ("above", "cuts", "fills", "abuts")


@st.composite
def records(draw, dag=False, equalities=True, max_n=8):
    n = draw(st.integers(1, max_n))
    types = TYPES if equalities else ORDERED
    raw = draw(st.lists(st.tuples(st.integers(1, n), st.integers(1, n), st.sampled_from(types)), max_size=3 * n))
    rels = []
    for a, b, typ in raw:
        if a == b:
            continue
        if dag and typ in ORDERED and a < b:
            a, b = b, a  # later context has the larger id, so no cycle
        rels.append(RelationshipData(len(rels) + 1, typ, a, b))
    return [ContextData(i, str(i)) for i in range(1, n + 1)], rels


def closure(edges, nodes):
    d = nx.DiGraph()
    d.add_nodes_from(nodes)
    d.add_edges_from(edges)
    return {(u, v) for u in d for v in nx.descendants(d, u)}


@settings(max_examples=200, deadline=None)
@given(records(dag=True, equalities=False))
def test_reduction_preserves_reachability(record):
    g = compile_order(*record)
    all_edges = list(zip(g.edge_earlier, g.edge_later))
    kept = [edge for edge, k in zip(all_edges, reduced_edge_mask(g)) if k]
    nodes = range(g.n_nodes)
    assert closure(kept, nodes) == closure(all_edges, nodes)


@settings(max_examples=200, deadline=None)
@given(records(dag=True, equalities=False))
def test_no_edge_of_the_reduction_is_implied_by_the_others(record):
    g = compile_order(*record)
    kept = [(a, b) for a, b, k in zip(g.edge_earlier, g.edge_later, reduced_edge_mask(g)) if k]
    for edge in kept:
        others = [e for e in kept if e != edge]
        assert edge not in closure(others, range(g.n_nodes))


@settings(max_examples=150, deadline=None)
@given(records(), st.randoms(use_true_random=False))
def test_merging_does_not_depend_on_input_order(record, rnd):
    contexts, rels = record
    first = compile_order(contexts, rels)
    shuffled_c, shuffled_r = list(contexts), list(rels)
    rnd.shuffle(shuffled_c)
    rnd.shuffle(shuffled_r)
    second = compile_order(shuffled_c, shuffled_r)
    assert first.members == second.members
    assert list(zip(first.edge_earlier, first.edge_later, first.edge_strict)) == list(
        zip(second.edge_earlier, second.edge_later, second.edge_strict))


@settings(max_examples=300, deadline=None)
@given(records())
def test_every_reported_cycle_is_a_real_cycle_of_recorded_relationships(record):
    contexts, rels = record
    by_id = {r.id: r for r in rels}
    report = check_order(compile_order(contexts, rels))
    for issue in report.issues:
        if issue.code not in ("cycle", "contradiction", "implied-equality"):
            continue
        path = issue.path
        assert path
        for step in path:
            r = by_id[step.id]
            assert step.type == r.type
            if r.type in ORDERED:
                assert (step.later, step.earlier) == (r.later, r.earlier)
            else:
                assert {step.later, step.earlier} == {r.later, r.earlier}
        for a, b in zip(path, path[1:] + path[:1]):
            assert a.earlier == b.later
        has_strict = any(by_id[s.id].type in ("above", "cuts", "fills") for s in path)
        assert has_strict == (issue.severity == "error")


@settings(max_examples=200, deadline=None)
@given(records())
def test_errors_are_reported_exactly_when_a_strict_cycle_exists(record):
    g = compile_order(*record)
    report = check_order(g)
    strict = nx.DiGraph()
    strict.add_nodes_from(range(g.n_nodes))
    weak_edges = list(zip(g.edge_earlier, g.edge_later))
    strict.add_edges_from(weak_edges)
    # A strict cycle exists iff a strict self-loop exists, or some strict edge
    # lies inside a strongly connected component (networkx.strongly_connected_components).
    comp = {v: i for i, c in enumerate(nx.strongly_connected_components(strict)) for v in c}
    expected = any(s for _, s, _, _ in g.self_loops) or any(
        s and comp[a] == comp[b] for a, b, s in zip(g.edge_earlier, g.edge_later, g.edge_strict))
    assert (not report.ok) == expected
    assert report.acyclic == is_acyclic(g)


@settings(max_examples=100, deadline=None)
@given(records(dag=True))
def test_each_redundant_relationship_is_implied_by_direct_ones(record):
    g = compile_order(*record)
    if not is_acyclic(g):
        return
    reduction = reduce_order(g)
    direct = {rid for e in reduction.direct_edges for rid in g.edge_relationships[e]}
    for item in reduction.redundant:
        ordered = [s.id for s in implying_path(g, reduction, item) if s.type in ORDERED]
        assert len(ordered) >= 2 and set(ordered) <= direct
