"""Agreement with networkx on many tiny random graphs and on site-like records.

Reference library: networkx (strongly_connected_components,
is_directed_acyclic_graph, transitive_reduction, descendants).
"""

import random

import networkx as nx

from chronology.engine.checks import check_order, is_acyclic, strongly_connected_components
from chronology.engine.induced import induced_closure, induced_order
from chronology.engine.record_data import ContextData, RelationshipData
from chronology.engine.reduction import reduced_edge_mask
from chronology.engine.synthetic_site import generate_site
from chronology.engine.temporal_graph import compile_order

TYPES = ("above", "cuts", "fills")


def random_record(rng, n, p, dag=True, equalities=0):
    contexts = [ContextData(i, str(i)) for i in range(1, n + 1)]
    rels = []
    for a in range(1, n + 1):
        for b in range(1, n + 1):
            if a != b and (not dag or a < b) and rng.random() < p:
                rels.append(RelationshipData(len(rels) + 1, rng.choice(TYPES), b, a))
    for _ in range(equalities):
        a, b = rng.sample(range(1, n + 1), 2)
        rels.append(RelationshipData(len(rels) + 1, "same_as", a, b))
    rng.shuffle(rels)
    return contexts, rels


def node_digraph(g):
    d = nx.DiGraph()
    d.add_nodes_from(range(g.n_nodes))
    d.add_edges_from(zip(g.edge_earlier, g.edge_later))
    return d


def reduced_pairs(g):
    return {(g.edge_earlier[e], g.edge_later[e]) for e, k in enumerate(reduced_edge_mask(g)) if k}


def test_reduction_equals_networkx_on_random_dags():
    rng = random.Random(20261201)
    for _ in range(1500):
        g = compile_order(*random_record(rng, rng.randint(1, 9), rng.choice((0.2, 0.4, 0.7))))
        assert reduced_pairs(g) == set(nx.transitive_reduction(node_digraph(g)).edges())


def test_components_and_acyclicity_equal_networkx_on_random_digraphs():
    rng = random.Random(7)
    for _ in range(1500):
        g = compile_order(*random_record(rng, rng.randint(1, 8), rng.choice((0.1, 0.2, 0.35)), dag=False))
        d = node_digraph(g)
        ours = sorted(sorted(c) for c in strongly_connected_components(g))
        assert ours == sorted(sorted(c) for c in nx.strongly_connected_components(d))
        assert is_acyclic(g) == nx.is_directed_acyclic_graph(d)
        assert check_order(g).acyclic == is_acyclic(g)


def test_merged_random_records_agree_with_networkx_quotient():
    rng = random.Random(11)
    for _ in range(800):
        contexts, rels = random_record(rng, rng.randint(2, 9), 0.3, equalities=rng.randint(0, 2))
        g = compile_order(contexts, rels)
        # Quotient by networkx.connected_components of the equality graph.
        eq = nx.Graph()
        eq.add_nodes_from(c.id for c in contexts)
        eq.add_edges_from((r.later, r.earlier) for r in rels if r.type == "same_as")
        rep = {c: min(comp) for comp in nx.connected_components(eq) for c in comp}
        q = nx.DiGraph()
        q.add_nodes_from(set(rep.values()))
        loops = False
        for r in rels:
            if r.type in TYPES:
                a, b = rep[r.earlier], rep[r.later]
                loops |= a == b
                if a != b:
                    q.add_edge(a, b)
        assert is_acyclic(g) == (nx.is_directed_acyclic_graph(q) and not loops)
        ours = {(g.node_context_ids(a)[0], g.node_context_ids(b)[0]) for a, b in zip(g.edge_earlier, g.edge_later)}
        assert ours == set(q.edges())


def test_induced_reachability_equals_networkx_on_random_dags():
    rng = random.Random(5)
    for _ in range(600):
        n = rng.randint(2, 10)
        g = compile_order(*random_record(rng, n, 0.3))
        d = node_digraph(g)
        chosen = rng.sample(range(1, n + 1), rng.randint(1, n))
        node = {c: g.node_for_id(c) for c in chosen}
        expected = {(a, b) for a in chosen for b in chosen if node[b] in nx.descendants(d, node[a])}
        closure = {(a, b) for a, b, _ in induced_closure(g, chosen)}
        assert closure == expected
        reference = nx.DiGraph(list(expected))
        reference.add_nodes_from(chosen)
        assert {(a, b) for a, b, _ in induced_order(g, chosen)} == set(nx.transitive_reduction(reference).edges())


def test_site_records_agree_with_networkx():
    for seed in range(3):
        site = generate_site(500, seed=seed, equality_rate=0.03)
        g = compile_order(*site)
        d = node_digraph(g)
        assert is_acyclic(g) and nx.is_directed_acyclic_graph(d)
        assert reduced_pairs(g) == set(nx.transitive_reduction(d).edges())


def test_site_records_with_uncertain_links_have_networkx_components():
    site = generate_site(1500, seed=3, uncertain_rate=0.05)
    g = compile_order(*site)
    d = node_digraph(g)
    ours = sorted(sorted(c) for c in strongly_connected_components(g) if len(c) > 1)
    assert ours == sorted(sorted(c) for c in nx.strongly_connected_components(d) if len(c) > 1)
    assert ours, "the uncertain links are expected to close at least one cycle"
