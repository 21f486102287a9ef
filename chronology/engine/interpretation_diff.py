"""Differences between two interpretation documents, structured and as text.

An interpretation document (see ``chronology.interpretations.content``) is
plain JSON: phases in order, the phase of each context, decisions on
equalities and uncertain relationships, relationships set aside, interpretive
orderings, how each piece of evidence is used, undated contexts to estimate and
the questions asked of the model.  :func:`diff_interpretations` compares two of
them field by field; :func:`diff_text` writes the result as short sentences,
with context labels where the caller gives them.

The comparison is by identity, not position: phases by key, contexts and
relationships by id, evidence by reference, questions by their canonical
content.  A phase whose key is unchanged but whose name differs is *renamed*;
phases present in both whose relative order differs are *reordered* (the two
key sequences are reported).  Decisions absent from a document count as the
value ``"default"`` unless the caller fills in the effective defaults first.
Documents stored under the earlier question names are read in the current
ones first (:mod:`chronology.engine.legacy_names`), so a renamed question is
not reported as a change.
"""

from __future__ import annotations

import json
from typing import Mapping

from chronology.engine.interval_priors import DISTRIBUTIONS, describe
from chronology.engine.legacy_names import read_content

__all__ = ["diff_interpretations", "diff_text", "is_empty_diff"]

_DECISION_LISTS = (("equalities", "decision"), ("uncertain", "decision"))


def _require_document(doc, name: str) -> dict:
    if not isinstance(doc, Mapping):
        raise TypeError(f"{name} must be an interpretation document (a mapping)")
    return dict(doc)


def _canon(value) -> str:
    return json.dumps(value, sort_keys=True, separators=(",", ":"))


def _phases(doc: dict) -> list[dict]:
    return [p for p in doc.get("phases") or [] if isinstance(p, Mapping) and "key" in p]


def _diff_phases(old: dict, new: dict) -> dict:
    a, b = _phases(old), _phases(new)
    by_a = {p["key"]: p for p in a}
    by_b = {p["key"]: p for p in b}
    added = [{"key": p["key"], "name": p.get("name", ""), "position": i} for i, p in enumerate(b) if p["key"] not in by_a]
    removed = [{"key": p["key"], "name": p.get("name", ""), "position": i} for i, p in enumerate(a) if p["key"] not in by_b]
    renamed, regrouped, arrangement, durations = [], [], [], []
    for p in b:
        q = by_a.get(p["key"])
        if q is None:
            continue
        if q.get("name", "") != p.get("name", ""):
            renamed.append({"key": p["key"], "from": q.get("name", ""), "to": p.get("name", "")})
        if q.get("group") != p.get("group"):
            regrouped.append({"key": p["key"], "from": q.get("group"), "to": p.get("group")})
        if (q.get("to_next") or None) != (p.get("to_next") or None):
            arrangement.append({"key": p["key"], "from": q.get("to_next"), "to": p.get("to_next")})
        if q.get("duration") != p.get("duration"):
            durations.append({"key": p["key"], "from": q.get("duration"), "to": p.get("duration")})
    common_a = [p["key"] for p in a if p["key"] in by_b]
    common_b = [p["key"] for p in b if p["key"] in by_a]
    reordered = {"from": common_a, "to": common_b} if common_a != common_b else None
    return {
        "added": added,
        "removed": removed,
        "renamed": renamed,
        "regrouped": regrouped,
        "arrangement_changed": arrangement,
        "duration_prior_changed": durations,
        "reordered": reordered,
    }


def _assignment(doc: dict) -> dict[int, str]:
    return {int(x["context"]): x["phase"] for x in doc.get("assignments") or []}


def _diff_contexts(old: dict, new: dict) -> dict:
    a, b = _assignment(old), _assignment(new)
    moved = [{"context": c, "from": a[c], "to": b[c]} for c in sorted(set(a) & set(b)) if a[c] != b[c]]
    phased = [{"context": c, "phase": b[c]} for c in sorted(set(b) - set(a))]
    unphased = [{"context": c, "phase": a[c]} for c in sorted(set(a) - set(b))]
    return {"moved": moved, "phased": phased, "unphased": unphased}


def _decisions(doc: dict, name: str) -> dict[int, str]:
    return {int(x["relationship"]): x.get("decision", "default") for x in doc.get(name) or []}


def _diff_decisions(old: dict, new: dict, name: str) -> dict:
    a, b = _decisions(old, name), _decisions(new, name)
    changed = []
    for rid in sorted(set(a) | set(b)):
        before, after = a.get(rid, "default"), b.get(rid, "default")
        if before != after:
            changed.append({"relationship": rid, "from": before, "to": after})
    return {"changed": changed}


def _diff_set_aside(old: dict, new: dict) -> dict:
    a = {int(x["relationship"]): x.get("reason", "") for x in old.get("set_aside") or []}
    b = {int(x["relationship"]): x.get("reason", "") for x in new.get("set_aside") or []}
    return {
        "added": [{"relationship": r, "reason": b[r]} for r in sorted(set(b) - set(a))],
        "removed": [{"relationship": r, "reason": a[r]} for r in sorted(set(a) - set(b))],
        "reason_changed": [{"relationship": r, "from": a[r], "to": b[r]} for r in sorted(set(a) & set(b)) if a[r] != b[r]],
    }


def _ordering_key(x: Mapping) -> tuple:
    return int(x["earlier"]), int(x["later"])


def _diff_orderings(old: dict, new: dict) -> dict:
    a = {_ordering_key(x): x for x in old.get("orderings") or []}
    b = {_ordering_key(x): x for x in new.get("orderings") or []}
    changed = []
    for k in sorted(set(a) & set(b)):
        before = {"strict": a[k].get("strict", True), "reason": a[k].get("reason", "")}
        after = {"strict": b[k].get("strict", True), "reason": b[k].get("reason", "")}
        if before != after:
            changed.append({"earlier": k[0], "later": k[1], "from": before, "to": after})
    return {
        "added": [dict(b[k]) for k in sorted(set(b) - set(a))],
        "removed": [dict(a[k]) for k in sorted(set(a) - set(b))],
        "changed": changed,
    }


def _diff_evidence(old: dict, new: dict) -> dict:
    def slots(doc):
        return {x["evidence"]: {"use": x.get("use"), "outlier_prior": x.get("outlier_prior")} for x in doc.get("evidence") or []}

    a, b = slots(old), slots(new)
    return {
        "added": [{"evidence": e, **b[e]} for e in sorted(set(b) - set(a))],
        "removed": [{"evidence": e, **a[e]} for e in sorted(set(a) - set(b))],
        "changed": [{"evidence": e, "from": a[e], "to": b[e]} for e in sorted(set(a) & set(b)) if a[e] != b[e]],
    }


def _diff_estimate(old: dict, new: dict) -> dict:
    a, b = {int(c) for c in old.get("estimate") or []}, {int(c) for c in new.get("estimate") or []}
    return {"added": sorted(b - a), "removed": sorted(a - b)}


def _diff_questions(old: dict, new: dict) -> dict:
    a = {_canon(q): q for q in old.get("questions") or []}
    b = {_canon(q): q for q in new.get("questions") or []}
    return {
        "added": [b[k] for k in b if k not in a],
        "removed": [a[k] for k in a if k not in b],
    }


def is_empty_diff(diff: Mapping) -> bool:
    """True when a result of :func:`diff_interpretations` records no change at all."""

    def empty(value) -> bool:
        if isinstance(value, Mapping):
            return all(empty(v) for v in value.values())
        if isinstance(value, list):
            return not value
        return value is None

    return all(empty(v) for k, v in diff.items() if k != "identical")


def diff_interpretations(old: Mapping, new: Mapping, *, old_revision: int | None = None,
                         new_revision: int | None = None) -> dict:
    """Structured difference from interpretation ``old`` to ``new``.

    Parameters
    ----------
    old, new : mapping
        Interpretation documents (already validated).  ``equalities`` and
        ``uncertain`` decisions missing from a document read as ``"default"``;
        fill in effective defaults beforehand to compare what is really used.
    old_revision, new_revision : int, optional
        Record revisions the two are built on; a difference is reported.

    Returns
    -------
    dict
        Keys ``phases`` (``added``, ``removed``, ``renamed``, ``regrouped``,
        ``arrangement_changed``, ``reordered``), ``contexts`` (``moved``,
        ``phased``, ``unphased``), ``equalities`` and ``uncertain``
        (``changed``), ``set_aside`` (``added``, ``removed``,
        ``reason_changed``), ``orderings``, ``evidence`` (``added``,
        ``removed``, ``changed``), ``estimate``, ``questions`` (``added``,
        ``removed``), ``record_revision`` (``{"from", "to"}`` or None) and
        ``identical``.  Every list is sorted by the id it is about (phases by
        position), so the result is deterministic.

    Examples
    --------
    >>> a = {"phases": [{"key": "p1", "name": "Early"}], "assignments": [{"context": 7, "phase": "p1"}]}
    >>> b = {"phases": [{"key": "p1", "name": "Earliest"}], "assignments": []}
    >>> d = diff_interpretations(a, b)
    >>> d["phases"]["renamed"], d["contexts"]["unphased"]
    ([{'key': 'p1', 'from': 'Early', 'to': 'Earliest'}], [{'context': 7, 'phase': 'p1'}])
    """
    old = _require_document(read_content(old), "old")
    new = _require_document(read_content(new), "new")
    diff = {
        "phases": _diff_phases(old, new),
        "contexts": _diff_contexts(old, new),
        "equalities": _diff_decisions(old, new, "equalities"),
        "uncertain": _diff_decisions(old, new, "uncertain"),
        "set_aside": _diff_set_aside(old, new),
        "orderings": _diff_orderings(old, new),
        "evidence": _diff_evidence(old, new),
        "estimate": _diff_estimate(old, new),
        "questions": _diff_questions(old, new),
        "record_revision": (
            {"from": old_revision, "to": new_revision} if old_revision != new_revision else None
        ),
        "range": (
            {"from": old.get("range"), "to": new.get("range")} if old.get("range") != new.get("range") else None
        ),
    }
    diff["identical"] = is_empty_diff(diff)
    return diff


# -- text ---------------------------------------------------------------------


def _range_text(r) -> str:
    return "derived from the evidence" if not r else f"{r['earliest']:g} to {r['latest']:g} (astronomical years)"


def _ctx(labels: Mapping, cid) -> str:
    # a reader knows contexts by label; the id is only the fallback when none is given
    return str(labels.get(cid, labels.get(str(cid), f"(context without a label, id {cid})")))


def _rel(relationships: Mapping, rid) -> str:
    text = relationships.get(rid, relationships.get(str(rid)))
    return str(text) if text else f"(relationship id {rid})"


def _phase(names: Mapping, key) -> str:
    name = names.get(key)
    return f"{name} ({key})" if name and name != key else str(key)


def _arrangement(value) -> str:
    if not value:
        return "none"
    text = value.get("arrangement", "?")
    if value.get("min_gap") is not None:
        text += f", gap at least {value['min_gap']} years"
    if value.get("gap"):
        text += f", gap prior {_interval_text(value['gap'])}"
    return text


def _interval_text(value) -> str:
    if not value:
        return "none"
    names = DISTRIBUTIONS.get(value.get("distribution"), ())
    return describe(value["distribution"], *(value.get(n) for n in names)) if len(names) == 2 else str(value)


def _event(labels: Mapping, names: Mapping, ref: str) -> str:
    parts = str(ref).split(":")
    if parts[0] == "phase" and len(parts) == 3:
        return f"the {parts[2]} of {_phase(names, parts[1])}"
    if parts[0] == "context" and len(parts) == 2 and parts[1].isdigit():
        return f"context {_ctx(labels, int(parts[1]))}"
    return str(ref)


def _question(labels: Mapping, names: Mapping, q: Mapping) -> str:
    kind = q.get("kind")
    if kind == "duration":
        return f"how long {_phase(names, q.get('phase'))} lasted"
    if kind == "gap":
        return f"the gap from {_event(labels, names, q.get('from'))} to {_event(labels, names, q.get('to'))}"
    if kind == "precedence":
        return f"the probability that {_event(labels, names, q.get('earlier'))} precedes {_event(labels, names, q.get('later'))}"
    return _canon(q)


def diff_text(diff: Mapping, *, labels: Mapping | None = None, relationships: Mapping | None = None,
              phase_names: Mapping | None = None, title: str = "") -> str:
    """The difference as readable lines, one change per line.

    Parameters
    ----------
    diff : mapping
        A result of :func:`diff_interpretations`.
    labels : mapping, optional
        Context id -> label.
    relationships : mapping, optional
        Relationship id -> short text such as ``"2032 contemporary with 2030"``.
    phase_names : mapping, optional
        Phase key -> name (from either document).
    title : str, optional
        First line.

    Returns
    -------
    str
        Lines ending in a newline; ``"No differences."`` when nothing changed.
    """
    labels = labels or {}
    relationships = relationships or {}
    names = dict(phase_names or {})
    lines = [title] if title else []
    if diff.get("identical"):
        return "\n".join([*lines, "No differences."]) + "\n"
    rev = diff.get("record_revision")
    if rev:
        lines.append(f"Record revision: {rev['from']} → {rev['to']}")
    ph = diff["phases"]
    for p in ph["added"]:
        lines.append(f"Phase added: {p['name']} ({p['key']}) at position {p['position'] + 1}")
    for p in ph["removed"]:
        lines.append(f"Phase removed: {p['name']} ({p['key']})")
    for p in ph["renamed"]:
        lines.append(f"Phase {p['key']} renamed: {p['from']} → {p['to']}")
    for p in ph["regrouped"]:
        lines.append(f"Phase {_phase(names, p['key'])} group: {p['from'] or 'none'} → {p['to'] or 'none'}")
    for p in ph["arrangement_changed"]:
        lines.append(f"Phase {_phase(names, p['key'])} to the next: {_arrangement(p['from'])} → {_arrangement(p['to'])}")
    for p in ph["duration_prior_changed"]:
        lines.append(f"Phase {_phase(names, p['key'])} duration prior: {_interval_text(p['from'])} → "
                     f"{_interval_text(p['to'])}")
    if ph["reordered"]:
        lines.append(f"Phases reordered: {', '.join(ph['reordered']['from'])} → {', '.join(ph['reordered']['to'])}")
    cx = diff["contexts"]
    for m in cx["moved"]:
        lines.append(f"Context {_ctx(labels, m['context'])} moved: {_phase(names, m['from'])} → {_phase(names, m['to'])}")
    for m in cx["phased"]:
        lines.append(f"Context {_ctx(labels, m['context'])} phased in {_phase(names, m['phase'])}")
    for m in cx["unphased"]:
        lines.append(f"Context {_ctx(labels, m['context'])} no longer phased (was {_phase(names, m['phase'])})")
    for name, what in (("equalities", "Equality"), ("uncertain", "Uncertain relationship")):
        for c in diff[name]["changed"]:
            lines.append(f"{what} {_rel(relationships, c['relationship'])}: {c['from']} → {c['to']}")
    sa = diff["set_aside"]
    for s in sa["added"]:
        lines.append(f"Set aside: {_rel(relationships, s['relationship'])} — {s['reason']}")
    for s in sa["removed"]:
        lines.append(f"No longer set aside: {_rel(relationships, s['relationship'])}")
    for s in sa["reason_changed"]:
        lines.append(f"Reason for setting aside {_rel(relationships, s['relationship'])}: {s['from']} → {s['to']}")
    od = diff["orderings"]
    for o in od["added"]:
        mark = "before" if o.get("strict", True) else "not after"
        lines.append(f"Ordering added: {_ctx(labels, o['earlier'])} {mark} {_ctx(labels, o['later'])} — {o.get('reason', '')}")
    for o in od["removed"]:
        lines.append(f"Ordering removed: {_ctx(labels, o['earlier'])} before {_ctx(labels, o['later'])}")
    for o in od["changed"]:
        lines.append(f"Ordering {_ctx(labels, o['earlier'])} before {_ctx(labels, o['later'])} changed: "
                     f"{_canon(o['from'])} → {_canon(o['to'])}")
    ev = diff["evidence"]
    for e in ev["added"]:
        lines.append(f"Evidence {e['evidence']} used: {e['use']} (outlier prior {e['outlier_prior']})")
    for e in ev["removed"]:
        lines.append(f"Evidence {e['evidence']} no longer used (was {e['use']})")
    for e in ev["changed"]:
        lines.append(f"Evidence {e['evidence']}: {e['from']['use']} (outlier prior {e['from']['outlier_prior']}) → "
                     f"{e['to']['use']} (outlier prior {e['to']['outlier_prior']})")
    rg = diff.get("range")
    if rg is not None:
        lines.append(f"Overall range: {_range_text(rg['from'])} → {_range_text(rg['to'])}")
    es = diff["estimate"]
    for c in es["added"]:
        lines.append(f"Undated context to estimate: {_ctx(labels, c)}")
    for c in es["removed"]:
        lines.append(f"No longer estimated: {_ctx(labels, c)}")
    qs = diff["questions"]
    for q in qs["added"]:
        lines.append(f"Question added: {_question(labels, names, q)}")
    for q in qs["removed"]:
        lines.append(f"Question removed: {_question(labels, names, q)}")
    return "\n".join(lines) + "\n"
