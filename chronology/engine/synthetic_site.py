"""Deterministic generator of site-like records for tests and benchmarks.

The generated record imitates a multi-area excavation: layers laid over parts
of the current surface, cuts truncating what lies at the surface and filled by
several fills, walls that later layers abut, "same as" twins of a layer split
across the surface (sometimes across areas), redundant relationships to units
two or three steps down, and optionally uncertain relationships (some of which
contradict the certain ones).  Units are created in time order, so the
certain record is always consistent; only uncertain links may conflict.
"""

from __future__ import annotations

import random
from dataclasses import dataclass

from .record_data import ContextData, RelationshipData

__all__ = ["SyntheticSite", "generate_site"]


@dataclass(frozen=True)
class SyntheticSite:
    """A generated record: contexts and relationships (canonical direction)."""

    contexts: tuple
    relationships: tuple

    def __iter__(self):
        # Allows ``contexts, relationships = generate_site(...)``.
        return iter((self.contexts, self.relationships))


class _Builder:
    def __init__(self, rng: random.Random, areas: int):
        self.rng = rng
        self.contexts: list[ContextData] = []
        self.rels: list[RelationshipData] = []
        self.below: dict[int, list[int]] = {}
        self.pairs: set[tuple[int, int]] = set()
        self.kind: dict[int, str] = {}
        self.surface: list[list[int]] = [[] for _ in range(areas)]

    def context(self, kind: str, area: int) -> int:
        cid = 1001 + len(self.contexts)
        self.contexts.append(ContextData(cid, str(cid), kind, f"Area {area + 1}"))
        self.kind[cid] = kind
        self.below[cid] = []
        return cid

    def relate(self, typ: str, later: int, earlier: int, certain: bool = True) -> None:
        key = (later, earlier)
        if key in self.pairs or later == earlier:
            return
        self.pairs.add(key)
        self.rels.append(RelationshipData(len(self.rels) + 1, typ, later, earlier, certain))
        if typ not in ("same_as", "bonded_with", "contemporary_with"):
            self.below[later].append(earlier)

    def window(self, area: int, most: int) -> list[int]:
        surf = self.surface[area]
        if not surf:
            return []
        size = self.rng.randint(1, min(most, len(surf)))
        start = self.rng.randrange(len(surf) - size + 1)
        taken = surf[start:start + size]
        del surf[start:start + size]
        return taken

    def over(self, later: int, under: list[int]) -> None:
        for e in under:
            typ = "abuts" if self.kind[e] == "masonry" else "above"
            self.relate(typ, later, e)

    def layer(self, area: int, kind: str = "deposit") -> list[int]:
        under = self.window(area, 3)
        cid = self.context(kind, area)
        self.over(cid, under)
        self.surface[area].append(cid)
        return [cid]

    def twin_layer(self, area: int, other: int) -> list[int]:
        """A layer recorded twice (split by later features), maybe in two areas."""
        # Both windows are taken before either twin joins the surface, so
        # neither twin can lie over the other.
        under_a = self.window(area, 3)
        under_b = self.window(other, 2)
        a = self.context("deposit", area)
        b = self.context("deposit", other)
        self.over(a, under_a)
        self.over(b, under_b)
        self.surface[area].append(a)
        self.surface[other].append(b)
        self.relate("same_as", b, a)
        return [a, b]

    def pit(self, area: int) -> list[int]:
        under = self.window(area, 2)
        cut = self.context("cut", area)
        for e in under:
            self.relate("cuts", cut, e)
        made = [cut]
        lower = None
        for _ in range(self.rng.randint(1, 4)):
            fill = self.context("fill", area)
            self.relate("fills", fill, cut)
            if lower is not None:
                self.relate("above", fill, lower)
            lower = fill
            made.append(fill)
        self.surface[area].append(lower)
        return made


def _redundant(b: _Builder, count: int) -> None:
    rng = b.rng
    ids = [c.id for c in b.contexts]
    tries = 0
    while count > 0 and tries < 20 * (count + 10):
        tries += 1
        x = rng.choice(ids)
        y = x
        for _ in range(rng.randint(2, 3)):
            if not b.below[y]:
                break
            y = rng.choice(b.below[y])
        if y == x or y in b.below[x]:
            continue
        before = len(b.rels)
        b.relate("above", x, y)
        count -= len(b.rels) - before


def _uncertain(b: _Builder, count: int) -> None:
    rng = b.rng
    rels = b.rels
    ids = [c.id for c in b.contexts]
    for k in range(count):
        choice = k % 4
        if choice == 0 and rels:
            # An existing relationship recorded as uncertain.
            i = rng.randrange(len(rels))
            r = rels[i]
            rels[i] = RelationshipData(r.id, r.type, r.later, r.earlier, False)
        elif choice == 1:
            # Uncertain contemporaneity between two nearby units.
            i = rng.randrange(len(ids))
            j = min(len(ids) - 1, i + rng.randint(1, 5))
            b.relate("contemporary_with", ids[j], ids[i], certain=False)
        else:
            # Uncertain order between nearby units in either direction: some
            # of these contradict the certain record.
            i = rng.randrange(len(ids))
            j = min(len(ids) - 1, i + rng.randint(1, 8))
            if rng.random() < 0.5:
                i, j = j, i
            b.relate("above", ids[j], ids[i], certain=False)


def generate_site(
    n_contexts: int,
    *,
    seed: int = 0,
    areas: int = 3,
    redundancy: float = 0.3,
    equality_rate: float = 0.02,
    uncertain_rate: float = 0.0,
) -> SyntheticSite:
    """Generate a deterministic, site-like record.

    Parameters
    ----------
    n_contexts : int
        Number of contexts (at least 1).
    seed : int
        Seed of the generator; the same arguments give the same record.
    areas : int
        Number of excavation areas, each with its own sequence.
    redundancy : float
        Redundant relationships added, as a fraction of the others (0.3 gives
        roughly a quarter of all relationships redundant, plus the natural
        redundancy of fills that fill a cut and lie above a lower fill).
    equality_rate : float
        Fraction of contexts created as "same as" twins.
    uncertain_rate : float
        Uncertain relationships added or marked, as a fraction of contexts.

    Returns
    -------
    SyntheticSite
        ``(contexts, relationships)``; unpacks like a tuple.
    """
    if n_contexts < 1:
        raise ValueError("n_contexts must be at least 1")
    if areas < 1:
        raise ValueError("areas must be at least 1")
    for name, value in (("redundancy", redundancy), ("equality_rate", equality_rate),
                        ("uncertain_rate", uncertain_rate)):
        if value < 0:
            raise ValueError(f"{name} must be non-negative")
    rng = random.Random(seed)
    b = _Builder(rng, areas)
    while len(b.contexts) < n_contexts:
        area = rng.randrange(areas)
        room = n_contexts - len(b.contexts)
        roll = rng.random()
        if roll < equality_rate and room >= 2:
            other = area if areas == 1 or rng.random() < 0.8 else rng.randrange(areas)
            b.twin_layer(area, other)
        elif roll < 0.3 and room >= 5:
            b.pit(area)
        elif roll < 0.33:
            b.layer(area, "masonry")
        else:
            b.layer(area)
    _redundant(b, int(redundancy * len(b.rels)))
    _uncertain(b, int(uncertain_rate * n_contexts))
    return SyntheticSite(tuple(b.contexts), tuple(b.rels))
