"""Benchmark of the stratigraphic diagram layout against Graphviz ``dot``.

For each size a site-like record is generated
(:func:`chronology.engine.synthetic_site.generate_site`), its certain
equalities merged, its order reduced (``networkx.transitive_reduction``),
and laid out by :func:`chronology.engine.diagram.layout_diagram`.  When the
``dot`` program is on the PATH the same graph is laid out by it too
(``dot -Tplain``, later at the top); the left-to-right order of its ranks,
with the points where its long edges pass each rank, is counted with *our*
crossing counter so both drawings are measured the same way.
"""

from __future__ import annotations

import shutil
import subprocess
import time

import networkx as nx
import scipy.optimize  # noqa: F401  (imported here so a one-off import is not timed)

from chronology.engine.diagram import DiagramEdge, DiagramNode, count_crossings, layout_diagram
from chronology.engine.record_data import EQUALITY_TYPES, IDENTITY_TYPES
from chronology.engine.synthetic_site import generate_site

__all__ = ["run", "site_graph", "random_graph", "dot_crossings"]

_KINDS = ("deposit", "deposit", "fill", "cut", "masonry", "timber", "skeleton", "other")


def random_graph(
    n_contexts: int, seed: int = 0, extra: float = 1.6
) -> tuple[list[DiagramNode], list[DiagramEdge]]:
    """A denser random layered order: each unit lies on up to a few below it.

    Units get a depth and a horizontal place; each is related to
    ``extra`` (on average) earlier units nearby, and the result is reduced
    with ``networkx.transitive_reduction``.  Harder to draw than a site.
    """
    import random

    rng = random.Random(seed)
    depth_count = max(2, int(2 * n_contexts ** 0.5))
    place = [(rng.randrange(depth_count), rng.random()) for _ in range(n_contexts)]
    graph = nx.DiGraph()
    graph.add_nodes_from(range(n_contexts))
    by_depth = sorted(range(n_contexts), key=lambda v: place[v][0])
    for v in by_depth:
        d, x = place[v]
        below = [u for u in range(n_contexts) if place[u][0] < d and abs(place[u][1] - x) < 0.15]
        for u in rng.sample(below, min(len(below), 1 + int(rng.random() * 2 * extra))):
            graph.add_edge(u, v)
    reduced = nx.transitive_reduction(graph)
    nodes = [DiagramNode(v, str(2001 + v), rng.choice(_KINDS), f"Area {1 + int(place[v][1] * 3)}")
             for v in range(n_contexts)]
    edges = [DiagramEdge(a, b, rng.random() > 0.05) for a, b in sorted(reduced.edges)]
    return nodes, edges


def site_graph(n_contexts: int, seed: int = 0) -> tuple[list[DiagramNode], list[DiagramEdge]]:
    """Diagram input from a generated site: merged classes, reduced edges."""
    site = generate_site(n_contexts, seed=seed)
    parent = {c.id: c.id for c in site.contexts}

    def find(a: int) -> int:
        while parent[a] != a:
            parent[a] = parent[parent[a]]
            a = parent[a]
        return a

    for r in site.relationships:
        if r.certain and r.type in IDENTITY_TYPES:
            ra, rb = find(r.later), find(r.earlier)
            if ra != rb:
                parent[max(ra, rb)] = min(ra, rb)
    members: dict[int, list[str]] = {}
    by_id = {c.id: c for c in site.contexts}
    for c in site.contexts:
        members.setdefault(find(c.id), []).append(c.label)
    graph = nx.DiGraph()
    graph.add_nodes_from(members)
    strict: dict[tuple[int, int], bool] = {}
    for r in site.relationships:
        if not r.certain or r.type in EQUALITY_TYPES:
            continue
        a, b = find(r.earlier), find(r.later)
        if a != b:
            graph.add_edge(a, b)
            strict[(a, b)] = strict.get((a, b), False) or r.is_strict
    reduced = nx.transitive_reduction(graph)
    nodes = [
        DiagramNode(root, by_id[root].label, by_id[root].kind, by_id[root].area,
                    members=tuple(labels) if len(labels) > 1 else ())
        for root, labels in sorted(members.items())
    ]
    edges = [DiagramEdge(a, b, strict[(a, b)]) for a, b in sorted(reduced.edges)]
    return nodes, edges


def dot_crossings(nodes, edges, dot: str = "dot", timeout: float = 300.0) -> int | None:
    """Crossings of dot's drawing, counted with our counter (None without dot)."""
    if shutil.which(dot) is None:
        return None
    lines = ["digraph g {", "rankdir=BT;", "node [shape=box,width=0.6,height=0.3,fixedsize=true];"]
    lines += [f"n{n.id};" for n in nodes]
    lines += [f"n{e.earlier_id} -> n{e.later_id};" for e in edges]
    lines.append("}")
    result = subprocess.run([dot, "-Tplain"], input="\n".join(lines), capture_output=True,
                            text=True, timeout=timeout, check=True)
    position, splines = {}, []
    for line in result.stdout.splitlines():
        f = line.split()
        if f and f[0] == "node":
            position[f[1]] = (float(f[2]), float(f[3]))
        elif f and f[0] == "edge":
            k = int(f[3])
            pts = [(float(f[4 + 2 * i]), float(f[5 + 2 * i])) for i in range(k)]
            splines.append((f[1], f[2], pts))
    return _count_on_ranks(position, splines)


def _count_on_ranks(position, splines) -> int:
    rank_ys = sorted({round(y, 3) for _, y in position.values()})
    rank_of = {y: i for i, y in enumerate(rank_ys)}
    at_rank: list[list[tuple[float, object]]] = [[] for _ in rank_ys]
    for name, (x, y) in position.items():
        at_rank[rank_of[round(y, 3)]].append((x, name))
    segments = []
    for k, (tail, head, pts) in enumerate(splines):
        lo, hi = rank_of[round(position[tail][1], 3)], rank_of[round(position[head][1], 3)]
        if lo > hi:
            lo, hi, tail, head = hi, lo, head, tail
        chain = [tail]
        curve = _sample_bezier(pts)
        for r in range(lo + 1, hi):
            vertex = ("pass", k, r)
            at_rank[r].append((_x_at(curve, rank_ys[r], position[tail][0]), vertex))
            chain.append(vertex)
        chain.append(head)
        segments.extend(zip(chain, chain[1:]))
    layers = [[v for _, v in sorted(row, key=lambda p: p[0])] for row in at_rank]
    return count_crossings(layers, segments)


def _sample_bezier(pts, steps: int = 12):
    """Points along dot's piecewise cubic Bézier spline."""
    out = [pts[0]]
    for i in range(0, len(pts) - 3, 3):
        p0, p1, p2, p3 = pts[i : i + 4]
        for s in range(1, steps + 1):
            t = s / steps
            u = 1 - t
            out.append(tuple(u**3 * a + 3 * u * u * t * b + 3 * u * t * t * c + t**3 * d
                             for a, b, c, d in zip(p0, p1, p2, p3)))
    return out


def _x_at(curve, y: float, default: float) -> float:
    for (x1, y1), (x2, y2) in zip(curve, curve[1:]):
        if (y1 - y) * (y2 - y) <= 0 and y1 != y2:
            return x1 + (y - y1) / (y2 - y1) * (x2 - x1)
    return default


def run(sizes=(50, 200, 500), seed: int = 7, generator: str = "site") -> dict:
    """Lay out generated records of each size; compare with dot when present.

    ``generator`` is ``"site"`` (:func:`site_graph`, realistic and close to
    a tree once reduced) or ``"random"`` (:func:`random_graph`, denser).

    Returns ``{"suite": "diagram", "cases": [{"contexts", "edges",
    "crossings", "dot_crossings", "ratio", "seconds"}]}``; ``ratio`` is our
    crossings over dot's (None without dot, or when dot has none).
    """
    cases = []
    for n in sizes:
        make = random_graph if generator == "random" else site_graph
        nodes, edges = make(int(n), seed=seed)
        start = time.perf_counter()
        layout = layout_diagram(nodes, edges)
        seconds = time.perf_counter() - start
        theirs = dot_crossings(nodes, edges)
        ratio = None if not theirs else layout.crossings / theirs
        cases.append({
            "contexts": len(nodes),
            "edges": len(edges),
            "crossings": layout.crossings,
            "dot_crossings": theirs,
            "ratio": ratio,
            "seconds": round(seconds, 4),
        })
    return {"suite": "diagram", "cases": cases}


if __name__ == "__main__":  # pragma: no cover
    import json

    print(json.dumps(run(), indent=2))
