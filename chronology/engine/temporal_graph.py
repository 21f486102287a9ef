"""Compile the field record into a temporal order between merged contexts.

The physical record (contexts and relationships) is read through an
:class:`OrderPolicy` that says which relationships an interpretation uses.
Equalities are merged with union-find (Tarjan 1975) into nodes that remember
their members; ordered relationships become edges between nodes, tagged strict
or weak and listing the relationships that support them.  The undirected graph
of merged equalities is kept so that a breadth-first path can explain why two
contexts ended up in one node.

Everything is indexed by small integers and kept in lists, so that the checks
and the reduction can walk graphs of 10^5 contexts quickly.  Edges run from the
earlier node to the later node.
"""

from __future__ import annotations

import gc
from contextlib import contextmanager
from dataclasses import dataclass, field
from typing import Iterable, Sequence

from .errors import OrderError
from .order_paths import PathStep, chain_steps, equality_chain
from .order_policy import ExtraOrdering, OrderPolicy
from .record_data import EQUALITY_TYPES, ORDERED_TYPES, STRICT_TYPES, ContextData, RelationshipData
from .temporal_edges import group_edges
from .unionfind import UnionFind

__all__ = [
    "ExtraOrdering",
    "OrderPolicy",
    "PathStep",
    "TemporalGraph",
    "compile_order",
    "equality_chain",
    "chain_steps",
    "gc_paused",
]


@contextmanager
def gc_paused():
    """Pause the cyclic garbage collector while building large acyclic structures.

    Building 10^5 small lists otherwise triggers repeated full collections that
    cost more than the algorithm itself; nothing built here forms cycles.
    """
    enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if enabled:
            gc.enable()


@dataclass(eq=False)
class TemporalGraph:
    """The order between merged contexts, in integer-indexed form.

    Context indices ``0 .. n_contexts-1`` follow ascending context id; node
    indices ``0 .. n_nodes-1`` follow the smallest context of each node, so the
    graph is the same whatever order the record was given in.

    Attributes
    ----------
    contexts : tuple of ContextData
        Sorted by id.
    index_of : dict
        Context id -> context index.
    node_of : list of int
        Context index -> node index.
    members : list of list of int
        Node index -> sorted context indices.
    edge_earlier, edge_later : list of int
        Node indices of each edge (earlier -> later), edges sorted by that pair.
    edge_strict : list of bool
        Strict when at least one support is strict.
    edge_relationships : list of tuple of int
        Recorded relationship ids supporting each edge.
    edge_extras : list of tuple of int
        Indices into ``extras`` of interpretive orderings supporting each edge.
    succ, pred : list of list of int
        Per node, the edge indices leaving it (to later nodes) / entering it.
    self_loops : list of tuple
        ``(node, strict, relationship ids, extra indices)`` for orderings between
        two contexts of one node.
    equality_adj : list of sequences of tuple
        Per context index, ``(other context index, relationship id)`` for each
        merged equality (an empty tuple when there is none).
    merged : tuple of int
        Ids of the equalities that were merged.
    pending : tuple of RelationshipData
        Unused uncertain relationships and unmerged ``contemporary_with`` links,
        for interpretations to consider.
    set_aside : tuple of int
        Ids dropped by the policy.
    relationships : dict
        Id -> RelationshipData for every relationship given.
    extras : tuple of ExtraOrdering
    policy : OrderPolicy
    implied : tuple of int
        Ids of weak relationships merged because they closed a weak-only
        cycle (see ``checks.merge_implied_equalities``); they also appear in
        ``equality_adj`` so explanations can walk them.
    """

    contexts: tuple
    index_of: dict
    node_of: list
    members: list
    edge_earlier: list
    edge_later: list
    edge_strict: list
    edge_relationships: list
    edge_extras: list
    succ: list
    pred: list
    self_loops: list
    equality_adj: list
    merged: tuple
    pending: tuple
    set_aside: tuple
    relationships: dict
    extras: tuple
    policy: OrderPolicy
    implied: tuple = ()
    _cache: dict = field(default_factory=dict, repr=False)

    @property
    def n_contexts(self) -> int:
        return len(self.contexts)

    @property
    def n_nodes(self) -> int:
        return len(self.members)

    @property
    def n_edges(self) -> int:
        return len(self.edge_earlier)

    def label(self, ctx: int) -> str:
        """Label of the context at index ``ctx``."""
        c = self.contexts[ctx]
        return c.label or str(c.id)

    def node_label(self, node: int) -> str:
        """Labels of a node's members joined with ``=``."""
        return "=".join(self.label(c) for c in self.members[node])

    def node_context_ids(self, node: int) -> list[int]:
        """Context ids of a node's members, ascending."""
        return [self.contexts[c].id for c in self.members[node]]

    def node_for_id(self, context_id: int) -> int:
        """Node index of the context with id ``context_id``."""
        try:
            return self.node_of[self.index_of[context_id]]
        except KeyError:
            raise OrderError(
                f"context {context_id} is not in this record",
                code="unknown-context",
                details={"context": context_id},
            ) from None

    def successors(self, node: int) -> list[int]:
        el = self.edge_later
        return [el[e] for e in self.succ[node]]

    def predecessors(self, node: int) -> list[int]:
        ee = self.edge_earlier
        return [ee[e] for e in self.pred[node]]

    def edge_between(self, earlier: int, later: int) -> int | None:
        """Edge index from node ``earlier`` to node ``later``, or None."""
        index = self._cache.get("edge_index")
        if index is None:
            index = {(a, b): e for e, (a, b) in enumerate(zip(self.edge_earlier, self.edge_later))}
            self._cache["edge_index"] = index
        return index.get((earlier, later))


def _validate(contexts: Sequence[ContextData], relationships: Sequence[RelationshipData]):
    ids = [c.id for c in contexts]
    if len(set(ids)) != len(ids):
        seen, dup = set(), None
        for i in ids:
            if i in seen:
                dup = i
                break
            seen.add(i)
        raise OrderError(f"context {dup} is given twice", code="duplicate-context", details={"context": dup})
    known = set(ids)
    rel_ids = set()
    for r in relationships:
        if r.id in rel_ids:
            raise OrderError(
                f"relationship {r.id} is given twice", code="duplicate-relationship", details={"relationship": r.id}
            )
        rel_ids.add(r.id)
        if r.type not in ORDERED_TYPES and r.type not in EQUALITY_TYPES:
            raise OrderError(
                f"relationship {r.id} has unknown type {r.type!r}",
                code="unknown-relationship-type",
                details={"relationship": r.id, "type": r.type},
            )
        for end in (r.later, r.earlier):
            if end not in known:
                raise OrderError(
                    f"relationship {r.id} refers to unknown context {end}",
                    code="unknown-context",
                    details={"relationship": r.id, "context": end},
                )


def compile_order(
    contexts: Iterable[ContextData],
    relationships: Iterable[RelationshipData],
    policy: OrderPolicy | None = None,
) -> TemporalGraph:
    """Build the temporal order of a record under a policy.

    Parameters
    ----------
    contexts : iterable of ContextData
    relationships : iterable of RelationshipData
        Canonical direction (``later`` is the later context).
    policy : OrderPolicy, optional
        Defaults to the record policy ``OrderPolicy()``.

    Returns
    -------
    TemporalGraph

    Raises
    ------
    OrderError
        ``duplicate-context``, ``duplicate-relationship``, ``unknown-context``
        or ``unknown-relationship-type`` for malformed input.

    Notes
    -----
    Equalities are merged first with union-find (Tarjan 1975), then each used
    ordered relationship becomes an edge between the merged nodes.  Parallel
    relationships share one edge.  Runs in O((n + m) α(n)) plus sorting.

    Examples
    --------
    >>> g = compile_order([ContextData(1, "1"), ContextData(2, "2")],
    ...                   [RelationshipData(10, "above", 2, 1)])
    >>> g.n_nodes, g.n_edges, g.edge_strict
    (2, 1, [True])

    References
    ----------
    Tarjan, R. E. (1975). Efficiency of a good but not linear set union
    algorithm. Journal of the ACM 22(2), 215-225.
    """
    with gc_paused():
        return _compile(contexts, relationships, policy or OrderPolicy())


def _link(adj: list, a: int, b: int, rid: int) -> None:
    for x, y in ((a, b), (b, a)):
        if not adj[x]:
            adj[x] = []
        adj[x].append((y, rid))


def _edges_one_by_one(ordered, extras, index_of, node_of, n_nodes):
    """Edges with interpretive orderings among their supports, grouped one relationship at a time."""
    # Edges are found through an integer key earlier * n_nodes + later; their
    # supports accumulate in parallel lists (faster than a dict of objects).
    slot_of: dict[int, int] = {}
    keys: list[int] = []
    strict_of: list[bool] = []
    rels_of: list[list[int]] = []
    extras_of: list[list[int]] = []
    loops: dict[int, list] = {}
    nn = max(n_nodes, 1)

    def slot(u: int, v: int) -> int:
        key = u * nn + v
        e = slot_of.get(key)
        if e is None:
            e = slot_of[key] = len(keys)
            keys.append(key)
            strict_of.append(False)
            rels_of.append([])
            extras_of.append([])
        return e

    for r in ordered:
        u, v = node_of[index_of[r.earlier]], node_of[index_of[r.later]]
        strict = r.type in STRICT_TYPES
        if u == v:
            loop = loops.setdefault(u, [False, [], []])
            loop[0] = loop[0] or strict
            loop[1].append(r.id)
            continue
        key = u * nn + v
        e = slot_of.get(key)
        if e is None:
            slot_of[key] = len(keys)
            keys.append(key)
            strict_of.append(strict)
            rels_of.append([r.id])
            extras_of.append([])
        else:
            if strict:
                strict_of[e] = True
            rels_of[e].append(r.id)
    for k, x in enumerate(extras):
        u, v = node_of[index_of[x.earlier]], node_of[index_of[x.later]]
        if u == v:
            loop = loops.setdefault(u, [False, [], []])
            loop[0] = loop[0] or bool(x.strict)
            loop[2].append(k)
            continue
        e = slot(u, v)
        strict_of[e] = strict_of[e] or bool(x.strict)
        extras_of[e].append(k)

    order = sorted(range(len(keys)), key=keys.__getitem__)
    edge_earlier = [keys[i] // nn for i in order]
    edge_later = [keys[i] % nn for i in order]
    edge_strict = [strict_of[i] for i in order]
    edge_rels = [tuple(rels_of[i]) for i in order]
    edge_extras = [tuple(extras_of[i]) for i in order]
    succ: list[list[int]] = [[] for _ in range(n_nodes)]
    pred: list[list[int]] = [[] for _ in range(n_nodes)]
    for e, (a, b) in enumerate(zip(edge_earlier, edge_later)):
        succ[a].append(e)
        pred[b].append(e)
    return edge_earlier, edge_later, edge_strict, edge_rels, edge_extras, succ, pred, loops


def _compile(contexts, relationships, policy: OrderPolicy, implied=()) -> TemporalGraph:
    """Build the graph; ``implied`` are ids of weak relationships merged as equalities."""
    contexts = sorted(contexts, key=lambda c: c.id)
    relationships = sorted(relationships, key=lambda r: r.id)
    _validate(contexts, relationships)
    index_of = {c.id: i for i, c in enumerate(contexts)}
    for x in policy.extra_orderings:
        for end in (x.earlier, x.later):
            if end not in index_of:
                raise OrderError(
                    f"interpretive ordering {x.ref!r} refers to unknown context {end}",
                    code="unknown-context",
                    details={"ordering": x.ref, "context": end},
                )
    n = len(contexts)

    uf = UnionFind(n)
    # Most contexts have no equality: they share one empty tuple, and get a
    # list of their own on their first equality.
    equality_adj: list = [()] * n
    merged, pending, set_aside, ordered = [], [], [], []
    plain = not (policy.accept or policy.reject or policy.set_aside)
    for r in relationships:
        if plain and r.certain and r.type in ORDERED_TYPES:
            ordered.append(r)
            continue
        if r.id in policy.set_aside:
            set_aside.append(r.id)
            continue
        if not policy.uses(r):
            pending.append(r)
            continue
        if r.type in ORDERED_TYPES:
            ordered.append(r)
            continue
        a, b = index_of[r.later], index_of[r.earlier]
        if a == b:
            continue
        uf.union(a, b)
        _link(equality_adj, a, b, r.id)
        merged.append(r.id)

    index_of_rel = None
    for rid in implied:
        if index_of_rel is None:
            index_of_rel = {r.id: r for r in relationships}
        r = index_of_rel[rid]
        a, b = index_of[r.later], index_of[r.earlier]
        uf.union(a, b)
        _link(equality_adj, a, b, r.id)
    node_of = uf.labels()
    n_nodes = (max(node_of) + 1) if n else 0
    members: list[list[int]] = [[] for _ in range(n_nodes)]
    for c, v in enumerate(node_of):
        members[v].append(c)

    extras = policy.extra_orderings
    if extras:
        edge_earlier, edge_later, edge_strict, edge_rels, edge_extras, succ, pred, loops = _edges_one_by_one(
            ordered, extras, index_of, node_of, n_nodes)
    else:
        grouped = group_edges(ordered, [c.id for c in contexts], node_of, n_nodes)
        edge_earlier, edge_later, edge_strict = grouped.earlier, grouped.later, grouped.strict
        edge_rels, succ, pred, loops = grouped.relationships, grouped.succ, grouped.pred, grouped.loops
        edge_extras = [()] * len(edge_earlier)
    self_loops = [(v, s, tuple(r), tuple(x)) for v, (s, r, x) in sorted(loops.items())]

    return TemporalGraph(
        contexts=tuple(contexts),
        index_of=index_of,
        node_of=node_of,
        members=members,
        edge_earlier=edge_earlier,
        edge_later=edge_later,
        edge_strict=edge_strict,
        edge_relationships=edge_rels,
        edge_extras=edge_extras,
        succ=succ,
        pred=pred,
        self_loops=self_loops,
        equality_adj=equality_adj,
        merged=tuple(merged),
        pending=tuple(pending),
        set_aside=tuple(set_aside),
        relationships={r.id: r for r in relationships},
        extras=extras,
        policy=policy,
        implied=tuple(implied),
    )
