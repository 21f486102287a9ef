"""Benchmark of the temporal-order engine on hard record shapes, against networkx and rustworkx.

Cases
-----
For each shape of :mod:`chronology.engine.synthetic_shapes` (a long sequence
with every context also above the bottom, a huge "same as" class with
redundant relationships, contexts side by side over a common bottom and under
a common top, deep many-area site-like records with pits and walls cutting
through many layers) and each size, one child process generates the record
(not timed) and times ours: compile with equality merging, the full check
with cycle explanations, and the transitive reduction with a witness for
every redundant relationship.  A second, traced pass in the same child gives
the peak of memory allocated by those steps (``tracemalloc``; tracing slows
the code down, so that pass is not timed).

The reference libraries do the same job on the same input, each in its own
child process stopped at a limit on its process time (300 s by default; the
machine may be shared, so wall clock would cut runs short unfairly): equality merging by connected
components and a quotient graph, a DAG test, and the transitive reduction
(``networkx.transitive_reduction``; ``rustworkx.transitive_reduction``).
They give no explanations.  A size whose process time, extrapolated
quadratically from the previous size of the same shape, would be over the
limit is skipped; a skipped or stopped run is reported as ``None`` with the reason.

Incremental
-----------
The write-time check (:class:`chronology.engine.incremental.IncrementalOrder`)
posts a deep site-like record one relationship at a time — check, then insert
— earliest first (as laid down), latest first (as dug: every post runs against
the order made so far) and in random order, each context made when first
named.  Reported per order: p95 and max of one post (wall clock, and process
time beside it because the two differ on a shared machine), and the total.
"""

from __future__ import annotations

import gc
import json
import os
import sys
import importlib.util
import multiprocessing as mp
import queue as queue_module
import random
import time
import tracemalloc

__all__ = ["run", "QUICK", "SHAPE_ORDER", "INCREMENTAL_ORDERS"]

SHAPE_ORDER = ("sequence_over_bottom", "same_as_class", "side_by_side", "deep_site")
INCREMENTAL_ORDERS = ("random", "latest_first", "earliest_first")
IDENTITY = ("same_as", "bonded_with")
ORDERED = ("above", "cuts", "fills", "abuts")

QUICK = {"sizes": (2000, 5000), "incremental_contexts": 2000, "reference_time_limit": 60.0}

#: Extrapolated process time (in multiples of the limit) above which a reference run is skipped.
_SKIP_FACTOR = 1.0


def _record(shape: str, n: int, seed: int):
    from chronology.engine.synthetic_shapes import generate_shape

    return generate_shape(shape, n, seed=seed)


# -- ours ---------------------------------------------------------------------
def _ours(site):
    from chronology.engine.checks import check_order
    from chronology.engine.reduction import reduce_order
    from chronology.engine.temporal_graph import compile_order

    graph = compile_order(site.contexts, site.relationships)
    report = check_order(graph)
    reduction = reduce_order(graph, explain=True) if report.acyclic else None
    return graph, report, reduction


def _ours_child(shape: str, n: int, seed: int, out) -> None:
    site = _record(shape, n, seed)
    _ours(_record(shape, 10, seed))  # imports and first-call costs outside the timing
    gc.collect()
    start, start_cpu = time.perf_counter(), time.process_time()
    graph, report, reduction = _ours(site)
    seconds, cpu = time.perf_counter() - start, time.process_time() - start_cpu
    result = {
        "relationships": len(site.relationships),
        "nodes": graph.n_nodes,
        "edges": graph.n_edges,
        "acyclic": report.acyclic,
        "redundant": len(reduction.redundant) if reduction else None,
        "witnessed": sum(1 for r in reduction.redundant if r.via is not None) if reduction else None,
        "seconds": seconds,
        "cpu_seconds": cpu,
    }
    del graph, report, reduction
    gc.collect()
    tracemalloc.start()
    _ours(site)
    result["peak_mb"] = tracemalloc.get_traced_memory()[1] / 2**20
    tracemalloc.stop()
    out.put(result)


# -- reference libraries ------------------------------------------------------
def _merged_edges(site):
    """Context ids and the certain identity equalities between them, as pairs."""
    return [c.id for c in site.contexts], [
        (r.later, r.earlier) for r in site.relationships if r.certain and r.type in IDENTITY
    ]


def _networkx_child(shape: str, n: int, seed: int, out) -> None:
    import networkx as nx

    site = _record(shape, n, seed)
    start, start_cpu = time.perf_counter(), time.process_time()
    ids, equalities = _merged_edges(site)
    eq = nx.Graph()
    eq.add_nodes_from(ids)
    eq.add_edges_from(equalities)
    rep = {}
    for comp in nx.connected_components(eq):
        m = min(comp)
        for c in comp:
            rep[c] = m
    g = nx.DiGraph()
    g.add_nodes_from(set(rep.values()))
    g.add_edges_from((rep[r.earlier], rep[r.later]) for r in site.relationships
                     if r.type in ORDERED and rep[r.earlier] != rep[r.later])
    edges = nx.transitive_reduction(g).number_of_edges() if nx.is_directed_acyclic_graph(g) else None
    out.put({"seconds": time.perf_counter() - start, "cpu_seconds": time.process_time() - start_cpu,
             "reduced_edges": edges})


def _rustworkx_child(shape: str, n: int, seed: int, out) -> None:
    import rustworkx as rx

    site = _record(shape, n, seed)
    start, start_cpu = time.perf_counter(), time.process_time()
    ids, equalities = _merged_edges(site)
    index = {c: i for i, c in enumerate(ids)}
    eq = rx.PyGraph()
    eq.add_nodes_from(ids)
    eq.add_edges_from_no_data([(index[a], index[b]) for a, b in equalities])
    rep = list(range(len(ids)))
    for comp in rx.connected_components(eq):
        m = min(comp)
        for c in comp:
            rep[c] = m
    g = rx.PyDiGraph()
    g.add_nodes_from(range(len(ids)))
    pairs = {(rep[index[r.earlier]], rep[index[r.later]]) for r in site.relationships if r.type in ORDERED}
    g.add_edges_from_no_data([(a, b) for a, b in pairs if a != b])
    edges = rx.transitive_reduction(g)[0].num_edges() if rx.is_directed_acyclic_graph(g) else None
    out.put({"seconds": time.perf_counter() - start, "cpu_seconds": time.process_time() - start_cpu,
             "reduced_edges": edges})


def _cpu_seconds(pid: int) -> float | None:
    """Process time used so far by a running child (user + system), where /proc tells it."""
    try:
        with open(f"/proc/{pid}/stat") as stat:
            fields = stat.read().rsplit(")", 1)[1].split()
        return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")
    except (OSError, ValueError, IndexError):
        return None


def _in_child(target, args, limit: float | None):
    """Run ``target(*args, queue)`` in a fresh process; its result, or None past ``limit`` seconds.

    The limit is on the child's process time where the system reports it
    (wall clock otherwise), so a run is not cut short because the machine is
    shared; generating the record in the child is allowed on top of it.
    """
    ctx = mp.get_context("spawn")
    out = ctx.Queue()
    proc = ctx.Process(target=target, args=(*args, out), daemon=True)
    proc.start()
    allowance = None if limit is None else limit + 5.0 + args[1] / 20000.0
    started = time.monotonic()
    result = None
    while True:
        try:
            result = out.get(timeout=0.5)
            break
        except queue_module.Empty:
            if not proc.is_alive():
                break
        if allowance is not None:
            used = _cpu_seconds(proc.pid)
            if (used if used is not None else time.monotonic() - started) > allowance:
                break
    if proc.is_alive():
        proc.terminate()
    proc.join(10)
    if result is not None and limit is not None and result["cpu_seconds"] > limit:
        return None
    return result


def _reference(name, target, shape, n, seed, limit, history) -> dict:
    """One reference run, or the reason it was not run or did not finish."""
    if importlib.util.find_spec(name) is None:
        return {"seconds": None, "note": f"{name} is not installed (the bench extra)"}
    previous = history.get((name, shape))
    if previous is not None:
        prev_n, prev_seconds = previous
        if prev_seconds is None:
            return {"seconds": None, "note": f"skipped: a smaller size did not finish in {limit:g} s"}
        if prev_seconds * (n / prev_n) ** 2 > _SKIP_FACTOR * limit:
            return {"seconds": None, "note": f"skipped: predicted over {limit:g} s of process time from the previous size"}
    result = _in_child(target, (shape, n, seed), limit)
    if result is None:
        history[(name, shape)] = (n, None)
        return {"seconds": None, "note": f"stopped after {limit:g} s of process time"}
    history[(name, shape)] = (n, result["cpu_seconds"])
    return result


# -- incremental --------------------------------------------------------------
def _incremental_child(order_name: str, n: int, seed: int, out) -> None:
    from chronology.engine.incremental import IncrementalOrder

    rels = list(_record("deep_site", n, seed).relationships)
    if order_name == "latest_first":
        rels.reverse()
    elif order_name == "random":
        random.Random(seed).shuffle(rels)
    order = IncrementalOrder()
    wall, cpu = [], []
    refused = 0
    gc.collect()
    start = time.perf_counter()
    for rel in rels:
        t, c = time.perf_counter(), time.process_time()
        order.add_context(rel.later)
        order.add_context(rel.earlier)
        if order.find_cycle(rel) is None:
            order.add(rel)
        else:
            refused += 1
        cpu.append(time.process_time() - c)
        wall.append(time.perf_counter() - t)
    total = time.perf_counter() - start
    wall.sort()
    cpu.sort()
    q = min(len(wall) - 1, int(0.95 * len(wall)))
    out.put({
        "order": order_name,
        "contexts": n,
        "relationships": len(rels),
        "refused": refused,
        "p95_ms": round(wall[q] * 1e3, 4),
        "max_ms": round(wall[-1] * 1e3, 3),
        "cpu_p95_ms": round(cpu[q] * 1e3, 4),
        "cpu_max_ms": round(cpu[-1] * 1e3, 3),
        "total_s": round(total, 3),
        "seconds": total,
    })


def _progress(item: dict) -> None:
    """One line per finished case on standard error (standard output carries the JSON)."""
    print(json.dumps(item), file=sys.stderr, flush=True)


def _rounded(value, digits=4):
    return None if value is None else round(value, digits)


def run(sizes=(10000, 50000, 100000, 200000), shapes=SHAPE_ORDER, reference_time_limit: float = 300.0,
        seed: int = 0, incremental_contexts: int = 20000, incremental_orders=INCREMENTAL_ORDERS,
        references=True) -> dict:
    """Time ours against networkx and rustworkx on every shape and size, and the write-time check.

    Returns ``{"suite": "graph", "cases": [...], "incremental": [...]}``.  Each
    case has ``shape``, ``contexts``, ``relationships``, ``seconds`` (ours,
    wall clock, with explanations), ``cpu_seconds``, ``peak_mb`` (traced
    peak of ours), ``redundant`` (relationships listed with a witness),
    ``rustworkx_seconds`` and ``networkx_seconds`` (None when skipped or
    stopped at ``reference_time_limit``, with a note) and the speed-ups.
    ``references`` is True (both libraries), False (neither) or the names
    of the libraries to run.
    """
    incremental = []
    for order_name in incremental_orders:
        result = _in_child(_incremental_child, (order_name, int(incremental_contexts), seed), None)
        result.pop("seconds")
        incremental.append(result)
        _progress(result)
    cases = []
    history: dict = {}
    # Every shape at one size before the next size, so an interrupted run still covers them all;
    # the site-like records first, the comparison that matters most.
    for n in sizes:
        for shape in sorted(shapes, key=lambda name: name != "deep_site"):
            n = int(n)
            ours = _in_child(_ours_child, (shape, n, seed), None)
            if ours is None:
                raise RuntimeError(f"the run of ours on {shape} at {n} contexts failed")
            case = {
                "shape": shape,
                "contexts": n,
                "relationships": ours["relationships"],
                "seconds": round(ours["seconds"], 4),
                "cpu_seconds": round(ours["cpu_seconds"], 4),
                "peak_mb": round(ours["peak_mb"], 1),
                "redundant": ours["redundant"],
                "witnessed": ours["witnessed"],
            }
            for name, target in (("rustworkx", _rustworkx_child), ("networkx", _networkx_child)):
                if not (references is True or (references and name in references)):
                    case[f"{name}_seconds"] = None
                    case[f"{name}_note"] = "not run"
                    continue
                ref = _reference(name, target, shape, n, seed, float(reference_time_limit), history)
                case[f"{name}_seconds"] = _rounded(ref["seconds"])
                if ref["seconds"] is None:
                    case[f"{name}_note"] = ref["note"]
                else:
                    case[f"{name}_cpu_seconds"] = _rounded(ref["cpu_seconds"])
                    case[f"speedup_vs_{name}"] = round(ref["seconds"] / ours["seconds"], 1)
                    case[f"cpu_speedup_vs_{name}"] = round(ref["cpu_seconds"] / ours["cpu_seconds"], 1)
            cases.append(case)
            _progress(case)
    cases.sort(key=lambda c: (list(shapes).index(c["shape"]), c["contexts"]))
    return {"suite": "graph", "cases": cases, "incremental": incremental}


if __name__ == "__main__":  # pragma: no cover
    sizes = tuple(int(a) for a in sys.argv[1:]) or (10000, 50000, 100000, 200000)
    print(json.dumps(run(sizes=sizes), indent=2))
