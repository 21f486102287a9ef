"""Plain-data view of the field record, as the engine consumes it.

The apps build these from database rows (or an archive); the engine never sees
a model instance.  Relationship types are stored in one canonical direction:
``later`` is the context that is later in time (the one above, the cut that
truncates, the fill inside a cut, the unit that abuts), ``earlier`` the other.
For the equalities (``same_as``, ``bonded_with``, ``contemporary_with``) the
two ends are unordered and ``later``/``earlier`` are just the two members.
"""

from __future__ import annotations

from dataclasses import dataclass, field

__all__ = [
    "ORDERED_TYPES",
    "EQUALITY_TYPES",
    "IDENTITY_TYPES",
    "STRICT_TYPES",
    "WEAK_TYPES",
    "INVERSE_WORDINGS",
    "ContextData",
    "RelationshipData",
    "canonical_relationship",
]

#: Ordered physical relationships, stored as ``later <type> earlier``.
ORDERED_TYPES = frozenset({"above", "cuts", "fills", "abuts"})
#: Relationships whose temporal reading is strict (earlier ≺ later).
STRICT_TYPES = frozenset({"above", "cuts", "fills"})
#: Relationships whose temporal reading is weak (earlier ⪯ later).  Abutting is
#: "not earlier than"; it is often read as strict in practice (common practice).
WEAK_TYPES = frozenset({"abuts"})
#: Unordered relationships.
EQUALITY_TYPES = frozenset({"same_as", "bonded_with", "contemporary_with"})
#: Equalities the record itself treats as one event when certain.  "Contemporary
#: with" is interpretive and left to interpretations.
IDENTITY_TYPES = frozenset({"same_as", "bonded_with"})

#: Inverse wordings accepted at the API and the canonical type they map to
#: (the two ends are swapped).
INVERSE_WORDINGS = {
    "below": "above",
    "cut_by": "cuts",
    "filled_by": "fills",
    "abutted_by": "abuts",
}


@dataclass(frozen=True, slots=True)
class ContextData:
    """One context as the engine sees it."""

    id: int
    label: str
    kind: str = "deposit"
    area: str = ""
    attributes: dict = field(default_factory=dict, compare=False, hash=False)


@dataclass(frozen=True, slots=True)
class RelationshipData:
    """One recorded relationship in canonical direction.

    ``certain`` is False for relationships the recorder marked uncertain.
    """

    id: int
    type: str
    later: int
    earlier: int
    certain: bool = True

    @property
    def is_equality(self) -> bool:
        return self.type in EQUALITY_TYPES

    @property
    def is_ordered(self) -> bool:
        return self.type in ORDERED_TYPES

    @property
    def is_strict(self) -> bool:
        return self.type in STRICT_TYPES


def canonical_relationship(first: int, wording: str, second: int) -> tuple[str, int, int]:
    """Return ``(type, later, earlier)`` for the statement "first <wording> second".

    >>> canonical_relationship(1002, "below", 1001)
    ('above', 1001, 1002)
    """
    if wording in INVERSE_WORDINGS:
        return INVERSE_WORDINGS[wording], second, first
    if wording in ORDERED_TYPES or wording in EQUALITY_TYPES:
        return wording, first, second
    raise ValueError(f"unknown relationship wording {wording!r}")
