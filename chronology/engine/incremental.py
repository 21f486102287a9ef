"""Write-time order check: is a new relationship consistent with the record?

A field app posts relationships one at a time, and each must be answered in a
few milliseconds whatever the size of the record.  ``IncrementalOrder`` keeps

* a union–find over the identity equalities (certain "same as" / "bonded
  with"), with the undirected equality graph kept beside it so a merge can be
  explained as a chain of recorded equalities (Tarjan 1975);
* the digraph between merged classes, each edge listing the recorded
  relationships that support it;
* a topological order kept as integer positions: inserting ``a → b`` with
  ``pos(a) < pos(b)`` costs O(1); otherwise a two-way search bounded by the
  positions (Haeupler et al. 2012, in ``incremental_search``) decides the
  check, and the smaller of the two sets it finds is moved next to the other
  end, so the order is repaired at the cost of the search.

Whether a team posts bottom-up (earliest first), as it digs (latest first, so
every post runs against the order made so far) or in no order at all, the
work of one check is about twice the smaller side of the new edge within the
window between its ends, not the region between them as in the one-way
repair of Pearce & Kelly (2006), which is the whole column above the new
context when a record is posted as it is dug.  A refusal is explained by a
shortest path found by breadth-first search, as before.

References
----------
Haeupler, B., Kavitha, T., Mathew, R., Sen, S. & Tarjan, R.E. 2012.
Incremental cycle detection, topological ordering, and strong component
maintenance. *ACM Transactions on Algorithms* 8(1): 3.
Pearce, D.J. & Kelly, P.H.J. 2006. A dynamic topological sort algorithm for
directed acyclic graphs. *ACM Journal of Experimental Algorithmics* 11: 1.7.
Tarjan, R.E. 1975. Efficiency of a good but not linear set union algorithm.
*Journal of the ACM* 22(2): 215–225.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass

from .incremental_search import SPACING, placements, renumber, two_way_search
from .record_data import IDENTITY_TYPES, ORDERED_TYPES, RelationshipData

__all__ = ["CycleStep", "IncrementalOrder", "counts_for_order"]


@dataclass(frozen=True, slots=True)
class CycleStep:
    """One recorded relationship on a cycle, oriented along the cycle.

    Read along the cycle every step goes from a later (or equal) context to an
    earlier (or equal) one, and ``steps[i].to_context == steps[i + 1].from_context``.
    ``relationship_id`` is None for the relationship being proposed.
    """

    relationship_id: int | None
    type: str
    from_context: int
    to_context: int


def counts_for_order(rel: RelationshipData) -> bool:
    """Whether the record-level check uses ``rel``.

    Ordered relationships count whatever their certainty; identity equalities
    count only when certain; "contemporary with" never does (it is left to
    interpretations).
    """
    if rel.type in ORDERED_TYPES:
        return True
    return rel.type in IDENTITY_TYPES and rel.certain


def _ids(support) -> tuple:
    """The relationship ids of an edge's support (one id, or a tuple of them)."""
    return support if type(support) is tuple else (support,)


class IncrementalOrder:
    """Union–find plus a dynamically ordered DAG of merged classes."""

    def __init__(self) -> None:
        self._parent: dict[int, int] = {}
        self._size: dict[int, int] = {}
        # Everything held per context or per edge is an int or a tuple, never a
        # mutable container, so the garbage collector has almost nothing to
        # traverse however large the record (its full passes would otherwise
        # be the slowest part of a post).
        self._equal: dict[int, tuple[tuple[int, int], ...]] = {}
        # class -> {other class: supporting relationship id, or a tuple of them}
        self._out: dict[int, dict[int, int | tuple]] = {}
        self._in: dict[int, dict[int, int | tuple]] = {}
        self._ord: dict[int, int] = {}
        # Least and greatest positions in use (or once used): a moved set with
        # no bound on its far side goes beyond them and ties with nothing.
        self._low = self._high = 0
        # id -> (type, later, earlier)
        self._relationships: dict[int, tuple[str, int, int]] = {}
        # The last successful search of ``find_cycle``, reused by ``add``:
        # (earlier class, later class, structure version, Found).
        self._version = 0
        self._pending: tuple | None = None

    # -- building ---------------------------------------------------------
    @classmethod
    def build(cls, context_ids, relationships) -> "IncrementalOrder":
        """An order holding ``context_ids`` and the counting ``relationships``.

        Raises ``ValueError`` if the relationships are cyclic (the record is
        checked at every write, so a stored record never is).
        """
        order = cls()
        for ctx in context_ids:
            order.add_context(ctx)
        for rel in relationships:
            if not counts_for_order(rel):
                continue
            if order.find_cycle(rel) is not None:
                raise ValueError(f"relationship {rel.id} closes a cycle in a stored record")
            order.add(rel)
        return order

    def add_context(self, ctx: int) -> None:
        if ctx in self._parent:
            return
        self._parent[ctx] = ctx
        self._size[ctx] = 1
        self._out[ctx] = {}
        self._in[ctx] = {}
        self._high += SPACING
        self._ord[ctx] = self._high

    def __contains__(self, ctx: int) -> bool:
        return ctx in self._parent

    def find(self, ctx: int) -> int:
        parent = self._parent
        while parent[ctx] != ctx:
            parent[ctx] = parent[parent[ctx]]
            ctx = parent[ctx]
        return ctx

    # -- the check ----------------------------------------------------------
    def find_cycle(self, rel: RelationshipData) -> list[CycleStep] | None:
        """The cycle ``rel`` would close, as recorded relationships, or None."""
        if not counts_for_order(rel):
            return None
        for ctx in (rel.later, rel.earlier):
            if ctx not in self._parent:
                raise KeyError(ctx)
        proposed = CycleStep(rel.id, rel.type, rel.later, rel.earlier)
        later_root, earlier_root = self.find(rel.later), self.find(rel.earlier)
        if rel.type in ORDERED_TYPES:
            if later_root == earlier_root:
                return [proposed, *self._equality_chain(rel.earlier, rel.later)]
            # Adding earlier -> later closes a cycle iff later already reaches earlier.
            if not self._reaches(later_root, earlier_root):
                return None
            path = self._path(later_root, earlier_root)
            return [proposed, *self._explain(path, start=rel.earlier, end=rel.later)]
        if later_root == earlier_root:
            return None  # the two are already one unit: a redundant equality
        for source, target, first, second in (
            (later_root, earlier_root, rel.later, rel.earlier),
            (earlier_root, later_root, rel.earlier, rel.later),
        ):
            if self._ord[source] < self._ord[target] and self._reaches(source, target):
                path = self._path(source, target)
                # first ≺ … ≺ second, and the proposal says first = second.
                step = CycleStep(rel.id, rel.type, first, second)
                return [step, *self._explain(path, start=second, end=first)]
        return None

    # -- changes ------------------------------------------------------------
    def add(self, rel: RelationshipData) -> None:
        """Apply a relationship already known (by ``find_cycle``) to be consistent."""
        if not counts_for_order(rel) or rel.id in self._relationships:
            return
        self._relationships[rel.id] = (rel.type, rel.later, rel.earlier)
        if rel.type in ORDERED_TYPES:
            self._add_edge(self.find(rel.earlier), self.find(rel.later), rel.id)
        else:
            self._equal[rel.later] = (*self._equal.get(rel.later, ()), (rel.earlier, rel.id))
            self._equal[rel.earlier] = (*self._equal.get(rel.earlier, ()), (rel.later, rel.id))
            self._merge(self.find(rel.later), self.find(rel.earlier))

    def remove(self, rel_id: int) -> bool:
        """Forget a retracted relationship.

        Returns False when the structure cannot undo it in place (a retracted
        identity equality splits a class); the caller then rebuilds.
        """
        rel = self._relationships.get(rel_id)
        if rel is None:
            return True
        type_, later, earlier = rel
        if type_ not in ORDERED_TYPES:
            return False
        del self._relationships[rel_id]
        a, b = self.find(earlier), self.find(later)
        support = self._out[a].get(b)
        if support is not None:
            rest = tuple(r for r in _ids(support) if r != rel_id)
            if rest:
                self._out[a][b] = self._in[b][a] = rest[0] if len(rest) == 1 else rest
            else:
                del self._out[a][b]
                del self._in[b][a]
                self._version += 1
        return True

    # -- internals ------------------------------------------------------------
    def _path(self, source: int, target: int) -> list[tuple[int, int]] | None:
        """Shortest class path source ⇝ target as (class, next class) pairs, or None.

        Any such path runs through classes whose positions lie between the two
        ends, so the breadth-first search never leaves that region.
        """
        if self._ord[source] > self._ord[target]:
            return None
        limit = self._ord[target]
        parent = {source: source}
        queue = deque([source])
        while queue:
            node = queue.popleft()
            if node == target:
                break
            for succ in self._out[node]:
                if succ not in parent and self._ord[succ] <= limit:
                    parent[succ] = node
                    queue.append(succ)
        if target not in parent:
            return None
        hops = []
        node = target
        while node != source:
            hops.append((parent[node], node))
            node = parent[node]
        hops.reverse()
        return hops

    def _explain(self, hops, *, start: int, end: int) -> list[CycleStep]:
        """Cycle steps for a class path whose last class holds ``start``.

        The steps read from later to earlier: from ``start`` back along the
        path to ``end`` (in the first class of ``hops``), expanding merged
        classes into the equalities that joined them.
        """
        steps: list[CycleStep] = []
        current = start
        for earlier_class, later_class in reversed(hops):
            rel_id = min(_ids(self._out[earlier_class][later_class]))
            type_, later, earlier = self._relationships[rel_id]
            steps.extend(self._equality_chain(current, later))
            steps.append(CycleStep(rel_id, type_, later, earlier))
            current = earlier
        steps.extend(self._equality_chain(current, end))
        return steps

    def _equality_chain(self, source: int, target: int) -> list[CycleStep]:
        if source == target:
            return []
        parent: dict[int, tuple[int, int]] = {source: (source, -1)}
        queue = deque([source])
        while queue and target not in parent:
            node = queue.popleft()
            for other, rel_id in self._equal.get(node, ()):
                if other not in parent:
                    parent[other] = (node, rel_id)
                    queue.append(other)
        steps = []
        node = target
        while node != source:
            prev, rel_id = parent[node]
            steps.append(CycleStep(rel_id, self._relationships[rel_id][0], prev, node))
            node = prev
        steps.reverse()
        return steps

    def _reaches(self, source: int, target: int) -> bool:
        """Whether class ``source`` reaches class ``target`` (two-way search).

        When it does not, the search is kept for ``add`` of ``target -> source``.
        """
        pos = self._ord
        if pos[source] > pos[target]:
            return False
        found = two_way_search(self._out, self._in, pos, target, source)
        if found.cycle:
            return True
        self._pending = (target, source, self._version, found)
        return False

    def _add_edge(self, a: int, b: int, rel_id: int) -> None:
        support = self._out[a].get(b)
        if support is None:
            if self._ord[a] >= self._ord[b]:
                self._reorder(a, b)
            self._out[a][b] = self._in[b][a] = rel_id
            self._version += 1
        elif rel_id not in _ids(support):
            self._out[a][b] = self._in[b][a] = (*_ids(support), rel_id)

    def _reorder(self, a: int, b: int) -> None:
        """Make room for a new edge ``a → b`` against the order: move the smaller side."""
        pending, self._pending = self._pending, None
        if pending is not None and pending[:3] == (a, b, self._version):
            found = pending[3]
        else:
            found = two_way_search(self._out, self._in, self._ord, a, b)
        if found.cycle:  # callers check with find_cycle first
            raise ValueError("the relationship closes a cycle")
        moves = placements(self._ord, found, a, b, self._low, self._high)
        if moves is None:
            self._low, self._high = 0, renumber(self._ord)
            self._version += 1
            # Renumbering breaks ties, so the window itself may change: search again.
            found = two_way_search(self._out, self._in, self._ord, a, b)
            moves = placements(self._ord, found, a, b, self._low, self._high)
        for node, position in moves:
            self._ord[node] = position
        first, last = moves[0][1], moves[-1][1]
        if first < self._low:
            self._low = first
        if last > self._high:
            self._high = last

    def _merge(self, x: int, y: int) -> None:
        if x == y:
            return
        if self._size[x] < self._size[y]:
            x, y = y, x
        # Detach the smaller class, then re-insert its edges on the larger one
        # one at a time, so the topological order stays valid throughout.
        outgoing = self._out.pop(y)
        incoming = self._in.pop(y)
        for succ in outgoing:
            del self._in[succ][y]
        for pred in incoming:
            del self._out[pred][y]
        self._version += 1
        self._parent[y] = x
        self._size[x] += self._size.pop(y)
        del self._ord[y]
        for succ, support in outgoing.items():
            for rel_id in _ids(support):
                self._add_edge(x, succ, rel_id)
        for pred, support in incoming.items():
            for rel_id in _ids(support):
                self._add_edge(pred, x, rel_id)

    def is_topologically_ordered(self) -> bool:
        """Self-check used by tests: every edge goes forward in the order."""
        return all(self._ord[a] < self._ord[b] for a, succs in self._out.items() for b in succs)
