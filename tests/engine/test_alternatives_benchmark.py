"""The alternatives benchmark returns the structure the bench command expects."""

from __future__ import annotations

import networkx as nx

from chronology.benchmarks.alternatives import layered_base, place_equalities, run


def test_benchmark_reports_one_exact_case_per_k():
    out = run(ks=(4, 6), contexts=300)
    assert out["suite"] == "alternatives"
    assert [c["k"] for c in out["cases"]] == [4, 6]
    for case in out["cases"]:
        assert set(case) == {"k", "consistent", "distinct_orders", "exact", "seconds"}
        assert case["exact"] is True
        assert 1 <= case["distinct_orders"] <= case["consistent"] <= 2 ** case["k"]


def test_placed_equalities_join_unordered_contexts_only():
    n, strict, weak = layered_base(400, seed=2, areas=4)
    items = place_equalities(n, strict + weak, 12, seed=3)
    assert len(items) == 12
    g = nx.DiGraph(strict + weak)
    g.add_nodes_from(range(n))
    for it in items:
        assert it.kind == "equal" and it.a != it.b
        # reference: networkx.has_path
        assert not nx.has_path(g, it.a, it.b) and not nx.has_path(g, it.b, it.a)
