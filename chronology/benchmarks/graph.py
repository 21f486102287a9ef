"""Benchmark of the temporal-order engine against networkx.

For each size a site-like record is generated (``generate_site``), then timed:
ours (compile with equality merging, check with cycle explanation, transitive
reduction with explanations) against the same steps in networkx (equality
merging by connected components and a quotient graph, strongly connected
components, DAG test, ``networkx.transitive_reduction``).  networkx runs in a
child process stopped at a time limit, in which case the limit is reported as a
lower bound.  Peak memory of ours is measured with ``tracemalloc`` in a second,
separate pass (tracing slows the code down, so it is not timed).
"""

from __future__ import annotations

import multiprocessing as mp
import time
import tracemalloc

__all__ = ["run"]


def _ours(site):
    from chronology.engine.checks import check_order
    from chronology.engine.reduction import reduce_order
    from chronology.engine.temporal_graph import compile_order

    graph = compile_order(site.contexts, site.relationships)
    report = check_order(graph)
    reduction = reduce_order(graph) if report.acyclic else None
    return graph, report, reduction


def _networkx_steps(n_contexts: int, seed: int, queue) -> None:
    import networkx as nx

    from chronology.engine.synthetic_site import generate_site

    site = generate_site(n_contexts, seed=seed)
    start = time.perf_counter()
    eq = nx.Graph()
    eq.add_nodes_from(c.id for c in site.contexts)
    eq.add_edges_from((r.later, r.earlier) for r in site.relationships
                      if r.certain and r.type in ("same_as", "bonded_with"))
    rep = {}
    for comp in nx.connected_components(eq):
        m = min(comp)
        for c in comp:
            rep[c] = m
    g = nx.DiGraph()
    g.add_nodes_from(set(rep.values()))
    g.add_edges_from((rep[r.earlier], rep[r.later]) for r in site.relationships
                     if r.type in ("above", "cuts", "fills", "abuts") and rep[r.earlier] != rep[r.later])
    sccs = [c for c in nx.strongly_connected_components(g) if len(c) > 1]
    acyclic = nx.is_directed_acyclic_graph(g)
    reduced = nx.transitive_reduction(g) if acyclic else None
    queue.put((time.perf_counter() - start, len(sccs), None if reduced is None else reduced.number_of_edges()))


def _time_networkx(n_contexts: int, seed: int, limit: float) -> tuple[float, bool]:
    ctx = mp.get_context("spawn")
    queue = ctx.Queue()
    proc = ctx.Process(target=_networkx_steps, args=(n_contexts, seed, queue), daemon=True)
    proc.start()
    # Generation in the child is not timed; allow it on top of the limit.
    deadline = time.monotonic() + limit + 30.0 + n_contexts / 20000.0
    result = None
    while time.monotonic() < deadline:
        try:
            result = queue.get(timeout=0.5)
            break
        except Exception:  # queue.Empty
            if not proc.is_alive():
                break
    if proc.is_alive():
        proc.terminate()
    proc.join(5)
    if result is None or result[0] > limit:
        return float(limit), True
    return float(result[0]), False


def run(sizes=(1000, 10000, 50000, 100000), networkx_time_limit: float = 120.0, seed: int = 0,
        repeats: int = 1) -> dict:
    """Time compile + check + reduce, ours against networkx.

    Returns ``{"suite": "graph", "cases": [...]}`` with, per size, the numbers
    of contexts and relationships, our best time of ``repeats`` runs, the
    networkx time (or the limit, with ``networkx_lower_bound`` True), the speed
    ratio and our peak traced memory in MB.  ``cpu_seconds`` (process time of
    ours) is given beside the wall-clock ``seconds`` because the two differ on a
    shared machine.
    """
    from chronology.engine.synthetic_site import generate_site

    cases = []
    for n in sizes:
        site = generate_site(int(n), seed=seed)
        best = best_cpu = float("inf")
        for _ in range(max(1, int(repeats))):
            start, start_cpu = time.perf_counter(), time.process_time()
            graph, report, reduction = _ours(site)
            best = min(best, time.perf_counter() - start)
            best_cpu = min(best_cpu, time.process_time() - start_cpu)
            del graph, report, reduction
        tracemalloc.start()
        _ours(site)
        _current, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        nx_seconds, lower = _time_networkx(int(n), seed, float(networkx_time_limit))
        cases.append({
            "contexts": len(site.contexts),
            "relationships": len(site.relationships),
            "seconds": round(best, 4),
            "cpu_seconds": round(best_cpu, 4),
            "networkx_seconds": round(nx_seconds, 4),
            "networkx_lower_bound": lower,
            "speedup": round(nx_seconds / best, 1) if best > 0 else None,
            "peak_mb": round(peak / 2**20, 1),
        })
    return {"suite": "graph", "cases": cases}


if __name__ == "__main__":  # pragma: no cover
    import json
    import sys

    sizes = tuple(int(a) for a in sys.argv[1:]) or (1000, 10000, 50000, 100000)
    print(json.dumps(run(sizes=sizes), indent=2))
