"""Two-way search bounded by a topological order, and moving what it finds.

The write-time check keeps an integer position per node such that every edge
goes from a lower to a higher position.  Adding an edge ``x -> y`` with
``pos(x) >= pos(y)`` needs work: any path ``y ⇝ x`` runs through nodes whose
positions lie between the two, so a forward search from ``y`` and a backward
search from ``x`` may both stop at that window (ends included: a node tied
with ``x`` cannot be reached from ``x``, nor one tied with ``y`` reach ``y``,
so taking them in keeps the far-side bounds strictly outside).  The two searches
advance in turn, each by the number of edges it has looked at, and the first
to finish settles the question (Haeupler, Kavitha, Mathew, Sen & Tarjan
2012, "limited two-way search"):

* the searches meet, or one reaches the other's start: ``y`` reaches ``x``,
  the edge closes a cycle;
* the backward search from ``x`` finishes with the set ``B`` of nodes that
  reach ``x`` inside the window: every such node may move to just before
  ``y`` (their external predecessors all lie at or below ``pos(y)``'s
  window floor), keeping their relative order;
* symmetrically a finished forward set ``F`` may move to just after ``x``.

The cost is about twice the smaller of the two sets and their edges, however
the relationships arrive: bottom-up, top-down, or in no order at all.  Only
the smaller side is ever moved, so positions are not a permutation: ties
between unrelated nodes are allowed, and gaps between positions (they are
spaced ``SPACING`` apart when made) leave room to slot a moved set in.  When
a gap is too small for the set, every position is renumbered in order, which
is rare and costs one sort.

References
----------
Haeupler, B., Kavitha, T., Mathew, R., Sen, S. & Tarjan, R.E. 2012.
Incremental cycle detection, topological ordering, and strong component
maintenance. *ACM Transactions on Algorithms* 8(1): 3.
"""

from __future__ import annotations

__all__ = ["SPACING", "Found", "two_way_search", "placements", "renumber"]

#: Distance between the positions of newly made nodes and renumbered ones.
SPACING = 1 << 64


class Found:
    """Outcome of a two-way search for a new edge ``x -> y``.

    ``cycle`` is True when ``y`` already reaches ``x``.  Otherwise ``nodes``
    is the finished side (``forward`` True: nodes reached from ``y``, to move
    just after ``x``; False: nodes reaching ``x``, to move just before ``y``)
    and ``bound`` the position its moved nodes must stay strictly inside
    of on the far side (None when unbounded).
    """

    __slots__ = ("cycle", "forward", "nodes", "bound")

    def __init__(self, cycle: bool, forward: bool = False, nodes=None, bound=None):
        self.cycle = cycle
        self.forward = forward
        self.nodes = nodes
        self.bound = bound


CYCLE = Found(True)


def two_way_search(out: dict, inn: dict, pos: dict, x: int, y: int) -> Found:
    """Search both ways between the ends of a new edge ``x -> y`` with ``pos[x] >= pos[y]``.

    ``out``/``inn`` map a node to its successors/predecessors (any mapping
    iterated for its keys); ``pos`` holds the topological positions.
    """
    px, py = pos[x], pos[y]
    fseen = {y}
    fstack = [y]
    bseen = {x}
    bstack = [x]
    fadd, fpush, fpop = fseen.add, fstack.append, fstack.pop
    badd, bpush, bpop = bseen.add, bstack.append, bstack.pop
    fwork = bwork = 0
    fbound = None  # least position of a successor of F outside the window
    bbound = None  # greatest position of a predecessor of B outside the window
    while True:
        if fwork <= bwork:
            if not fstack:
                return Found(False, True, fseen, fbound)
            succs = out[fpop()]
            fwork += len(succs) + 1
            for w in succs:
                if w in fseen:
                    continue
                if w in bseen:
                    return CYCLE
                pw = pos[w]
                if pw <= px:
                    fadd(w)
                    fpush(w)
                elif fbound is None or pw < fbound:
                    fbound = pw
        else:
            if not bstack:
                return Found(False, False, bseen, bbound)
            preds = inn[bpop()]
            bwork += len(preds) + 1
            for w in preds:
                if w in bseen:
                    continue
                if w in fseen:
                    return CYCLE
                pw = pos[w]
                if pw >= py:
                    badd(w)
                    bpush(w)
                elif bbound is None or pw > bbound:
                    bbound = pw


def placements(pos: dict, found: Found, x: int, y: int, low: int, high: int) -> list[tuple[int, int]] | None:
    """New positions for the finished side of ``found``, or None if the gap is too small.

    The moved nodes keep their relative order.  A side with nothing outside
    it on the far end goes past ``low``/``high`` (the least and greatest
    positions in use), ``SPACING`` apart, so it ties with no node; a bounded
    side is spread evenly over its gap.
    """
    nodes = sorted(found.nodes, key=pos.__getitem__)
    k = len(nodes)
    if found.forward:
        start = pos[x]
        if found.bound is None:
            step = SPACING
        else:
            step = min(SPACING, (found.bound - start) // (k + 1))
        if step < 1:
            return None
        return [(v, start + step * (i + 1)) for i, v in enumerate(nodes)]
    end = pos[y]
    if found.bound is None:
        step = SPACING
    else:
        step = min(SPACING, (end - found.bound) // (k + 1))
    if step < 1:
        return None
    return [(v, end - step * (k - i)) for i, v in enumerate(nodes)]


def renumber(pos: dict) -> int:
    """Spread every position apart in the current order; return the greatest.

    The spacing is ``SPACING``, or more than the number of nodes if that is
    larger, so that any set fits between two neighbours afterwards.
    """
    spacing = max(SPACING, len(pos) + 1)
    position = 0
    for node in sorted(pos, key=pos.__getitem__):
        pos[node] = position
        position += spacing
    return position - spacing

