"""Exact counting and unranking of choices under conflict and closure clauses.

A choice is a 0/1 assignment of the undecided items.  Two kinds of clause
restrict it:

* a *conflict* ``C`` (bitmask): not every member of ``C`` accepted;
* an *implication* ``(T, h)``: if every member of ``T`` is accepted, so is
  ``h`` (used to count each distinct order once, through its closed choice).

Counting the models is #P-hard in general; the counter below is the usual
branch-and-propagate model counter with splitting into independent
components and caching of component counts (Bayardo & Pehoushek 2000,
"Counting models using connected components"; Sang et al. 2004).  On the
sparse conflict hypergraphs of an excavation record it answers in
milliseconds; its worst case is O(2^v) for ``v`` constrained items.
"""

from __future__ import annotations

__all__: list[str] = []  # private helpers of chronology.engine.alternatives

Clauses = tuple[frozenset[int], frozenset[tuple[int, int]]]


def _vars(conflicts, imps) -> int:
    m = 0
    for c in conflicts:
        m |= c
    for t, h in imps:
        m |= t | (1 << h)
    return m


def assign(conflicts, imps, var: int, value: int):
    """Assign ``var`` and propagate; ``None`` on contradiction.

    Returns ``(conflicts, imps, assigned)`` where ``assigned`` maps every item
    fixed by the assignment or its consequences to 0 or 1.
    """
    pending = [(var, value)]
    assigned: dict[int, int] = {}
    cs = set(conflicts)
    im = set(imps)
    while pending:
        v, b = pending.pop()
        if v in assigned:
            if assigned[v] != b:
                return None
            continue
        assigned[v] = b
        bit = 1 << v
        new_c: set[int] = set()
        for c in cs:
            if c & bit:
                if b:
                    rest = c & ~bit
                    if not rest:
                        return None
                    new_c.add(rest)
            else:
                new_c.add(c)
        new_i: set[tuple[int, int]] = set()
        for t, h in im:
            if h == v:
                if not b:
                    if not t:
                        return None
                    new_c.add(t)
                continue
            if t & bit:
                if b:
                    rest = t & ~bit
                    if rest:
                        new_i.add((rest, h))
                    else:
                        pending.append((h, 1))
            else:
                new_i.add((t, h))
        cs, im = new_c, new_i
        for c in cs:
            if not c & (c - 1):
                pending.append((c.bit_length() - 1, 0))
        for t, h in im:
            if not t:
                pending.append((h, 1))
    return frozenset(cs), frozenset(im), assigned


def _components(conflicts, imps) -> list[Clauses]:
    """Split clauses into groups that share no item."""
    groups: list[list] = []  # [mask, conflicts, imps]
    for kind, clause, mask in [(0, c, c) for c in conflicts] + [(1, x, x[0] | (1 << x[1])) for x in imps]:
        merged = [mask, [], []]
        merged[1 + kind].append(clause)
        rest = []
        for g in groups:
            if g[0] & merged[0]:
                merged[0] |= g[0]
                merged[1].extend(g[1])
                merged[2].extend(g[2])
            else:
                rest.append(g)
        rest.append(merged)
        groups = rest
    return [(frozenset(g[1]), frozenset(g[2])) for g in groups]


class Counter:
    """Model counter with a component cache; one instance per analysis."""

    def __init__(self, check=None):
        self._memo: dict[Clauses, int] = {}
        self._check = check

    def count(self, conflicts, imps) -> int:
        """Number of assignments of the items the clauses mention."""
        conflicts = frozenset(conflicts)
        imps = frozenset(imps)
        if not conflicts and not imps:
            return 1
        key = (conflicts, imps)
        hit = self._memo.get(key)
        if hit is not None:
            return hit
        if self._check is not None:
            self._check()
        parts = _components(conflicts, imps)
        if len(parts) > 1:
            total = 1
            for c, i in parts:
                total *= self.count(c, i)
                if not total:
                    break
        else:
            total = self._branch(conflicts, imps)
        self._memo[key] = total
        return total

    def count_after(self, conflicts, imps, var: int, value: int) -> int:
        """Models of the clauses' items once ``var`` is fixed (``var`` itself not counted)."""
        before = _vars(conflicts, imps) & ~(1 << var)
        res = assign(conflicts, imps, var, value)
        if res is None:
            return 0
        c2, i2, fixed = res
        fixed_mask = 0
        for v in fixed:
            fixed_mask |= 1 << v
        dropped = before & ~_vars(c2, i2) & ~fixed_mask
        return self.count(c2, i2) << dropped.bit_count()

    def _branch(self, conflicts, imps) -> int:
        freq: dict[int, int] = {}
        for c in conflicts:
            m = c
            while m:
                low = m & -m
                freq[low] = freq.get(low, 0) + 1
                m ^= low
        for t, h in imps:
            m = t | (1 << h)
            while m:
                low = m & -m
                freq[low] = freq.get(low, 0) + 1
                m ^= low
        best = max(freq, key=lambda b: (freq[b], -b))
        var = best.bit_length() - 1
        return self.count_after(conflicts, imps, var, 0) + self.count_after(conflicts, imps, var, 1)


def unrank(counter: Counter, items: list[int], conflicts, index: int) -> int:
    """The ``index``-th model (bitmask) of ``items`` under ``conflicts``.

    Models are ordered by deciding ``items`` in the given order, rejection
    before acceptance, so model 0 accepts nothing.
    """
    cs = frozenset(conflicts)
    im: frozenset = frozenset()
    decided: dict[int, int] = {}
    for pos, var in enumerate(items):
        if var in decided:
            continue
        free_after = [v for v in items[pos + 1:] if v not in decided]
        branch_counts = []
        for value in (0, 1):
            res = assign(cs, im, var, value)
            if res is None:
                branch_counts.append((0, None))
                continue
            c2, _, fixed = res
            free = sum(1 for v in free_after if v not in fixed)
            constrained = _vars(c2, ()).bit_count()
            branch_counts.append((counter.count(c2, ()) << (free - constrained), res))
        n0, res0 = branch_counts[0]
        if index < n0:
            cs, _, fixed = res0
        else:
            index -= n0
            cs, _, fixed = branch_counts[1][1]
        decided.update(fixed)
    mask = 0
    for v, b in decided.items():
        if b:
            mask |= 1 << v
    return mask
