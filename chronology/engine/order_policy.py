"""Which relationships of the record an order is built from.

An :class:`OrderPolicy` is what an interpretation decides about the record:
which uncertain relationships and ``contemporary_with`` links it accepts or
rejects, which relationships it sets aside, and which orderings of its own it
adds (:class:`ExtraOrdering`).
"""

from __future__ import annotations

from dataclasses import dataclass

from .record_data import IDENTITY_TYPES, ORDERED_TYPES, RelationshipData

__all__ = ["ExtraOrdering", "OrderPolicy"]


@dataclass(frozen=True, slots=True)
class ExtraOrdering:
    """An interpretive ordering added by an analyst, not part of the record.

    ``earlier`` and ``later`` are context ids; ``ref`` names the interpretive
    statement so that explanations can cite it.
    """

    earlier: int
    later: int
    strict: bool = True
    ref: str = ""


@dataclass(frozen=True)
class OrderPolicy:
    """Which relationships an order is built from.

    The default is the record policy: every certain relationship, plus the
    uncertain ordered ones; certain ``same_as``/``bonded_with`` are merged,
    uncertain equalities and every ``contemporary_with`` are merged only when
    their id is in ``accept``.

    Attributes
    ----------
    accept : frozenset of int
        Uncertain relationships and ``contemporary_with`` links the
        interpretation accepts.
    reject : frozenset of int
        Uncertain relationships the interpretation rejects.
    set_aside : frozenset of int
        Relationships dropped entirely (certain or not).
    extra_orderings : tuple of ExtraOrdering
        Interpretive orderings; tuples ``(earlier, later, strict, ref)`` are
        accepted too.
    accept_uncertain_orders : bool
        Whether uncertain ordered relationships are used unless rejected.
    """

    accept: frozenset = frozenset()
    reject: frozenset = frozenset()
    set_aside: frozenset = frozenset()
    extra_orderings: tuple = ()
    accept_uncertain_orders: bool = True

    def __post_init__(self):
        for name in ("accept", "reject", "set_aside"):
            object.__setattr__(self, name, frozenset(getattr(self, name)))
        extras = []
        for item in self.extra_orderings:
            if not isinstance(item, ExtraOrdering):
                item = ExtraOrdering(*item)
            extras.append(item)
        object.__setattr__(self, "extra_orderings", tuple(extras))

    def uses(self, rel: RelationshipData) -> bool:
        """True when ``rel`` enters the order (as an edge or a merge)."""
        if rel.id in self.set_aside:
            return False
        if rel.id in self.accept:
            return True
        if rel.id in self.reject and not rel.certain:
            return False
        if rel.type in ORDERED_TYPES:
            return rel.certain or self.accept_uncertain_orders
        return rel.certain and rel.type in IDENTITY_TYPES
