"""Exact analysis of interpretive alternatives over a temporal order.

An interpretation leaves ``k`` items undecided: equalities (merge ``a`` and
``b``) and uncertain orderings (``a`` before ``b``).  A *choice* is the set of
accepted items.  This module answers, without walking the 2^k choices:

* the minimal conflict sets (minimal inconsistent choices);
* the number of consistent choices, multiplied over independent groups;
* the number of distinct temporal orders they give;
* for each item, its conflicts, whether it is ruled out on its own, and in
  how many consistent choices it is accepted;
* a stable, pageable listing of the consistent choices.

Consistency rule
----------------
The base is a DAG whose edges are strict (``u ≺ v``) or weak (``u ⪯ v``).  An
accepted equality adds the weak edges ``a ⪯ b`` and ``b ⪯ a``; an accepted
ordering adds ``a ≺ b`` (or ``a ⪯ b`` when ``strict=False``).  A choice is
inconsistent when the resulting graph has a closed walk through a strict
edge; a closed walk of weak edges only is an implied equality and is
consistent.  So merging two nodes joined by a strict path is a contradiction,
merging two nodes joined only by weak paths is not.  Adding edges keeps every
closed walk, hence inconsistency is monotone and the consistent choices form
a down-closed family (domain primer §2.2).

Method
------
1. Reach masks among the ≤ 2k endpoints are computed in one sweep of the base
   (:mod:`.alternatives_reach`); everything after works on that small graph.
2. Items can only share a conflict when their endpoints lie in one strongly
   connected block of "base + every item"; each block is searched by
   dualisation (:mod:`.alternatives_search`, Gunopulos et al. 1997).
3. Two choices give the same order exactly when each implies the other's
   items, so each distinct order has one *closed* choice (every item it
   implies is accepted).  The minimal implicants of each item are found by
   the same dualisation with a probe edge; distinct orders are the closed
   consistent choices, counted by the model counter of
   :mod:`.alternatives_count`.
4. Items linked by a conflict or an implicant form a group; groups are
   independent, so counts multiply and listings are mixed-radix products.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence

from .alternatives_count import Counter
from .alternatives_listing import choice_at, iter_choices
from .alternatives_reach import _Closure, endpoint_reach
from .alternatives_search import _BudgetExceeded, dualize, small_bad_sets
from .alternatives_types import (
    KINDS as _KINDS,
    AlternativesProblem,
    AlternativesResult,
    GroupReport,
    Item,
    ItemReport,
)
from .errors import AlternativesInputError, SearchCancelled

__all__ = [
    "Item",
    "AlternativesProblem",
    "ItemReport",
    "GroupReport",
    "AlternativesResult",
    "analyse_alternatives",
    "iter_choices",
    "choice_at",
]

# --------------------------------------------------------------------------
# validation and the endpoint graph


def _validate(problem: AlternativesProblem) -> None:
    n = problem.n_nodes
    if not isinstance(n, int) or n < 0:
        raise AlternativesInputError("n_nodes must be a non-negative integer", details={"n_nodes": n})
    for name in ("edges", "weak_edges"):
        for e in getattr(problem, name):
            if len(e) != 2 or not all(isinstance(x, int) and 0 <= x < n for x in e):
                raise AlternativesInputError(f"{name} entry out of range", details={"edge": list(e)})
    seen: set = set()
    for pos, it in enumerate(problem.items):
        if not isinstance(it, Item) or it.kind not in _KINDS:
            raise AlternativesInputError("item kind must be 'equal' or 'before'", details={"item": pos})
        if not all(isinstance(x, int) and 0 <= x < n for x in (it.a, it.b)):
            raise AlternativesInputError("item endpoint out of range", details={"item": pos})
        # Choices are reported as sets of refs, so refs must tell items apart.
        if it.ref in seen:
            raise AlternativesInputError("item refs must be distinct", details={"item": pos})
        seen.add(it.ref)


class _Graph:
    """The endpoint graph and the consistency oracle on it."""

    def __init__(self, problem: AlternativesProblem):
        items = list(problem.items)
        nodes = sorted({x for it in items for x in (it.a, it.b)})
        pos = {v: i for i, v in enumerate(nodes)}
        edges = [(u, v, True) for u, v in problem.edges] + [(u, v, False) for u, v in problem.weak_edges]
        reach, strict = endpoint_reach(problem.n_nodes, edges, nodes)
        self.base = _Closure(reach, strict)
        # Directed item edges: (tail, head, strict) in endpoint positions.
        self.item_edges: list[list[tuple[int, int, bool]]] = []
        for it in items:
            a, b = pos[it.a], pos[it.b]
            if it.kind == "equal":
                self.item_edges.append([(a, b, False), (b, a, False)])
            else:
                self.item_edges.append([(a, b, bool(it.strict))])
        self.calls = 0

    def oracle(self, universe: Sequence[int], extra: Sequence[tuple[int, int, bool]] = ()) -> "_Oracle":
        """Consistency oracle restricted to the endpoints of ``universe``.

        Base reach among any set of endpoints is already transitive, so when
        only these items can be accepted, no other endpoint is needed.
        """
        used = sorted({x for i in universe for e in self.item_edges[i] for x in e[:2]}
                      | {x for e in extra for x in e[:2]})
        sub = {x: n for n, x in enumerate(used)}

        def shrink(row: int) -> int:
            out = 0
            for x, n in sub.items():
                if row >> x & 1:
                    out |= 1 << n
            return out

        base = _Closure([shrink(self.base.reach[x]) for x in used], [shrink(self.base.strict[x]) for x in used])
        edges = {i: [(sub[u], sub[v], st) for u, v, st in self.item_edges[i]] for i in universe}
        return _Oracle(self, base, edges, [(sub[u], sub[v], st) for u, v, st in extra], list(universe))

    def full_closure(self) -> _Closure:
        """Reachability with every item accepted (consistency ignored)."""
        cl = self.base.copy()
        for edges in self.item_edges:
            for u, v, s in edges:
                cl.add_edge(u, v, s)
        return cl


class _Oracle:
    """Monotone consistency test on a restricted endpoint graph."""

    def __init__(self, graph: _Graph, base: _Closure, edges: dict, extra: list, universe: list[int]):
        self.graph = graph
        self.base = base
        self.edges = edges
        self.universe = universe
        start = base.copy()
        for u, v, st in extra:
            start.add_edge(u, v, st)
        self.start = start

    def _add(self, cl: _Closure, i: int) -> bool:
        for u, v, st in self.edges[i]:
            if not cl.add_edge(u, v, st):
                return False
        return cl.ok

    def closure(self, mask: int, with_extra: bool = True) -> _Closure:
        cl = (self.start if with_extra else self.base).copy()
        m = mask
        while m and cl.ok:
            low = m & -m
            i = low.bit_length() - 1
            if cl.can_add(self.edges[i]):
                self._add(cl, i)
            else:
                cl.ok = False
            m ^= low
        return cl

    def good(self, mask: int) -> bool:
        self.graph.calls += 1
        return self.closure(mask).ok

    def grow(self, mask: int) -> int:
        """A maximal good superset of the good set ``mask``, greedily in universe order."""
        cl = self.closure(mask)
        for i in self.universe:
            if mask >> i & 1:
                continue
            self.graph.calls += 1
            if cl.can_add(self.edges[i]):
                self._add(cl, i)
                mask |= 1 << i
        return mask


def _blocks(graph: _Graph, k: int) -> list[list[int]]:
    """Items grouped by strongly connected block of base + all items."""
    full = graph.full_closure()
    n = len(full.reach)
    comp = [-1] * n
    for x in range(n):
        if comp[x] < 0:
            for y in range(n):
                if full.reaches(x, y) and full.reaches(y, x):
                    comp[y] = x
    by_block: dict[int, list[int]] = {}
    for i in range(k):
        tail, head, _ = graph.item_edges[i][0]
        if comp[tail] == comp[head]:
            by_block.setdefault(comp[tail], []).append(i)
        else:
            # An item across blocks lies on no closed walk: it conflicts with
            # nothing, unless it contradicts the base alone.
            by_block.setdefault(-1 - i, []).append(i)
    return list(by_block.values())


def _probes(item: Item, head_tail: list[tuple[int, int, bool]]) -> list[tuple[int, int, bool]]:
    """Edges whose addition is inconsistent exactly when the item is implied.

    One probe per direction the item asserts; an equality asserts two.
    """
    out = []
    for u, v, strict in head_tail[:1] if item.kind == "before" else head_tail:
        # u ≺ v is implied iff adding v ⪯ u closes a strict walk; u ⪯ v is
        # implied iff adding v ≺ u does.
        out.append((v, u, not strict))
    return out


# --------------------------------------------------------------------------
# the analysis


class _Run:
    """Budget, cancellation and progress bookkeeping for one analysis."""

    def __init__(self, time_budget, progress, cancel):
        self.start = time.perf_counter()
        self.deadline = None if time_budget is None else self.start + time_budget
        self.progress = progress
        self.cancel = cancel

    def expired(self) -> bool:
        return self.deadline is not None and time.perf_counter() > self.deadline

    def check(self) -> None:
        if self.cancel is not None and self.cancel():
            raise SearchCancelled("the analysis of alternatives was cancelled")

    def report(self, fraction: float) -> None:
        self.check()
        if self.progress is not None:
            self.progress(min(1.0, max(0.0, fraction)))


def _masks_to_items(mask: int) -> tuple[int, ...]:
    return tuple(i for i in range(mask.bit_length()) if mask >> i & 1)


def analyse_alternatives(
    problem: AlternativesProblem,
    *,
    max_k_exact: int = 40,
    time_budget: float | None = 60.0,
    progress: Callable[[float], None] | None = None,
    cancel: Callable[[], bool] | None = None,
) -> AlternativesResult:
    """Count and explain the consistent choices of undecided items.

    Parameters
    ----------
    problem : AlternativesProblem
        Base order and undecided items.
    max_k_exact : int
        Largest block of possibly interacting items searched exhaustively.  A
        larger block only has its conflicts of one or two items looked for,
        and the result is marked ``exact=False``.
    time_budget : float or None
        Seconds allowed for the conflict and implicant searches; when spent,
        the result is marked ``exact=False``.  ``None`` means no limit.
    progress : callable, optional
        Called with the fraction of the work done, in [0, 1].
    cancel : callable, optional
        Polled during the search; when it returns True the analysis raises
        :class:`~chronology.engine.errors.SearchCancelled`.

    Returns
    -------
    AlternativesResult

    Raises
    ------
    AlternativesInputError
        Malformed nodes, edges or items.
    CycleError
        The base order is not acyclic.
    SearchCancelled
        ``cancel()`` returned True.

    Examples
    --------
    >>> p = AlternativesProblem(3, [(0, 1), (1, 2)],
    ...     [Item("equal", 0, 2, ref=7), Item("before", 2, 0, ref=8)])
    >>> r = analyse_alternatives(p)
    >>> r.consistent_count, r.minimal_conflicts
    (1, [(7,), (8,)])

    Notes
    -----
    Minimal conflicts are the minimal transversals of the complements of the
    maximal consistent choices, found by dualize-and-advance (Gunopulos,
    Khardon, Mannila & Toivonen 1997) with Berge's incremental transversal
    step (Berge 1989); oracle calls are O((#maximal + #minimal) * k) per
    block, each O(k * #endpoints).  Counting is exact model counting with
    component caching (Bayardo & Pehoushek 2000), exponential only in the
    size of a group's conflict structure, never in k across groups.

    References
    ----------
    Gunopulos D., Khardon R., Mannila H., Toivonen H. (1997). Data mining,
    hypergraph transversals, and machine learning. PODS '97.
    Berge C. (1989). Hypergraphs. North-Holland.
    Bayardo R. J., Pehoushek J. D. (2000). Counting models using connected
    components. AAAI-2000.
    """
    _validate(problem)
    run = _Run(time_budget, progress, cancel)
    items = list(problem.items)
    k = len(items)
    graph = _Graph(problem)
    exact = True
    notes: list[str] = []
    run.report(0.0)

    # 1. Minimal conflicts, block by block.
    blocks = _blocks(graph, k)
    conflicts: list[int] = []
    weight = sum(len(b) for b in blocks) or 1
    done = 0
    block_of: dict[int, int] = {}
    maximal: dict[int, list[int] | None] = {}
    for b, block in enumerate(blocks):
        found, maximal[b], ok = _block_conflicts(graph, block, max_k_exact, run)
        for i in block:
            block_of[i] = b
        conflicts.extend(found)
        if not ok:
            exact = False
            notes.append(
                f"block of {len(block)} items {sorted(items[i].ref for i in block)!r} "
                "was searched only partly; counts are upper bounds"
            )
        done += len(block)
        run.report(0.5 * done / weight)
    conflicts = sorted(set(conflicts), key=lambda m: (m.bit_count(), _masks_to_items(m)))
    forced_out = {c.bit_length() - 1 for c in conflicts if c.bit_count() == 1}

    # 2. Minimal implicants of every item, for counting distinct orders.
    full = graph.full_closure()
    implications: list[tuple[int, int]] = []
    implied_by_base: set[int] = set()
    for i in range(k):
        if i not in forced_out:
            imps, ok = _implicants(graph, items, i, forced_out, full, max_k_exact, run, block_of, maximal)
            if not ok:
                exact = False
                notes.append(f"implicants of item {items[i].ref!r} searched only partly")
            for t in imps:
                implications.append((t, i))
                if t == 0:
                    implied_by_base.add(i)
        run.report(0.5 + 0.45 * (i + 1) / max(k, 1))

    # 3. Groups, counts, per-item figures.
    result = _assemble(items, conflicts, implications, forced_out, implied_by_base, run)
    result.exact = exact
    result.notes = notes
    result.seconds = time.perf_counter() - run.start
    run.report(1.0)
    return result


def _block_conflicts(
    graph: _Graph, block: list[int], max_k_exact: int, run: _Run
) -> tuple[list[int], list[int] | None, bool]:
    """Minimal conflicts and maximal consistent sets of one block.

    Returns ``(conflicts, maximal, exact)``; ``maximal`` is None when the
    search was cut short.
    """
    oracle = graph.oracle(block)
    if len(block) == 1:
        i = block[0]
        if oracle.good(1 << i):
            return [], [1 << i], True
        return [1 << i], [0], True
    if len(block) > max_k_exact:
        return small_bad_sets(block, oracle.good, 2), None, False
    if run.expired():
        return small_bad_sets(block, oracle.good, 1), None, False
    try:
        bad, maximal = dualize(block, oracle.good, grow=oracle.grow, deadline=run.deadline, check=run.check)
        return bad, maximal, True
    except _BudgetExceeded as stop:
        return list(stop.args[0].bad), None, False


_FILTER_LIMIT = 4096


def _never_implied(oracle: "_Oracle", cand: list[int], block_of: dict, maximal: dict) -> bool:
    """True when no consistent subset of ``cand`` implies the probed direction.

    Implication is monotone over consistent sets, so it is enough to test the
    maximal consistent subsets of ``cand``: the products of the blocks'
    maximal sets restricted to ``cand``.  False means "maybe" (also when
    there are too many products to test).
    """
    cmask = 0
    for j in cand:
        cmask |= 1 << j
    per_block = []
    size = 1
    for b in sorted({block_of[j] for j in cand}):
        if maximal.get(b) is None:
            return False
        options = sorted({m & cmask for m in maximal[b]})
        per_block.append(options)
        size *= len(options)
        if size > _FILTER_LIMIT:
            return False
    combos = [0]
    for options in per_block:
        combos = [c | m for c in combos for m in options]
    return all(oracle.good(c) for c in combos)


def _implicants(graph, items, i, forced_out, full, max_k_exact, run, block_of, maximal) -> tuple[list[int], bool]:
    """Minimal consistent sets of other items that imply item ``i``."""
    directions = []
    for probe in _probes(items[i], graph.item_edges[i]):
        u, v = probe[1], probe[0]  # the item asserts u ⪯/≺ v
        cand = []
        for j in range(len(items)):
            if j == i or j in forced_out:
                continue
            if any(full.reaches(u, t) and full.reaches(h, v) for t, h, _ in graph.item_edges[j]):
                cand.append(j)
        oracle = graph.oracle(cand, (probe,))
        if not oracle.good(0):
            directions.append((cand, oracle, True))
            continue
        if _never_implied(oracle, cand, block_of, maximal):
            return [], True
        directions.append((cand, oracle, False))
    per_direction: list[list[int]] = []
    exact = True
    for cand, oracle, by_base in directions:
        if by_base:
            per_direction.append([0])
            continue
        if run.expired():
            # Missing implicants only over-count distinct orders.
            bad, ok = [], False
        elif len(cand) > max_k_exact:
            bad, ok = small_bad_sets(cand, oracle.good, 2), False
        else:
            try:
                bad, _ = dualize(cand, oracle.good, grow=oracle.grow, deadline=run.deadline, check=run.check)
                ok = True
            except _BudgetExceeded as stop:
                bad, ok = list(stop.args[0].bad), False
        exact = exact and ok
        per_direction.append([t for t in bad if oracle.closure(t, with_extra=False).ok])
    combined = [0]
    for options in per_direction:
        combined = [c | t for c in combined for t in options]
    return _minimal(combined), exact


def _minimal(sets: list[int]) -> list[int]:
    kept: list[int] = []
    for s in sorted(set(sets), key=lambda m: (m.bit_count(), m)):
        if not any(x & s == x for x in kept):
            kept.append(s)
    return kept


def _assemble(items, conflicts, implications, forced_out, implied_by_base, run) -> AlternativesResult:
    k = len(items)
    parent = list(range(k))

    def find(x):
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    def link(mask):
        members = _masks_to_items(mask)
        for x in members[1:]:
            ra, rb = find(members[0]), find(x)
            if ra != rb:
                parent[max(ra, rb)] = min(ra, rb)

    for c in conflicts:
        link(c)
    for t, h in implications:
        link(t | (1 << h))
    members: dict[int, list[int]] = {}
    for i in range(k):
        members.setdefault(find(i), []).append(i)
    counter = Counter(run.check)
    groups: list[GroupReport] = []
    reports = [ItemReport(i, items[i].ref, items[i].kind, -1) for i in range(k)]
    consistent_total = 1
    distinct_total = 1
    group_counts = []
    for gi, root in enumerate(sorted(members)):
        mem = members[root]
        gmask = 0
        for i in mem:
            gmask |= 1 << i
        gc = [c for c in conflicts if c & gmask]
        gi_imps = [x for x in implications if (1 << x[1]) & gmask]
        cons_vars = 0
        for c in gc:
            cons_vars |= c
        n_cons = counter.count(gc, ()) << (len(mem) - cons_vars.bit_count())
        imp_vars = cons_vars
        for t, h in gi_imps:
            imp_vars |= t | (1 << h)
        n_dist = counter.count(gc, gi_imps) << (len(mem) - imp_vars.bit_count())
        groups.append(GroupReport(
            gi, tuple(mem), tuple(items[i].ref for i in mem), n_cons, n_dist,
            tuple(_masks_to_items(c) for c in gc),
        ))
        group_counts.append((mem, gc, cons_vars, n_cons))
        consistent_total *= n_cons
        distinct_total *= n_dist
        for i in mem:
            reports[i].group = gi
    for mem, gc, cons_vars, n_cons in group_counts:
        others = consistent_total // n_cons if n_cons else 0
        for i in mem:
            rep = reports[i]
            rep.forced_out = i in forced_out
            rep.implied_by_base = i in implied_by_base
            rep.conflicts = [tuple(items[j].ref for j in _masks_to_items(c)) for c in gc if c >> i & 1]
            if cons_vars >> i & 1:
                within = counter.count_after(gc, (), i, 1) << (len(mem) - cons_vars.bit_count())
            else:
                within = n_cons // 2
            rep.accepted_in = within * others
    return AlternativesResult(
        k=k,
        consistent_count=consistent_total,
        distinct_orders=distinct_total,
        exact=True,
        groups=groups,
        minimal_conflicts=[tuple(items[j].ref for j in _masks_to_items(c)) for c in conflicts],
        items=reports,
        seconds=0.0,
    )
