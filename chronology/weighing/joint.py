"""A version's alternatives weighed jointly: many uncertain relationships at once.

With more undecided items than can be weighed one by one
(:data:`chronology.weighing.candidates.MAX_ALTERNATIVE_ITEMS`), or when
asked, the uncertain relationships are weighed together from one
encompassing model (Klugkist, Kato & Hoijtink 2005;
:mod:`chronology.engine.encompassing`): the version with every undecided
relationship left out, whose posterior and prior draws each carry one
indicator per relationship.  Undecided *equalities* merge two contexts into
one event, which is not a restriction of the encompassing model, so they
are still enumerated: each of their ``2^e`` decisions is a *family*, one
background job whose marginal likelihood (stepping-stone sampling) anchors
the Bayes factors of its ``2^u`` readings of the uncertain relationships.

Each relationship is one edge between its two contexts: their events, or
for a context that is not an event (an undated deposit, say) a node of the
*skeleton*, the record's order between such contexts and the events
(:func:`skeleton_of`).  Each relationship is also compiled alone, and the
model must differ from the encompassing one in its order only, by what the
edge implies; otherwise the reading is not a restriction and the method
does not apply.
"""

from __future__ import annotations

import networkx as nx

from chronology.engine.encompassing import MAX_RESTRICTIONS, Restriction, induced_pairs
from chronology.runs.compile import CompiledModel, ModelRefused
from chronology.runs.sources import version_label

from .variants import Decisions, compile_variant, decision_sets, order_of

__all__ = ["MAX_JOINT_ITEMS", "MAX_JOINT_EQUALITIES", "JOINT_LIMITS", "JOINT_DEFAULTS", "families",
           "edges_of", "skeleton_of", "check_family", "restrictions_of", "reading_name"]

#: Most uncertain relationships weighed jointly in one family (2^10 readings).
MAX_JOINT_ITEMS = MAX_RESTRICTIONS
#: Most undecided equalities enumerated beside them (2^4 families).
MAX_JOINT_EQUALITIES = 4
#: Settings of the joint runs: name -> (least, greatest), and their defaults.
JOINT_LIMITS = {"joint_chains": (2, 16), "joint_iterations": (1000, 200000), "joint_warmup": (0, 20000)}
JOINT_DEFAULTS = {"joint_chains": 4, "joint_iterations": 20000, "joint_warmup": 2000}


def _words(items, accepted) -> str:
    return ", ".join(f"#{rid} {'accepted' if rid in accepted else 'not accepted'}" for rid, _k in items)


def reading_name(label: str, items, accepted) -> str:
    """The name of one reading, in the words the one-by-one weighing uses."""
    return f"{label}: {_words(items, set(accepted))}"


def families(version, items) -> list[dict]:
    """One candidate per decision of the undecided equalities, each weighing the uncertain relationships jointly.

    Raises
    ------
    ModelRefused
        ``too-many-alternatives`` (422) beyond the joint limits.
    """
    equalities = [(rid, k) for rid, k in items if k == "equality"]
    uncertain = [rid for rid, k in items if k == "uncertain"]
    if not uncertain:
        raise ModelRefused("no-joint-alternatives", "the version leaves no uncertain relationship undecided: only "
                           "its equalities, which are weighed one by one", status=422, field="method")
    if len(uncertain) > MAX_JOINT_ITEMS or len(equalities) > MAX_JOINT_EQUALITIES:
        raise ModelRefused(
            "too-many-alternatives",
            f"the version leaves {len(uncertain)} uncertain relationships and {len(equalities)} equalities "
            f"undecided: at most {MAX_JOINT_ITEMS} relationships are weighed jointly and at most "
            f"{MAX_JOINT_EQUALITIES} equalities beside them; decide some first",
            status=422, field="version", undecided=[rid for rid, _k in items])
    from chronology.interpretations.services import relationship_texts

    label = version_label(version)
    texts = {str(k): v for k, v in relationship_texts(version.project, version.record_revision, uncertain).items()}
    out = []
    for accepted, rejected in decision_sets(equalities):
        words = _words(equalities, set(accepted))
        name = f"{label}: {words}; " if words else f"{label}: "
        out.append({"name": name + f"{len(uncertain)} uncertain relationships weighed jointly",
                    "version": version.pk, "label": label, "accepted": accepted, "rejected": rejected + uncertain,
                    "joint": uncertain, "texts": texts, "items": [list(i) for i in items]})
    return out


def _same_but_order(a: CompiledModel, b: CompiledModel) -> bool:
    ma, mb = a.model, b.model

    def events(m):  # the compiler lists events along the order, which the accepted edge may change
        return sorted((e.key, e.kind, e.phase or "", tuple(ev.key for ev in e.evidence)) for e in m.events)

    def phases(m):
        return [(p.key, p.start, p.end, p.members, p.arrangement_next) for p in m.phases]

    return (events(ma) == events(mb) and phases(ma) == phases(mb) and ma.prior == mb.prior
            and (ma.range_lo, ma.range_hi) == (mb.range_lo, mb.range_hi))


def _not_a_restriction(rid: int, why: str) -> ModelRefused:
    return ModelRefused("not-a-restriction", f"relationship #{rid} cannot be weighed jointly: {why}; decide it "
                        "or weigh the alternatives one by one", status=422, field="version", relationship=rid)


def _node(context: int, events: dict) -> str:
    # a context the model has no event for is a node of the skeleton only
    return events.get(context, f"context:{context}")


def edges_of(family: dict, encompassing: CompiledModel, relationships) -> dict[int, tuple[str, str]]:
    """Each jointly weighed relationship as one order edge (earlier node, later node).

    A context with an event is its event; any other context is a skeleton
    node ``context:<id>`` (:func:`skeleton_of` orders it against the events).

    Raises
    ------
    ModelRefused
        ``not-a-restriction`` (422) when a relationship's two contexts are one event.
    """
    by_id = {r.id: r for r in relationships}
    events = encompassing.context_events
    out = {}
    for rid in family["joint"]:
        rel = by_id[rid]
        a, b = _node(rel.earlier, events), _node(rel.later, events)
        if a == b:
            raise _not_a_restriction(rid, "its two contexts are one event under this reading")
        out[rid] = (a, b)
    return out


def skeleton_of(version, family: dict, encompassing: CompiledModel, edges: dict) -> list[tuple[str, str]]:
    """The encompassing order between the skeleton's contexts and the events, as edges between their nodes.

    It is the order the whole record induces on the event contexts and the
    relationships' other contexts together (``induced_order``) under the
    family's decisions with every jointly weighed relationship left out,
    keeping the pairs that touch a skeleton node.  A skeleton context merged
    with an event context is that event.
    """
    from chronology.engine.induced import induced_classes, induced_order

    extras = sorted({int(n.split(":")[1]) for e in edges.values() for n in e if n.startswith("context:")})
    if not extras:
        return []
    graph, _contexts = order_of(version, Decisions(frozenset(family["accepted"]), frozenset(family["rejected"])))
    events = dict(encompassing.context_events)
    chosen = sorted(set(events) | set(extras))
    for group in induced_classes(graph, chosen):
        known = [events[c] for c in group if c in events]
        for c in group:
            events.setdefault(c, known[0] if known else f"context:{min(group)}")
    out = set()
    for a, b, _strict in induced_order(graph, chosen):
        na, nb = _node(a, events), _node(b, events)
        if na != nb and (na.startswith("context:") or nb.startswith("context:")):
            out.add((na, nb))
    return sorted(out)


def check_family(project, family: dict, encompassing: CompiledModel) -> None:
    """Refuse now (422) a family whose relationships cannot be weighed jointly (see :func:`edges_of`)."""
    from chronology.runs.sources import find_version

    from .variants import record_of

    edges_of(family, encompassing, record_of(find_version(project, family["version"]))[4])


def _implied(graph: nx.DiGraph, extra, pairs) -> bool:
    g = graph.copy()
    g.add_edges_from(extra)
    return all(g.has_node(a) and g.has_node(b) and nx.has_path(g, a, b) for a, b in pairs)


def restrictions_of(version, family: dict, encompassing: CompiledModel, range_=None):
    """Each jointly weighed relationship as the edge it adds to ``encompassing``, and the skeleton.

    Each is compiled alone as well: a relationship whose acceptance alone is
    refused (a cycle with the phases' order, say) is set apart with the
    reason, and for the others the compiled model must differ from the
    encompassing one in its order only (same events, evidence, phases and
    range), by exactly the event pairs that the edge implies with the
    encompassing order and the skeleton (:func:`chronology.engine.encompassing.induced_pairs`).

    Returns
    -------
    (list of Restriction, list of edges, dict)
        The restrictions (named by relationship id), the skeleton
        (:func:`skeleton_of`) and the relationships whose acceptance alone is
        refused, id -> ``{"code", "reason"}``.

    Raises
    ------
    ModelRefused
        ``not-a-restriction`` (422) naming the relationship.
    """
    from .variants import record_of

    relationships = record_of(version)[4]
    edges = edges_of(family, encompassing, relationships)
    skeleton = skeleton_of(version, family, encompassing, edges)
    base = nx.DiGraph([(c.earlier, c.later) for c in encompassing.model.constraints])
    base.add_nodes_from(encompassing.model.event_keys)
    base.add_edges_from(skeleton)
    events = set(encompassing.model.event_keys)
    equal_yes, equal_no = set(family["accepted"]), set(family["rejected"]) - set(family["joint"])
    out, refused = [], {}
    for rid in family["joint"]:
        decisions = Decisions(frozenset(equal_yes | {rid}), frozenset(equal_no | set(family["joint"]) - {rid}))
        try:
            one = compile_variant(version, decisions=decisions, range_=range_)
        except ModelRefused as exc:
            refused[rid] = {"code": exc.code, "reason": exc.message}
            continue
        if not _same_but_order(encompassing, one):
            raise _not_a_restriction(rid, "accepting it changes the model's events, phases or range, not only its "
                                     "order")
        added = [(c.earlier, c.later) for c in one.model.constraints]
        one_graph = nx.DiGraph(added)
        one_graph.add_nodes_from(one.model.event_keys)
        enc_pairs = [(c.earlier, c.later) for c in encompassing.model.constraints]
        needed = induced_pairs(base, events, [edges[rid]])
        if not (_implied(base, [edges[rid]], added) and _implied(one_graph, [], enc_pairs + needed)):
            raise _not_a_restriction(rid, "accepting it orders the events otherwise than its edge implies")
        out.append(Restriction(str(rid), (edges[rid],)))
    return out, skeleton, refused
