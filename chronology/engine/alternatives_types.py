"""The data of an analysis of interpretive alternatives: problem, items, reports.

Shared by the analysis (:mod:`.alternatives`) and the listing of its choices
(:mod:`.alternatives_listing`), so that neither imports the other.
"""

from __future__ import annotations

from collections.abc import Hashable, Sequence
from dataclasses import dataclass, field

__all__ = ["Item", "AlternativesProblem", "ItemReport", "GroupReport", "AlternativesResult", "KINDS"]

KINDS = ("equal", "before")


@dataclass(frozen=True, slots=True)
class Item:
    """One undecided item.

    ``kind`` is ``"equal"`` (``a`` and ``b`` one event) or ``"before"``
    (``a ≺ b``, or ``a ⪯ b`` when ``strict`` is False).  ``ref`` is the
    caller's opaque id (e.g. a relationship id) and is echoed in every report.
    """

    kind: str
    a: int
    b: int
    ref: Hashable = None
    strict: bool = True


@dataclass(frozen=True, slots=True)
class AlternativesProblem:
    """A base order on nodes ``0 .. n_nodes-1`` and the undecided items.

    ``edges`` are strict ``(u, v)`` pairs meaning ``u ≺ v``; ``weak_edges``
    mean ``u ⪯ v``.  The base must be acyclic (merged already).
    """

    n_nodes: int
    edges: Sequence[tuple[int, int]]
    items: Sequence[Item]
    weak_edges: Sequence[tuple[int, int]] = ()


@dataclass(slots=True)
class ItemReport:
    """What the analysis established about one item."""

    index: int
    ref: Hashable
    kind: str
    group: int
    conflicts: list[tuple] = field(default_factory=list)
    forced_out: bool = False
    implied_by_base: bool = False
    accepted_in: int = 0

    def as_dict(self) -> dict:
        return {
            "index": self.index,
            "ref": self.ref,
            "kind": self.kind,
            "group": self.group,
            "conflicts": [list(c) for c in self.conflicts],
            "forced_out": self.forced_out,
            "implied_by_base": self.implied_by_base,
            "accepted_in": self.accepted_in,
        }


@dataclass(slots=True)
class GroupReport:
    """One independent group of items (positions in ``problem.items``)."""

    index: int
    items: tuple[int, ...]
    refs: tuple
    consistent_count: int
    distinct_orders: int
    conflicts: tuple[tuple[int, ...], ...]

    def as_dict(self) -> dict:
        return {
            "index": self.index,
            "items": list(self.items),
            "refs": list(self.refs),
            "consistent_count": self.consistent_count,
            "distinct_orders": self.distinct_orders,
            "conflicts": [list(c) for c in self.conflicts],
        }


@dataclass(slots=True)
class AlternativesResult:
    """Answer of :func:`analyse_alternatives`.

    When ``exact`` is False the search stopped at its budget: every conflict
    listed is a true minimal conflict, but some may be missing, so
    ``consistent_count``, ``distinct_orders`` and ``accepted_in`` are upper
    bounds; ``notes`` says which block was cut short.
    """

    k: int
    consistent_count: int
    distinct_orders: int
    exact: bool
    groups: list[GroupReport]
    minimal_conflicts: list[tuple]
    items: list[ItemReport]
    seconds: float
    notes: list[str] = field(default_factory=list)

    def as_dict(self) -> dict:
        return {
            "k": self.k,
            "consistent_count": self.consistent_count,
            "distinct_orders": self.distinct_orders,
            "exact": self.exact,
            "groups": [g.as_dict() for g in self.groups],
            "minimal_conflicts": [list(c) for c in self.minimal_conflicts],
            "items": [r.as_dict() for r in self.items],
            "seconds": self.seconds,
            "notes": list(self.notes),
        }
