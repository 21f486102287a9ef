"""Minimal bad sets of a down-closed family, by dualisation.

The consistent choices of an interpretation form a down-closed family (every
subset of a consistent choice is consistent).  Its minimal non-members (the
minimal conflict sets) and its maximal members determine each other: the
minimal conflicts are exactly the minimal transversals of the complements of
the maximal consistent sets.  :func:`dualize` finds both by the
"dualize and advance" scheme of Gunopulos, Khardon, Mannila & Toivonen (1997):
take a minimal transversal of the complements found so far; if it is bad it
is a minimal bad set, otherwise grow it greedily into a new maximal good set
and update the transversals by Berge's incremental step (Berge 1989).  The
number of oracle calls is O((#maximal + #minimal) * k); no subset lattice is
walked, so a family of 2^k consistent sets with no conflict costs one pass.

Sets are Python-int bitmasks over item positions.
"""

from __future__ import annotations

import time
from collections.abc import Callable

__all__: list[str] = []  # private helpers of chronology.engine.alternatives


class _BudgetExceeded(Exception):
    """Raised inside the search when the time or oracle budget is spent."""


def _minimise(sets: list[int]) -> list[int]:
    """Keep only the inclusion-minimal masks (duplicates removed)."""
    kept: list[int] = []
    for s in sorted(set(sets), key=lambda m: (m.bit_count(), m)):
        if not any(k & s == k for k in kept):
            kept.append(s)
    return kept


def _berge_add(transversals: list[int], edge: int) -> list[int]:
    """Minimal transversals after adding ``edge`` to the hypergraph (Berge 1989).

    A grown set ``t | b`` (``t`` missing the edge) is redundant only if some
    old transversal that hits the edge is inside it; such a transversal must
    hold ``b`` (any other would lie inside ``t``, against ``t``'s
    minimality), so the test looks only at transversals holding ``b``, and
    two grown sets can only nest when they were grown by different bits.
    """
    hit = [t for t in transversals if t & edge]
    bits = [1 << i for i in range(edge.bit_length()) if edge >> i & 1]
    by_bit = {b: [h for h in hit if h & b] for b in bits}
    grown_by_bit: dict[int, list[int]] = {}
    for t in transversals:
        if t & edge:
            continue
        for b in bits:
            cand = t | b
            if not any(h & cand == h for h in by_bit[b]):
                grown_by_bit.setdefault(b, []).append(cand)
    grown = [g for lst in grown_by_bit.values() for g in lst]
    if len(grown_by_bit) <= 1:
        return hit + grown
    return hit + _minimise(grown)


def dualize(
    universe: list[int],
    good: Callable[[int], bool],
    *,
    grow: Callable[[int], int] | None = None,
    deadline: float | None = None,
    check: Callable[[], None] | None = None,
) -> tuple[list[int], list[int]]:
    """Minimal bad sets and maximal good sets of a down-closed family.

    ``universe`` lists item positions; ``good(mask)`` is the monotone oracle
    (good sets closed under subsets); ``grow(mask)``, when given, returns a
    maximal good superset of a good ``mask`` (an incremental oracle does this
    faster than repeated ``good`` calls).  Raises :class:`_BudgetExceeded` after
    ``deadline`` (a ``time.perf_counter`` value); ``check`` is called once per
    round and may raise to cancel.  The bad sets found before the budget ran
    out are each verified minimal, so a partial answer is still sound.
    """
    full = 0
    for i in universe:
        full |= 1 << i
    transversals = [0]
    bad: set[int] = set()
    bad_order: list[int] = []
    maximal: list[int] = []
    partial = _PartialResult(bad_order, maximal)
    while True:
        if check is not None:
            check()
        if deadline is not None and time.perf_counter() > deadline:
            raise _BudgetExceeded(partial)
        cand = next((t for t in transversals if t not in bad), None)
        if cand is None:
            return bad_order, maximal
        if not good(cand):
            bad.add(cand)
            bad_order.append(cand)
            continue
        if grow is not None:
            grown = grow(cand)
        else:
            grown = cand
            for i in universe:
                b = 1 << i
                if not grown & b and good(grown | b):
                    grown |= b
        maximal.append(grown)
        transversals = _berge_add(transversals, full & ~grown)


class _PartialResult:
    """What a search had established when its budget ran out."""

    __slots__ = ("bad", "maximal")

    def __init__(self, bad: list[int], maximal: list[int]):
        self.bad = bad
        self.maximal = maximal


def small_bad_sets(universe: list[int], good: Callable[[int], bool], max_size: int = 2) -> list[int]:
    """Minimal bad sets of at most ``max_size`` members, by direct test.

    Used when a block is too large for :func:`dualize`; every set returned is
    a true minimal bad set, but larger ones are not looked for.
    """
    bad: list[int] = [1 << i for i in universe if not good(1 << i)]
    alive = [i for i in universe if not any(b == 1 << i for b in bad)]
    if max_size >= 2:
        for x, i in enumerate(alive):
            for j in alive[x + 1:]:
                m = (1 << i) | (1 << j)
                if not good(m):
                    bad.append(m)
    return bad
