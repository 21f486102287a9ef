"""Explanations of a temporal order as chains of recorded relationships.

An edge between merged nodes stands for one or more recorded relationships;
an explanation picks one of them per edge and, where consecutive
relationships meet at different members of one merged node, spells out the
chain of equalities (found by breadth-first search) that joined them.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass
from typing import TYPE_CHECKING, Sequence

from .errors import OrderError
from .record_data import STRICT_TYPES

if TYPE_CHECKING:
    from .temporal_graph import TemporalGraph

__all__ = ["PathStep", "equality_chain", "chain_steps"]


@dataclass(frozen=True, slots=True)
class PathStep:
    """One relationship in an explanation, read "later <type> earlier".

    For an equality the two ends are given in the order the path walks them.
    ``recorded`` is False for an interpretive ordering, whose ``id`` is then
    its reference string.
    """

    id: int | str
    type: str
    later: int
    earlier: int
    later_label: str
    earlier_label: str
    recorded: bool = True

    def text(self) -> str:
        mark = f"#{self.id}" if self.recorded else f"interpretation {self.id}"
        return f"{self.later_label} {self.type.replace('_', ' ')} {self.earlier_label} ({mark})"

    def as_dict(self) -> dict:
        return {
            "id": self.id,
            "type": self.type,
            "later": self.later,
            "earlier": self.earlier,
            "later_label": self.later_label,
            "earlier_label": self.earlier_label,
            "recorded": self.recorded,
        }


def equality_chain(graph: TemporalGraph, a: int, b: int) -> list[PathStep]:
    """Shortest chain of merged equalities from context index ``a`` to ``b``.

    Breadth-first search in the undirected graph of merged equalities; the steps
    are oriented along the walk (``later`` is the end walked from).  Raises
    ``OrderError`` if the two contexts were not merged.
    """
    if a == b:
        return []
    back = {a: None}
    queue = deque([a])
    adj = graph.equality_adj
    while queue:
        x = queue.popleft()
        if x == b:
            break
        for y, rid in adj[x]:
            if y not in back:
                back[y] = (x, rid)
                queue.append(y)
    if b not in back:
        raise OrderError("contexts are not merged", code="not-merged", details={"contexts": [a, b]})
    steps = []
    y = b
    while back[y] is not None:
        x, rid = back[y]
        rel = graph.relationships[rid]
        steps.append(PathStep(rid, rel.type, graph.contexts[x].id, graph.contexts[y].id, graph.label(x), graph.label(y)))
        y = x
    steps.reverse()
    return steps


def _support(graph: TemporalGraph, e: int, prefer_later: int | None) -> tuple:
    """Pick one support of edge ``e``: (step, later ctx index, earlier ctx index).

    A strict edge is explained by a strict support; among those, one whose later
    end is ``prefer_later`` avoids an equality detour.
    """
    rels = graph.edge_relationships[e]
    if len(rels) == 1 and not graph.edge_extras[e]:
        # One support: the answer does not depend on ``prefer_later``; memoise.
        memo = graph._cache.setdefault("single_support", {})
        hit = memo.get(e)
        if hit is None:
            hit = memo[e] = _pick_support(graph, e, None)
        return hit
    return _pick_support(graph, e, prefer_later)


def _pick_support(graph: TemporalGraph, e: int, prefer_later: int | None) -> tuple:
    strict = graph.edge_strict[e]
    best = None
    index_of = graph.index_of
    for rid in graph.edge_relationships[e]:
        rel = graph.relationships[rid]
        if strict and rel.type not in STRICT_TYPES:
            continue
        cand = (rid, rel.type, index_of[rel.later], index_of[rel.earlier], True)
        if best is None or cand[2] == prefer_later:
            best = cand
            if cand[2] == prefer_later:
                break
    if best is None or (prefer_later is not None and best[2] != prefer_later):
        for k in graph.edge_extras[e]:
            x = graph.extras[k]
            if strict and not x.strict:
                continue
            cand = (x.ref, "before" if x.strict else "not_after", index_of[x.later], index_of[x.earlier], False)
            if best is None or cand[2] == prefer_later:
                best = cand
                break
    if best is None:  # weak-only supports on an edge marked strict cannot happen
        rid = graph.edge_relationships[e][0]
        rel = graph.relationships[rid]
        best = (rid, rel.type, index_of[rel.later], index_of[rel.earlier], True)
    rid, typ, later, earlier, recorded = best
    if not recorded:
        # Interpretive orderings read "earlier before later"; keep later first
        # in the step like every other one.
        typ = "after" if typ == "before" else "not_before"
    step = PathStep(rid, typ, graph.contexts[later].id, graph.contexts[earlier].id, graph.label(later),
                    graph.label(earlier), recorded)
    return step, later, earlier


def chain_steps(
    graph: TemporalGraph,
    edges: Sequence[int],
    *,
    start: int | None = None,
    end: int | None = None,
    closed: bool = False,
) -> list[PathStep]:
    """Express a chain of edges as recorded relationships, later end first.

    ``edges`` run from later to earlier: the earlier node of ``edges[k]`` is the
    later node of ``edges[k+1]``.  Where consecutive relationships meet at
    different members of one node, the equality chain between them is inserted.
    ``start``/``end`` are optional context indices the chain must begin/finish
    at; ``closed`` joins the last step back to the first (a cycle).
    """
    steps: list[PathStep] = []
    current = start
    first_later = None
    for e in edges:
        step, later, earlier = _support(graph, e, current)
        if current is not None and current != later:
            steps.extend(equality_chain(graph, current, later))
        if first_later is None:
            first_later = later
        steps.append(step)
        current = earlier
    if closed and current is not None and first_later is not None and current != first_later:
        steps.extend(equality_chain(graph, current, first_later))
    if end is not None and current is not None and current != end:
        steps.extend(equality_chain(graph, current, end))
    return steps
