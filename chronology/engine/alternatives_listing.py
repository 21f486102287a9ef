"""Stable, pageable listing of the consistent choices of an analysis.

The consistent choices are the product of the groups' consistent choices, so
choice number ``j`` is a mixed-radix number whose digits are the groups'
choice numbers.  Within a group a choice is found from its number by
unranking with the exact counter (:func:`.alternatives_count.unrank`), so a
page deep in a listing of millions costs no more than the first page.
"""

from __future__ import annotations

from collections.abc import Iterator

from .alternatives_count import Counter, unrank
from .alternatives_types import AlternativesResult
from .errors import AlternativesInputError

__all__ = ["iter_choices", "choice_at"]


def _masks_to_items(mask: int) -> tuple[int, ...]:
    return tuple(i for i in range(mask.bit_length()) if mask >> i & 1)




class _Lister:
    """Index → choice over the mixed-radix product of the groups."""

    def __init__(self, result: AlternativesResult, cache_limit: int = 4096):
        self.result = result
        self.counter = Counter()
        self.groups = []
        for g in result.groups:
            conflicts = []
            for c in g.conflicts:
                m = 0
                for i in c:
                    m |= 1 << i
                conflicts.append(m)
            cache = None
            if g.consistent_count <= cache_limit:
                cache = [unrank(self.counter, list(g.items), conflicts, j) for j in range(g.consistent_count)]
            self.groups.append((list(g.items), conflicts, g.consistent_count, cache))

    def mask_at(self, index: int) -> int:
        mask = 0
        # The last group is the fastest-moving digit.
        for items, conflicts, count, cache in reversed(self.groups):
            index, digit = divmod(index, count)
            mask |= cache[digit] if cache is not None else unrank(self.counter, items, conflicts, digit)
        return mask


def _refs(result: AlternativesResult, mask: int) -> frozenset:
    return frozenset(result.items[i].ref for i in _masks_to_items(mask))


def iter_choices(result: AlternativesResult, offset: int = 0, limit: int | None = None) -> Iterator[frozenset]:
    """Yield consistent choices (frozensets of refs) in a stable order.

    Choice ``j`` is the mixed-radix number whose digits are the groups'
    choices (the first group most significant); within a group, choices are
    ordered by deciding its items in index order, rejection first.  So choice
    0 accepts nothing, and ``iter_choices(r, offset, limit)`` equals the slice
    ``[offset:offset+limit]`` of the full listing without computing the
    choices before ``offset``.

    Parameters
    ----------
    result : AlternativesResult
        An exact result of :func:`analyse_alternatives` (an inexact one lists
        a superset of the consistent choices).
    offset, limit : int
        Page to yield; ``limit=None`` runs to the end.
    """
    if offset < 0 or (limit is not None and limit < 0):
        raise AlternativesInputError("offset and limit must be non-negative")
    total = result.consistent_count
    stop = total if limit is None else min(total, offset + limit)
    if offset >= stop:
        return
    lister = _Lister(result)
    for index in range(offset, stop):
        yield _refs(result, lister.mask_at(index))


def choice_at(result: AlternativesResult, index: int) -> frozenset:
    """The ``index``-th consistent choice of :func:`iter_choices`' order."""
    if not 0 <= index < result.consistent_count:
        raise AlternativesInputError("choice index out of range", details={"index": index})
    return _refs(result, _Lister(result, cache_limit=0).mask_at(index))
