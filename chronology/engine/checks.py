"""Consistency checks of a compiled temporal order.

Strongly connected components (Tarjan 1972, iterative so deep sequences do not
hit Python's recursion limit) find every cycle.  Each component is explained by
one shortest cycle found by breadth-first search, written as the recorded
relationships it uses, with the equality chains inside merged nodes spelt out.
Cycles can be exponentially many, so one per component is reported.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass, field

from .errors import ContradictionError, CycleError
from .temporal_graph import PathStep, TemporalGraph, _compile, chain_steps, equality_chain, gc_paused

__all__ = [
    "Issue",
    "CheckReport",
    "check_order",
    "is_acyclic",
    "topological_order",
    "strongly_connected_components",
    "ISSUE_CODES",
    "merge_implied_equalities",
]

#: Stable issue codes and their severities.
ISSUE_CODES = {
    "cycle": "error",
    "contradiction": "error",
    "implied-equality": "warning",
    "isolated-context": "warning",
    "areas-joined-by-equality": "warning",
}

#: How many strict edges of one component are tried when looking for its
#: shortest explaining cycle (each try is one BFS over the component).
_CYCLE_TRIES = 16


@dataclass(frozen=True)
class Issue:
    """One finding of a check, with the path of relationships that shows it."""

    code: str
    severity: str
    message: str
    contexts: tuple = ()
    relationships: tuple = ()
    path: tuple = ()

    def as_dict(self) -> dict:
        return {
            "code": self.code,
            "severity": self.severity,
            "message": self.message,
            "contexts": list(self.contexts),
            "relationships": list(self.relationships),
            "path": [s.as_dict() for s in self.path],
        }


@dataclass(frozen=True)
class CheckReport:
    """Result of :func:`check_order`.

    ``ok`` is True when no issue has severity ``error``; ``acyclic`` when the
    order has no cycle at all (weak cycles included) and no strict self-loop.
    ``longest_path`` lists one context id per node along one deepest sequence,
    earliest first; it is empty when the order is not acyclic.
    """

    ok: bool
    acyclic: bool
    context_count: int
    node_count: int
    edge_count: int
    issues: tuple = ()
    longest_path_length: int = 0
    longest_path: tuple = ()
    longest_path_labels: tuple = field(default=(), compare=False)

    @property
    def errors(self) -> list[Issue]:
        return [i for i in self.issues if i.severity == "error"]

    @property
    def warnings(self) -> list[Issue]:
        return [i for i in self.issues if i.severity == "warning"]

    def as_dict(self) -> dict:
        return {
            "ok": self.ok,
            "acyclic": self.acyclic,
            "context_count": self.context_count,
            "node_count": self.node_count,
            "edge_count": self.edge_count,
            "issues": [i.as_dict() for i in self.issues],
            "longest_path_length": self.longest_path_length,
            "longest_path": list(self.longest_path),
            "longest_path_labels": list(self.longest_path_labels),
        }

    def raise_for_errors(self) -> None:
        """Raise the first error as ``CycleError`` or ``ContradictionError``."""
        for issue in self.errors:
            cls = CycleError if issue.code == "cycle" else ContradictionError
            raise cls(issue.message, details={"cycle": [s.as_dict() for s in issue.path],
                                              "contexts": list(issue.contexts)})


def _succ_nodes(graph: TemporalGraph) -> list[list[int]]:
    cached = graph._cache.get("succ_nodes")
    if cached is None:
        el = graph.edge_later
        cached = [[el[e] for e in out] for out in graph.succ]
        graph._cache["succ_nodes"] = cached
    return cached


def strongly_connected_components(graph: TemporalGraph) -> list[list[int]]:
    """Strongly connected components of the node graph (Tarjan 1972).

    Iterative, O(n + m).  Components are returned with their nodes sorted, in
    the order Tarjan's algorithm completes them (a reverse topological order of
    the condensation).

    References
    ----------
    Tarjan, R. E. (1972). Depth-first search and linear graph algorithms.
    SIAM Journal on Computing 1(2), 146-160.
    """
    succ = _succ_nodes(graph)
    n = len(succ)
    index = [-1] * n
    low = [0] * n
    on_stack = [False] * n
    stack: list[int] = []
    comps: list[list[int]] = []
    counter = 0
    for root in range(n):
        if index[root] >= 0:
            continue
        work = [(root, 0)]
        index[root] = low[root] = counter
        counter += 1
        stack.append(root)
        on_stack[root] = True
        while work:
            v, i = work[-1]
            out = succ[v]
            if i < len(out):
                work[-1] = (v, i + 1)
                w = out[i]
                if index[w] < 0:
                    index[w] = low[w] = counter
                    counter += 1
                    stack.append(w)
                    on_stack[w] = True
                    work.append((w, 0))
                elif on_stack[w] and index[w] < low[v]:
                    low[v] = index[w]
                continue
            work.pop()
            if work:
                u = work[-1][0]
                if low[v] < low[u]:
                    low[u] = low[v]
            if low[v] == index[v]:
                comp = []
                while True:
                    w = stack.pop()
                    on_stack[w] = False
                    comp.append(w)
                    if w == v:
                        break
                comp.sort()
                comps.append(comp)
    return comps


def _kahn(graph: TemporalGraph) -> list[int]:
    """Nodes in topological order (earliest first); shorter than n if cyclic."""
    succ = _succ_nodes(graph)
    indeg = [len(p) for p in graph.pred]
    queue = deque(v for v in range(len(succ)) if indeg[v] == 0)
    order = []
    append = order.append
    while queue:
        v = queue.popleft()
        append(v)
        for w in succ[v]:
            indeg[w] -= 1
            if indeg[w] == 0:
                queue.append(w)
    return order


def _strict_self_loops(graph: TemporalGraph) -> list:
    return [loop for loop in graph.self_loops if loop[1]]


def is_acyclic(graph: TemporalGraph) -> bool:
    """True when the order has no cycle (weak ones included) and no strict self-loop."""
    if _strict_self_loops(graph):
        return False
    return len(_kahn(graph)) == graph.n_nodes


def topological_order(graph: TemporalGraph) -> list[int]:
    """Node indices, earliest first (Kahn 1962), ties broken by node index order.

    Raises
    ------
    CycleError
        If the order is not acyclic; run :func:`check_order` for explanations.

    References
    ----------
    Kahn, A. B. (1962). Topological sorting of large networks.
    Communications of the ACM 5(11), 558-562.
    """
    cached = graph._cache.get("topo")
    if cached is not None:
        return cached
    order = _kahn(graph)
    if len(order) != graph.n_nodes or _strict_self_loops(graph):
        raise CycleError("the order has a cycle", details={"nodes": graph.n_nodes, "ordered": len(order)})
    graph._cache["topo"] = order
    return order


def _shortest_cycle(graph: TemporalGraph, comp: list[int], strict_only: bool) -> list[int]:
    """Edge indices of a shortest cycle in ``comp`` through a (strict) edge.

    Returned as a chain from later to earlier, ready for :func:`chain_steps`.
    """
    in_comp = set(comp)
    el, ee = graph.edge_later, graph.edge_earlier
    # Each try is a BFS over the whole component; big components get few.
    tries = _CYCLE_TRIES if len(comp) <= 2000 else 2
    candidates = []
    for u in comp:
        for e in graph.succ[u]:
            if el[e] in in_comp and (graph.edge_strict[e] or not strict_only):
                candidates.append(e)
                if len(candidates) >= tries:
                    break
        if len(candidates) >= tries:
            break
    best = None
    for e0 in candidates:
        start, goal = el[e0], ee[e0]
        back = {start: None}
        queue = deque([start])
        while queue and goal not in back:
            x = queue.popleft()
            for e in graph.succ[x]:
                y = el[e]
                if y in in_comp and y not in back:
                    back[y] = e
                    queue.append(y)
        cycle = [e0]
        y = goal
        while back[y] is not None:
            e = back[y]
            cycle.append(e)
            y = ee[e]
        if best is None or len(cycle) < len(best):
            best = cycle
    return _as_descending_chain(graph, best)


def _as_descending_chain(graph: TemporalGraph, edges: list[int]) -> list[int]:
    """Order a cycle's edges so each edge's earlier node is the next one's later node."""
    by_later = {graph.edge_later[e]: e for e in edges}
    chain = [edges[0]]
    while len(chain) < len(edges):
        chain.append(by_later[graph.edge_earlier[chain[-1]]])
    return chain


def _ids_of(graph: TemporalGraph, steps: list[PathStep]) -> tuple:
    return tuple(s.id for s in steps if s.recorded)


def _has_equality(steps: list[PathStep]) -> bool:
    return any(s.type in ("same_as", "bonded_with", "contemporary_with") for s in steps)


def _path_text(steps: list[PathStep]) -> str:
    return " → ".join(s.text() for s in steps)


def _component_issue(graph: TemporalGraph, comp: list[int]) -> Issue:
    in_comp = set(comp)
    strict = any(graph.edge_strict[e] for u in comp for e in graph.succ[u] if graph.edge_later[e] in in_comp)
    chain = _shortest_cycle(graph, comp, strict_only=strict)
    steps = chain_steps(graph, chain, closed=True)
    contexts = tuple(graph.contexts[c].id for v in comp for c in graph.members[v])
    if not strict:
        return Issue(
            "implied-equality",
            "warning",
            "Only weak relationships close this cycle, so its contexts must be contemporary: " + _path_text(steps),
            contexts,
            _ids_of(graph, steps),
            tuple(steps),
        )
    code = "contradiction" if _has_equality(steps) else "cycle"
    what = "An equality joins contexts that are ordered" if code == "contradiction" else "The relationships form a cycle"
    return Issue(code, "error", f"{what}: " + _path_text(steps), contexts, _ids_of(graph, steps), tuple(steps))


def _self_loop_issue(graph: TemporalGraph, loop) -> Issue:
    node, _strict, rel_ids, extra_ids = loop
    index_of = graph.index_of
    steps: list[PathStep] = []
    for rid in rel_ids:
        rel = graph.relationships[rid]
        if rel.is_strict:
            later, earlier = index_of[rel.later], index_of[rel.earlier]
            steps.append(PathStep(rid, rel.type, rel.later, rel.earlier, graph.label(later), graph.label(earlier)))
            break
    else:
        x = next(graph.extras[k] for k in extra_ids if graph.extras[k].strict)
        later, earlier = index_of[x.later], index_of[x.earlier]
        steps.append(PathStep(x.ref, "after", x.later, x.earlier, graph.label(later), graph.label(earlier), False))
    steps.extend(equality_chain(graph, earlier, later))
    contexts = tuple(graph.contexts[c].id for c in graph.members[node])
    code = "contradiction" if len(steps) > 1 else "cycle"
    what = "An equality joins contexts that are ordered" if code == "contradiction" else "A context is recorded as later than itself"
    return Issue(code, "error", f"{what}: " + _path_text(steps), contexts, _ids_of(graph, steps), tuple(steps))


def _isolated_issues(graph: TemporalGraph) -> list[Issue]:
    looped = {loop[0] for loop in graph.self_loops}
    out = []
    for v in range(graph.n_nodes):
        if graph.succ[v] or graph.pred[v] or v in looped:
            continue
        for c in graph.members[v]:
            ctx = graph.contexts[c]
            out.append(Issue(
                "isolated-context", "warning",
                f"{graph.label(c)} has no ordering relationship to any other context",
                (ctx.id,),
            ))
    return out


def _area_issues(graph: TemporalGraph) -> list[Issue]:
    out = []
    for v, members in enumerate(graph.members):
        if len(members) < 2:
            continue
        first_of_area: dict[str, int] = {}
        for c in members:
            area = graph.contexts[c].area
            if area and area not in first_of_area:
                first_of_area[area] = c
        if len(first_of_area) < 2:
            continue
        firsts = list(first_of_area.values())
        steps = equality_chain(graph, firsts[0], firsts[1])
        areas = ", ".join(sorted(first_of_area))
        out.append(Issue(
            "areas-joined-by-equality", "warning",
            f"Contexts in areas {areas} are one unit only through equalities: " + _path_text(steps),
            tuple(graph.contexts[c].id for c in members),
            _ids_of(graph, steps),
            tuple(steps),
        ))
    return out


def _longest_path(graph: TemporalGraph, order: list[int]) -> list[int]:
    """Nodes of one longest path (by edge count), earliest first."""
    n = graph.n_nodes
    if n == 0:
        return []
    depth = [0] * n
    parent = [-1] * n
    succ = _succ_nodes(graph)
    for v in order:
        dv = depth[v] + 1
        for w in succ[v]:
            if dv > depth[w]:
                depth[w] = dv
                parent[w] = v
    end = max(range(n), key=depth.__getitem__)
    path = [end]
    while parent[path[-1]] >= 0:
        path.append(parent[path[-1]])
    path.reverse()
    return path


def check_order(graph: TemporalGraph) -> CheckReport:
    """Check a compiled order and explain every problem as a path.

    Parameters
    ----------
    graph : TemporalGraph

    Returns
    -------
    CheckReport
        Issues with codes from :data:`ISSUE_CODES`:

        - ``cycle`` (error): a component holding a strict edge, explained by
          one shortest cycle of recorded relationships;
        - ``contradiction`` (error): the same when the explanation passes
          through an equality, or a strict ordering between two contexts of
          one merged node;
        - ``implied-equality`` (warning): a cycle of weak edges only;
        - ``isolated-context`` (warning): a context with no ordering;
        - ``areas-joined-by-equality`` (warning): a merged node whose members
          lie in more than one area.

    Notes
    -----
    Components by Tarjan (1972), O(n + m); each is explained by a BFS over the
    component from up to a fixed number of its strict edges.

    References
    ----------
    Tarjan, R. E. (1972). Depth-first search and linear graph algorithms.
    SIAM Journal on Computing 1(2), 146-160.
    """
    if not isinstance(graph, TemporalGraph):
        raise TypeError("check_order expects a TemporalGraph")
    with gc_paused():
        return _check(graph)


def _check(graph: TemporalGraph) -> CheckReport:
    issues: list[Issue] = []
    order = _kahn(graph)
    cyclic = len(order) != graph.n_nodes
    if cyclic:
        for comp in strongly_connected_components(graph):
            if len(comp) > 1:
                issues.append(_component_issue(graph, comp))
    for loop in _strict_self_loops(graph):
        issues.append(_self_loop_issue(graph, loop))
    issues.extend(_area_issues(graph))
    issues.extend(_isolated_issues(graph))
    acyclic = not cyclic and not _strict_self_loops(graph)
    path = _longest_path(graph, order) if acyclic else []
    if acyclic:
        graph._cache["topo"] = order
    return CheckReport(
        ok=not any(i.severity == "error" for i in issues),
        acyclic=acyclic,
        context_count=graph.n_contexts,
        node_count=graph.n_nodes,
        edge_count=graph.n_edges,
        issues=tuple(issues),
        longest_path_length=max(len(path) - 1, 0),
        longest_path=tuple(graph.contexts[graph.members[v][0]].id for v in path),
        longest_path_labels=tuple(graph.node_label(v) for v in path),
    )


def merge_implied_equalities(graph: TemporalGraph) -> TemporalGraph:
    """Merge every cycle of weak edges into one node, as the order implies.

    ``a ⪯ b ⪯ a`` means ``a = b``: each strongly connected component (Tarjan
    1972) made of weak edges only is merged, its weak relationships recorded in
    ``graph.implied``.  Returns ``graph`` itself when there is nothing to merge.

    Raises
    ------
    CycleError
        If a component holds a strict edge (that cycle is a contradiction and
        cannot be merged away).
    """
    in_comp: dict[int, int] = {}
    comps = [c for c in strongly_connected_components(graph) if len(c) > 1]
    for k, comp in enumerate(comps):
        for v in comp:
            in_comp[v] = k
    implied = []
    for e, (a, b) in enumerate(zip(graph.edge_earlier, graph.edge_later)):
        ka = in_comp.get(a)
        if ka is None or ka != in_comp.get(b):
            continue
        if graph.edge_strict[e]:
            raise CycleError("a cycle with a strict relationship cannot be merged",
                             details={"contexts": graph.node_context_ids(a) + graph.node_context_ids(b)})
        implied.extend(graph.edge_relationships[e])
    if not implied:
        return graph
    with gc_paused():
        return _compile(graph.contexts, graph.relationships.values(), graph.policy, tuple(graph.implied) + tuple(implied))
