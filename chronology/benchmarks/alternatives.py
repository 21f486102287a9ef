"""Benchmark of the exact analysis of interpretive alternatives.

For each ``k`` a site-like base of ``contexts`` contexts is built and ``k``
undecided equalities are placed on it: some alone anywhere on the site
(usually independent), some in pairs and small clusters between two nearby
neighbourhoods of the order (where equalities cross each other and close
cycles).  :func:`chronology.engine.alternatives.analyse_alternatives` then
answers exactly; the figures reported are its counts and wall time.

The base comes from :func:`chronology.engine.synthetic_site.generate_site`
when that module is available (certain relationships only, certain
identities merged); otherwise from a layered random order of the same size
built here (:func:`layered_base`).
"""

from __future__ import annotations

import random
import time
from collections import deque

from chronology.engine.alternatives import AlternativesProblem, Item, analyse_alternatives

__all__ = ["run", "layered_base", "site_base", "place_equalities"]


def layered_base(n_contexts: int, seed: int = 0, areas: int = 25) -> tuple[int, list, list]:
    """A site-like layered order: ``areas`` trenches of stacked layers.

    Each context lies on one to three contexts of the layer below in its own
    area; a few lie on contexts of a neighbouring area (a deposit spreading
    across a trench edge); about one relation in twenty is weak (abutting).
    Returns ``(n_nodes, strict_edges, weak_edges)``.
    """
    rng = random.Random(seed)
    width = 5
    layers: list[list[list[int]]] = [[] for _ in range(areas)]  # area -> layer -> nodes
    node = 0
    per_area = n_contexts // areas
    for a in range(areas):
        count = per_area + (1 if a < n_contexts % areas else 0)
        while count > 0:
            w = min(count, rng.randint(max(1, width - 2), width + 2))
            layers[a].append(list(range(node, node + w)))
            node += w
            count -= w
    strict: list[tuple[int, int]] = []
    weak: list[tuple[int, int]] = []
    for a in range(areas):
        for d in range(1, len(layers[a])):
            below = layers[a][d - 1]
            for v in layers[a][d]:
                for u in rng.sample(below, min(len(below), rng.randint(1, 3))):
                    (weak if rng.random() < 0.05 else strict).append((u, v))
                if rng.random() < 0.01 and a + 1 < areas and d < len(layers[a + 1]):
                    u = rng.choice(layers[a + 1][d - 1])
                    strict.append((u, v))
    return node, strict, weak


def site_base(n_contexts: int, seed: int = 0):
    """Base order from the shared site generator, or None when it is missing."""
    try:
        from chronology.engine.synthetic_site import generate_site
    except ImportError:
        return None
    from chronology.engine.record_data import IDENTITY_TYPES, STRICT_TYPES, WEAK_TYPES
    from chronology.engine.unionfind import UnionFind

    site = generate_site(n_contexts, seed=seed)
    index = {c.id: i for i, c in enumerate(site.contexts)}
    uf = UnionFind(len(index))
    certain = [r for r in site.relationships if r.certain]
    for r in certain:
        if r.type in IDENTITY_TYPES:
            uf.union(index[r.later], index[r.earlier])
    classes = sorted({uf.find(i) for i in range(len(index))})
    cls = {c: n for n, c in enumerate(classes)}
    strict, weak = set(), set()
    for r in certain:
        u, v = cls[uf.find(index[r.earlier])], cls[uf.find(index[r.later])]
        if u == v:
            continue
        if r.type in STRICT_TYPES:
            strict.add((u, v))
        elif r.type in WEAK_TYPES:
            weak.add((u, v))
    return len(classes), sorted(strict), sorted(weak - strict)


def _near(succ, pred, start: int, steps: int) -> set[int]:
    """Nodes within ``steps`` edges of ``start``, up or down the order."""
    seen = {start}
    frontier = [start]
    for _ in range(steps):
        nxt = []
        for x in frontier:
            for y in succ[x] + pred[x]:
                if y not in seen:
                    seen.add(y)
                    nxt.append(y)
        frontier = nxt
    return seen


def _comparable(succ, x: int, y: int) -> bool:
    for s, t in ((x, y), (y, x)):
        seen = {s}
        queue = deque([s])
        while queue:
            v = queue.popleft()
            if v == t:
                return True
            for w in succ[v]:
                if w not in seen:
                    seen.add(w)
                    queue.append(w)
    return False


def place_equalities(n_nodes: int, edges, k: int, seed: int = 0) -> list[Item]:
    """``k`` undecided equalities between unordered contexts.

    About a fifth stand alone; the rest come in pairs and clusters of three
    to five between two nearby neighbourhoods, where they may cross.  Now
    and then a link is recorded twice, once from each side.
    """
    rng = random.Random(seed)
    succ: list[list[int]] = [[] for _ in range(n_nodes)]
    pred: list[list[int]] = [[] for _ in range(n_nodes)]
    for u, v in edges:
        succ[u].append(v)
        pred[v].append(u)
    sizes: list[int] = []
    left = k
    while left > 0:
        size = rng.choice((1, 2, 2, 3, 4, 5))
        size = min(size, left)
        sizes.append(size)
        left -= size
    items: list[Item] = []
    for size in sizes:
        for _ in range(200):
            p, q = rng.randrange(n_nodes), rng.randrange(n_nodes)
            if p != q and not _comparable(succ, p, q):
                break
        near_p = sorted(_near(succ, pred, p, 3)) if size > 1 else [p]
        near_q = sorted(_near(succ, pred, q, 3)) if size > 1 else [q]
        made = 0
        for _ in range(50 * size):
            if made == size:
                break
            x, y = rng.choice(near_p), rng.choice(near_q)
            if x != y and not _comparable(succ, x, y):
                items.append(Item("equal", x, y, ref=f"VML24-R{len(items) + 1:03d}"))
                made += 1
                if made < size and rng.random() < 0.15:
                    # The same link recorded again from the other side: a
                    # second choice with the same order.
                    items.append(Item("equal", y, x, ref=f"VML24-R{len(items) + 1:03d}"))
                    made += 1
    return items[:k]


def _problem(k: int, contexts: int, seed: int) -> tuple[AlternativesProblem, str]:
    base = site_base(contexts, seed)
    source = "synthetic_site"
    if base is None:
        base = layered_base(contexts, seed)
        source = "layered"
    n, strict, weak = base
    items = place_equalities(n, list(strict) + list(weak), k, seed=seed + k)
    return AlternativesProblem(n, strict, items, weak), source


def run(ks=(10, 15, 20, 25), contexts: int = 5000, seed: int = 1, time_budget: float = 60.0) -> dict:
    """Time the exact analysis for each number ``k`` of undecided equalities.

    Returns ``{"suite": "alternatives", "cases": [...]}`` with, per case,
    ``k``, ``consistent``, ``distinct_orders``, ``exact``, ``seconds`` (wall
    time of :func:`analyse_alternatives`, base sweep included).
    """
    cases = []
    for k in ks:
        problem, _ = _problem(int(k), int(contexts), seed)
        t0 = time.perf_counter()
        res = analyse_alternatives(problem, time_budget=time_budget)
        seconds = time.perf_counter() - t0
        cases.append({
            "k": len(problem.items),
            "consistent": res.consistent_count,
            "distinct_orders": res.distinct_orders,
            "exact": res.exact,
            "seconds": round(seconds, 4),
        })
    return {"suite": "alternatives", "cases": cases}


if __name__ == "__main__":  # pragma: no cover
    import json

    print(json.dumps(run(), indent=2))
