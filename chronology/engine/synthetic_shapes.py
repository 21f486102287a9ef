"""Deterministic records of hard shapes, for tests and benchmarks of the order engine.

Each shape takes a habit of field recording to its extreme, where a naive
check or reduction grows quadratically:

* ``sequence_over_bottom``: one long sequence with every context also recorded
  above the bottom one ("above natural" on every lowest layer), so every
  redundant relationship is implied only by a path the length of the record;
* ``same_as_class``: a huge "same as" class (one layer recorded piece by piece)
  between two sequences, with relationships to the class that are implied
  through it;
* ``side_by_side``: contexts side by side over one common bottom and under one
  common top (a wide, shallow record);
* ``deep_site``: deep many-area records in which pits and wall foundations cut
  through many layers, each cut recorded against every layer it cuts.

Contexts are returned in id order and relationships in canonical direction
(``later`` is the later context), as :class:`~.synthetic_site.SyntheticSite`.
"""

from __future__ import annotations

import random

from .record_data import ContextData, RelationshipData
from .synthetic_site import SyntheticSite

__all__ = ["SHAPES", "sequence_over_bottom", "same_as_class", "side_by_side", "deep_site", "generate_shape"]


class _Record:
    def __init__(self) -> None:
        self.contexts: list[ContextData] = []
        self.rels: list[RelationshipData] = []

    def context(self, kind: str = "deposit", area: int = 0) -> int:
        cid = 1001 + len(self.contexts)
        self.contexts.append(ContextData(cid, str(cid), kind, f"Area {area + 1}"))
        return cid

    def relate(self, typ: str, later: int, earlier: int) -> None:
        self.rels.append(RelationshipData(len(self.rels) + 1, typ, later, earlier))

    def done(self) -> SyntheticSite:
        return SyntheticSite(tuple(self.contexts), tuple(self.rels))


def sequence_over_bottom(n_contexts: int, *, seed: int = 0) -> SyntheticSite:
    """A sequence of ``n_contexts`` with every context above the bottom one too."""
    r = _Record()
    ids = [r.context() for _ in range(max(n_contexts, 2))]
    for lower, upper in zip(ids, ids[1:]):
        r.relate("above", upper, lower)
    for upper in ids[2:]:
        r.relate("above", upper, ids[0])
    return r.done()


def same_as_class(n_contexts: int, *, seed: int = 0) -> SyntheticSite:
    """Half the contexts in one "same as" chain between two sequences, with redundant links.

    A fifth of the record's size in redundant relationships tie class members
    to lower layers of the sequence below or upper layers of the one above.
    """
    rng = random.Random(seed)
    n = max(n_contexts, 8)
    r = _Record()
    side = n // 4
    below = [r.context() for _ in range(side)]
    members = [r.context() for _ in range(n - 2 * side)]
    above = [r.context() for _ in range(side)]
    for seq in (below, above):
        for lower, upper in zip(seq, seq[1:]):
            r.relate("above", upper, lower)
    for a, b in zip(members, members[1:]):
        r.relate("same_as", b, a)
    r.relate("above", members[0], below[-1])
    r.relate("above", above[0], members[-1])
    for k in range(n // 5):
        if k % 2:
            r.relate("above", rng.choice(members), below[rng.randrange(side - 1)])
        else:
            r.relate("above", above[1 + rng.randrange(side - 1)], rng.choice(members))
    return r.done()


def side_by_side(n_contexts: int, *, seed: int = 0) -> SyntheticSite:
    """``n_contexts - 2`` contexts each above one bottom and below one top; the top also above the bottom."""
    r = _Record()
    bottom = r.context()
    middle = [r.context() for _ in range(max(n_contexts - 2, 1))]
    top = r.context()
    for c in middle:
        r.relate("above", c, bottom)
        r.relate("above", top, c)
    r.relate("above", top, bottom)  # redundant through any middle context
    return r.done()


def deep_site(n_contexts: int, *, seed: int = 0, areas: int = 8) -> SyntheticSite:
    """Deep sequences in ``areas`` areas, with pits and walls cut through many layers.

    Each area is a stack of layers (each above one or two units at its
    surface).  A pit's cut or a wall's foundation cut is recorded against
    every one of the last 5–60 layers it cuts through, so most of those
    relationships are redundant and implied by long paths; fills lie in the
    cut, walls stand in their trench and later layers abut them.  One layer
    in twenty spreads over a neighbouring area as well.
    """
    rng = random.Random(seed)
    r = _Record()
    stacks: list[list[int]] = [[] for _ in range(areas)]
    surface: list[list[int]] = [[] for _ in range(areas)]

    def lay(area: int, kind: str = "deposit") -> int:
        cid = r.context(kind, area)
        under = surface[area][-rng.randint(1, 2):]
        for e in under:
            r.relate("abuts" if r.contexts[e - 1001].kind == "masonry" else "above", cid, e)
        surface[area] = [u for u in surface[area] if u not in under][-3:] + [cid]
        stacks[area].append(cid)
        return cid

    while len(r.contexts) < n_contexts:
        area = rng.randrange(areas)
        roll = rng.random()
        room = n_contexts - len(r.contexts)
        if roll < 0.06 and room >= 4 and len(stacks[area]) > 5:
            cut = r.context("cut", area)
            for layer in stacks[area][-rng.randint(5, 60):]:
                r.relate("cuts", cut, layer)
            if rng.random() < 0.5:
                inner = r.context("masonry", area)
                r.relate("fills", inner, cut)
            else:
                inner = r.context("fill", area)
                r.relate("fills", inner, cut)
                upper = r.context("fill", area)
                r.relate("fills", upper, cut)
                r.relate("above", upper, inner)
                inner = upper
            surface[area].append(inner)
        elif roll < 0.11 and areas > 1 and surface[(area + 1) % areas]:
            cid = lay(area)
            other = (area + 1) % areas
            r.relate("above", cid, surface[other][-1])
            surface[other].append(cid)
        else:
            lay(area, "masonry" if roll > 0.98 else "deposit")
    return r.done()


#: Shape name -> generator ``f(n_contexts, seed=...)``.
SHAPES = {
    "sequence_over_bottom": sequence_over_bottom,
    "same_as_class": same_as_class,
    "side_by_side": side_by_side,
    "deep_site": deep_site,
}


def generate_shape(shape: str, n_contexts: int, *, seed: int = 0) -> SyntheticSite:
    """The record of ``shape`` (a key of :data:`SHAPES`) with ``n_contexts`` contexts."""
    try:
        make = SHAPES[shape]
    except KeyError:
        raise ValueError(f"unknown shape {shape!r}; one of {sorted(SHAPES)}") from None
    return make(int(n_contexts), seed=seed)
