"""The content of an interpretation version: a validated JSON document.

::

    {
      "phases": [                                   # earliest first
        {"key": "enclosure", "name": "Enclosure", "group": null,
         "to_next": {"arrangement": "sequential", "min_gap": null}},
        {"key": "settlement", "name": "Settlement", "group": null, "to_next": null}
      ],
      "assignments": [{"context": 17, "phase": "enclosure"}],
      "equalities": [{"relationship": 88, "decision": "accepted", "reason": ""}],
      "set_aside": [{"relationship": 41, "reason": "redundant with 1013 above 1011"}],
      "uncertain": [{"relationship": 52, "decision": "rejected"}],
      "orderings": [{"earlier": 17, "later": 23, "strict": true, "reason": "..."}],
      "evidence": [{"evidence": "determination:4", "use": "included", "outlier_prior": 0.05}],
      "estimate": [31],
      "questions": [
        {"kind": "duration", "phase": "settlement"},
        {"kind": "gap", "from": "phase:enclosure:close", "to": "phase:settlement:beginning"},
        {"kind": "precedence", "earlier": "context:17", "later": "evidence:determination:4"}
      ],
      "range": {"earliest": -1200, "latest": 400}   # optional; null = derived from the evidence
    }

``range`` sets the model's overall range ``[L, U]`` in astronomical years (1 BC
= 0); without it the range is derived from the evidence (see
:mod:`chronology.runs.compile_range`).  It appears in the canonical form only
when set, so documents without it keep their hashes.
``to_next`` is the arrangement of a phase with the next one: ``sequential``
(a gap is allowed, optionally at least ``min_gap`` years), ``contiguous`` (one
shared boundary) or ``overlapping`` (independent boundaries, starts in order);
the last phase has none.  A phase may carry a prior on its ``duration`` and a
sequential ``to_next`` one on its ``gap``, e.g. ``{"distribution": "uniform",
"min": 50, "max": 250}``, ``{"distribution": "normal", "mean": 150, "sd": 40}``
or ``{"distribution": "lognormal", "median": 150, "sd_log": 0.4}`` (years);
like ``range`` they appear in the canonical form only when set.  Equalities (``same_as``, ``bonded_with``,
``contemporary_with``) not listed take their default: certain ``same_as`` and
``bonded_with`` accepted, every other equality undecided.  Uncertain ordered
relationships not listed are accepted.  Contexts are named by id; the API
turns labels into ids at the version's record revision first.

:func:`validate` checks the shape against the published JSON Schema
(``schemas/interpretation-content.v1.json``) and the internal references
(phase keys, duplicates) and returns the canonical document; references to the
record are checked against a revision by :mod:`.validity`.  Documents stored
under the earlier question names are read through
:mod:`chronology.engine.legacy_names` (normalised on read, never rewritten, so
their hashes stand).
"""

from __future__ import annotations

import hashlib
import json
import re
from typing import Callable, Mapping

from chronology.engine.interval_priors import DISTRIBUTIONS
from chronology.engine.legacy_names import read_content
from chronology.engine.record_data import EQUALITY_TYPES, IDENTITY_TYPES, ORDERED_TYPES, RelationshipData
from chronology.engine.temporal_graph import ExtraOrdering, OrderPolicy

from . import content_rules
from .content_schema import enum_of, schema, structural_errors

__all__ = [
    "ARRANGEMENTS",
    "EQUALITY_DECISIONS",
    "UNCERTAIN_DECISIONS",
    "EVIDENCE_USES",
    "ContentInvalid",
    "validate",
    "empty_document",
    "resolve_labels",
    "canonical_json",
    "content_hash",
    "default_equality_decision",
    "effective_decisions",
    "with_effective_decisions",
    "order_policy",
    "undecided",
    "referenced_contexts",
    "referenced_relationships",
]

ARRANGEMENTS = enum_of("arrangement")
EQUALITY_DECISIONS = ("accepted", "set_aside", "undecided")
UNCERTAIN_DECISIONS = ("accepted", "rejected", "undecided")
EVIDENCE_USES = ("included", "excluded", "residual", "intrusive")
QUESTION_KINDS = enum_of("questionKind")
SECTIONS = tuple(schema()["properties"])
#: Sections holding one object (or null) rather than a list.
SINGLE_SECTIONS = ("range",)

# The order in which problems are listed: the order the sections are read in
# (phases first, because every other section refers to them).
_ERROR_ORDER = ("phases", "equalities", "uncertain", "evidence", "assignments", "set_aside", "orderings",
                "estimate", "questions", "range")


class ContentInvalid(Exception):
    """The document breaks its schema; ``errors`` lists ``{field, code, message}`` entries."""

    status = 400

    def __init__(self, errors: list[dict]):
        super().__init__(errors[0]["message"] if errors else "invalid interpretation")
        self.errors = errors


def empty_document() -> dict:
    return {name: (None if name in SINGLE_SECTIONS else []) for name in SECTIONS}


def validate(document) -> dict:
    """Check a document's shape and internal references; return its canonical form.

    The shape is checked against the published JSON Schema
    (:mod:`.content_schema`); what a schema cannot say (a phase named before
    it is defined, duplicates, a relationship decided twice, the grammar of
    event references) is checked by :mod:`.content_rules`.

    Raises
    ------
    ContentInvalid
        With every problem found, each naming its exact path
        (``phases[2].to_next.arrangement``), a stable code and a message.
    """
    if document is None:
        document = {}
    document = read_content(document)
    structural = structural_errors(document)
    cross = content_rules.problems(document) if isinstance(document, Mapping) else []
    if structural or cross:
        raise ContentInvalid(_in_reading_order(cross, structural))
    return _canonical(_normalised(document))


def _in_reading_order(cross: list[dict], structural: list[dict]) -> list[dict]:
    """Problems by section and item; within an item, the rules before the shape (stable)."""
    def key(entry_and_rank):
        entry, rank = entry_and_rank
        head = re.match(r"^([a-z_]+)(?:\[(\d+)\])?", entry["field"])
        section = head.group(1) if head else ""
        if section not in _ERROR_ORDER or entry["field"] == section and entry["code"] == "unknown-field":
            return (-1, 0, rank)
        index = int(head.group(2)) if head.group(2) is not None else -1
        return (_ERROR_ORDER.index(section), index, rank)

    tagged = [(e, 0) for e in cross] + [(e, 1) for e in structural]
    return [entry for entry, _ in sorted(tagged, key=key)]


def _stripped(value):
    return value.strip() if isinstance(value, str) else value


def _normalised(doc: Mapping) -> dict:
    """The valid document with its defaults written out and its texts trimmed."""
    phases = list(doc.get("phases") or [])
    out = {"phases": []}
    for i, p in enumerate(phases):
        to_next = p.get("to_next")
        if i == len(phases) - 1:
            to_next = None
        elif to_next is None:
            to_next = {"arrangement": "sequential", "min_gap": None}
        else:
            gap = to_next.get("gap")
            to_next = {"arrangement": to_next["arrangement"], "min_gap": to_next.get("min_gap")}
            if gap is not None:
                to_next["gap"] = _interval_prior(gap)
        phase = {"key": p["key"], "name": p["name"].strip(), "group": _stripped(p.get("group")) or None,
                 "to_next": to_next}
        if p.get("duration") is not None:
            # only when set, so documents without one keep their hashes
            phase["duration"] = _interval_prior(p["duration"])
        out["phases"].append(phase)
    out["assignments"] = [{"context": a["context"], "phase": a["phase"]} for a in doc.get("assignments") or []]
    out["equalities"] = [{"relationship": e["relationship"], "decision": e["decision"],
                          "reason": _stripped(e.get("reason")) or ""} for e in doc.get("equalities") or []]
    out["set_aside"] = [{"relationship": e["relationship"], "reason": e["reason"].strip()}
                        for e in doc.get("set_aside") or []]
    out["uncertain"] = [{"relationship": e["relationship"], "decision": e["decision"]}
                        for e in doc.get("uncertain") or []]
    out["orderings"] = [{"earlier": o["earlier"], "later": o["later"], "strict": o.get("strict", True),
                         "reason": o["reason"].strip()} for o in doc.get("orderings") or []]
    out["evidence"] = [{"evidence": e["evidence"], "use": e["use"], "outlier_prior": e["outlier_prior"]}
                       for e in doc.get("evidence") or []]
    out["estimate"] = list(doc.get("estimate") or [])
    out["questions"] = [_question(q) for q in doc.get("questions") or []]
    r = doc.get("range")
    out["range"] = None if r is None else {"earliest": r["earliest"], "latest": r["latest"]}
    return out


def _interval_prior(raw: Mapping) -> dict:
    family = raw["distribution"]
    return {"distribution": family, **{name: raw[name] for name in DISTRIBUTIONS[family]}}


def _question(raw: Mapping) -> dict:
    kind = raw["kind"]
    q = {"kind": kind}
    for name in content_rules.QUESTION_FIELDS[kind]:
        q[name] = content_rules.canonical_event(raw[name]) if name != "phase" else raw[name]
    if raw.get("label") is not None:
        q["label"] = raw["label"].strip()
    return q


def _canonical(doc: dict) -> dict:
    """Sort what has no order of its own, so equal content has one form (and one hash)."""
    out = {
        "phases": doc["phases"],
        "assignments": sorted(doc["assignments"], key=lambda x: x["context"]),
        "equalities": sorted(doc["equalities"], key=lambda x: x["relationship"]),
        "set_aside": sorted(doc["set_aside"], key=lambda x: x["relationship"]),
        "uncertain": sorted(doc["uncertain"], key=lambda x: x["relationship"]),
        "orderings": sorted(doc["orderings"], key=lambda x: (x["earlier"], x["later"])),
        "evidence": sorted(doc["evidence"], key=lambda x: x["evidence"]),
        "estimate": sorted(doc["estimate"]),
        "questions": doc["questions"],
    }
    if doc.get("range") is not None:
        out["range"] = doc["range"]
    return out


def resolve_labels(document, lookup: Callable[[str], int | None]) -> dict:
    """Replace context labels (strings) by ids with ``lookup(label)``.

    Returns a copy; unknown labels raise :class:`ContentInvalid` at their path.
    Anything that is not a label is left for :func:`validate` to judge.
    """
    if not isinstance(document, Mapping):
        return document
    errors: list[dict] = []
    doc = json.loads(json.dumps(document))

    def resolve(path, value):
        if isinstance(value, str) and value.strip():
            found = lookup(value.strip())
            if found is None:
                errors.append({"field": path, "code": "unknown-context",
                               "message": f"no context labelled {value!r} at this revision"})
                return value
            return found
        return value

    for i, item in enumerate(doc.get("assignments") or []):
        if isinstance(item, dict) and "context" in item:
            item["context"] = resolve(f"assignments[{i}].context", item["context"])
    for i, item in enumerate(doc.get("orderings") or []):
        if isinstance(item, dict):
            for end in ("earlier", "later"):
                if end in item:
                    item[end] = resolve(f"orderings[{i}].{end}", item[end])
    if isinstance(doc.get("estimate"), list):
        doc["estimate"] = [resolve(f"estimate[{i}]", v) for i, v in enumerate(doc["estimate"])]
    for i, q in enumerate(doc.get("questions") or []):
        if not isinstance(q, dict):
            continue
        for name in ("from", "to", "earlier", "later"):
            value = q.get(name)
            if isinstance(value, str) and value.startswith("context:"):
                label = value.split(":", 1)[1]
                if not label.isdigit() or lookup(label) is not None:
                    found = resolve(f"questions[{i}].{name}", label)
                    if isinstance(found, int):
                        q[name] = f"context:{found}"
    if errors:
        raise ContentInvalid(errors)
    return doc


def canonical_json(value) -> str:
    return json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False)


def content_hash(content: dict, record_revision: int) -> str:
    """SHA-256 of the canonical content together with the record revision it is read against."""
    payload = canonical_json({"record_revision": record_revision, "content": content})
    return hashlib.sha256(payload.encode()).hexdigest()


# -- reading a document against the record --------------------------------------

def default_equality_decision(rel: RelationshipData) -> str:
    return "accepted" if rel.certain and rel.type in IDENTITY_TYPES else "undecided"


def effective_decisions(content: dict, relationships: Mapping[int, RelationshipData]) -> dict:
    """Every equality's and uncertain ordered relationship's decision, defaults included.

    Relationships the document sets aside are left out of both maps.
    """
    explicit_eq = {e["relationship"]: e["decision"] for e in content.get("equalities", [])}
    explicit_un = {e["relationship"]: e["decision"] for e in content.get("uncertain", [])}
    aside = {e["relationship"] for e in content.get("set_aside", [])}
    equalities, uncertain = {}, {}
    for rid, rel in relationships.items():
        if rid in aside:
            continue
        if rel.type in EQUALITY_TYPES:
            equalities[rid] = explicit_eq.get(rid, default_equality_decision(rel))
        elif rel.type in ORDERED_TYPES and not rel.certain:
            uncertain[rid] = explicit_un.get(rid, "accepted")
    return {"equalities": equalities, "uncertain": uncertain}


def with_effective_decisions(content: dict, relationships: Mapping[int, RelationshipData]) -> dict:
    """The document with every default decision written out (for diffs and reports)."""
    eff = effective_decisions(content, relationships)
    reasons = {e["relationship"]: e.get("reason", "") for e in content.get("equalities", [])}
    doc = dict(content)
    known_eq = set(eff["equalities"])
    doc["equalities"] = sorted(
        [{"relationship": r, "decision": d, "reason": reasons.get(r, "")} for r, d in eff["equalities"].items()]
        + [e for e in content.get("equalities", []) if e["relationship"] not in known_eq],
        key=lambda x: x["relationship"],
    )
    known_un = set(eff["uncertain"])
    doc["uncertain"] = sorted(
        [{"relationship": r, "decision": d} for r, d in eff["uncertain"].items()]
        + [e for e in content.get("uncertain", []) if e["relationship"] not in known_un],
        key=lambda x: x["relationship"],
    )
    return doc


def order_policy(content: dict, relationships: Mapping[int, RelationshipData], *,
                 contexts: set[int] | None = None, leave_out: set[int] = frozenset()) -> OrderPolicy:
    """The engine policy of a document: everything decided, undecided items left out.

    ``contexts`` (ids present at the revision) drops interpretive orderings
    that name a context the record does not have; ``leave_out`` drops the
    named relationships too (the alternatives' items, for one).
    """
    eff = effective_decisions(content, relationships)
    accept, reject, aside = set(), set(), {e["relationship"] for e in content.get("set_aside", [])}
    for rid, decision in eff["equalities"].items():
        rel = relationships[rid]
        if decision == "accepted" and rid not in leave_out:
            accept.add(rid)
        elif decision == "set_aside" or (rel.certain and rel.type in IDENTITY_TYPES):
            # A certain identity is merged by default, so "not merged" needs set-aside.
            aside.add(rid)
    for rid, decision in eff["uncertain"].items():
        if decision == "accepted" and rid not in leave_out:
            accept.add(rid)
        else:
            reject.add(rid)
    extras = []
    for i, o in enumerate(content.get("orderings", [])):
        if contexts is not None and not (o["earlier"] in contexts and o["later"] in contexts):
            continue
        extras.append(ExtraOrdering(o["earlier"], o["later"], o["strict"], f"orderings[{i}]"))
    return OrderPolicy(accept=frozenset(accept), reject=frozenset(reject), set_aside=frozenset(aside),
                       extra_orderings=tuple(extras))


def undecided(content: dict, relationships: Mapping[int, RelationshipData], *, uncertain: bool = True) -> list[int]:
    """Ids of the equalities (and, if asked, uncertain orderings) left undecided, ascending."""
    eff = effective_decisions(content, relationships)
    out = [rid for rid, d in eff["equalities"].items() if d == "undecided"]
    if uncertain:
        out += [rid for rid, d in eff["uncertain"].items() if d == "undecided"]
    return sorted(out)


def referenced_contexts(content: dict) -> dict[int, list[str]]:
    """Context id -> paths of the document that name it."""
    out: dict[int, list[str]] = {}
    for i, a in enumerate(content.get("assignments", [])):
        out.setdefault(a["context"], []).append(f"assignments[{i}].context")
    for i, o in enumerate(content.get("orderings", [])):
        for end in ("earlier", "later"):
            out.setdefault(o[end], []).append(f"orderings[{i}].{end}")
    for i, c in enumerate(content.get("estimate", [])):
        out.setdefault(c, []).append(f"estimate[{i}]")
    for i, q in enumerate(content.get("questions", [])):
        for name in ("from", "to", "earlier", "later"):
            value = q.get(name)
            if isinstance(value, str) and value.startswith("context:"):
                out.setdefault(int(value.split(":")[1]), []).append(f"questions[{i}].{name}")
    return out


def referenced_relationships(content: dict) -> dict[int, list[str]]:
    """Relationship id -> paths of the document that name it."""
    out: dict[int, list[str]] = {}
    for name in ("equalities", "set_aside", "uncertain"):
        for i, e in enumerate(content.get(name, [])):
            out.setdefault(e["relationship"], []).append(f"{name}[{i}].relationship")
    return out
