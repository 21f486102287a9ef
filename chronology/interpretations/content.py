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
      ]
    }

``to_next`` is the arrangement of a phase with the next one: ``sequential``
(a gap is allowed, optionally at least ``min_gap`` years), ``contiguous`` (one
shared boundary) or ``overlapping`` (independent boundaries, starts in order);
the last phase has none.  Equalities (``same_as``, ``bonded_with``,
``contemporary_with``) not listed take their default: certain ``same_as`` and
``bonded_with`` accepted, every other equality undecided.  Uncertain ordered
relationships not listed are accepted.  Contexts are named by id; the API
turns labels into ids at the version's record revision first.

:func:`validate` checks the shape and the internal references (phase keys,
duplicates) and returns the canonical document; references to the record are
checked against a revision by :mod:`.validity`.  Documents stored under the
earlier question names are read through :mod:`chronology.engine.legacy_names`
(normalised on read, never rewritten, so their hashes stand).
"""

from __future__ import annotations

import hashlib
import json
import math
import re
from typing import Callable, Mapping

from chronology.engine.legacy_names import read_content
from chronology.engine.record_data import EQUALITY_TYPES, IDENTITY_TYPES, ORDERED_TYPES, RelationshipData
from chronology.engine.temporal_graph import ExtraOrdering, OrderPolicy

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

ARRANGEMENTS = ("sequential", "contiguous", "overlapping")
EQUALITY_DECISIONS = ("accepted", "set_aside", "undecided")
UNCERTAIN_DECISIONS = ("accepted", "rejected", "undecided")
EVIDENCE_USES = ("included", "excluded", "residual", "intrusive")
QUESTION_KINDS = ("duration", "gap", "precedence")
SECTIONS = ("phases", "assignments", "equalities", "set_aside", "uncertain", "orderings", "evidence",
            "estimate", "questions")

_KEY = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_-]{0,39}$")
_EVIDENCE = re.compile(r"^([a-z][a-z0-9_]{0,39}):([0-9]{1,18})$")


class ContentInvalid(Exception):
    """The document breaks its schema; ``errors`` lists ``{field, code, message}`` entries."""

    status = 400

    def __init__(self, errors: list[dict]):
        super().__init__(errors[0]["message"] if errors else "invalid interpretation")
        self.errors = errors


def empty_document() -> dict:
    return {name: [] for name in SECTIONS}


class _Errors:
    def __init__(self):
        self.items: list[dict] = []

    def add(self, path: str, code: str, message: str) -> None:
        self.items.append({"field": path, "code": code, "message": message})


def _is_int(value) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)


def _is_number(value) -> bool:
    return (isinstance(value, (int, float)) and not isinstance(value, bool)) and math.isfinite(value)


def _text(errors: _Errors, path: str, value, *, required: bool, max_length: int = 2000) -> str:
    if value is None or value == "":
        if required:
            errors.add(path, "required", "this text is required")
        return ""
    if not isinstance(value, str):
        errors.add(path, "invalid-type", "must be a string")
        return ""
    if len(value) > max_length:
        errors.add(path, "too-long", f"at most {max_length} characters")
    if required and not value.strip():
        errors.add(path, "required", "this text is required")
    return value.strip()


def _object(errors: _Errors, path: str, value, allowed: set[str]) -> dict | None:
    if not isinstance(value, Mapping):
        errors.add(path, "invalid-type", "must be an object")
        return None
    for key in sorted(set(value) - allowed):
        errors.add(f"{path}.{key}", "unknown-field", f"{key!r} is not a field here")
    return dict(value)


def _list(errors: _Errors, path: str, value) -> list:
    if value is None:
        return []
    if not isinstance(value, list):
        errors.add(path, "invalid-type", "must be a list")
        return []
    return value


def _context_id(errors: _Errors, path: str, value) -> int | None:
    if _is_int(value) and value > 0:
        return value
    if isinstance(value, str):
        errors.add(path, "unresolved-label", f"context {value!r} must be given by id (labels are resolved at a revision)")
    else:
        errors.add(path, "invalid-context", "name a context by its id (a positive integer)")
    return None


def _relationship_id(errors: _Errors, path: str, value) -> int | None:
    if _is_int(value) and value > 0:
        return value
    errors.add(path, "invalid-relationship", "name a relationship by its id (a positive integer)")
    return None


def _choice(errors: _Errors, path: str, value, choices, default=None):
    if value is None and default is not None:
        return default
    if value not in choices:
        errors.add(path, "invalid-choice", f"must be one of {', '.join(choices)}")
        return None
    return value


# -- sections -----------------------------------------------------------------

def _phases(errors: _Errors, raw) -> list[dict]:
    out = []
    items = _list(errors, "phases", raw)
    seen: dict[str, int] = {}
    for i, item in enumerate(items):
        path = f"phases[{i}]"
        obj = _object(errors, path, item, {"key", "name", "group", "to_next"})
        if obj is None:
            continue
        key = obj.get("key")
        if not isinstance(key, str) or not _KEY.match(key):
            errors.add(f"{path}.key", "invalid-key", "1-40 letters, digits, '-' or '_', starting with a letter or digit")
            key = None
        elif key in seen:
            errors.add(f"{path}.key", "duplicate-phase", f"phase {key!r} is already defined at phases[{seen[key]}]")
        else:
            seen[key] = i
        name = _text(errors, f"{path}.name", obj.get("name"), required=True, max_length=200)
        group = obj.get("group")
        if group is not None:
            group = _text(errors, f"{path}.group", group, required=False, max_length=100) or None
        last = i == len(items) - 1
        to_next = _to_next(errors, f"{path}.to_next", obj.get("to_next"), last)
        out.append({"key": key, "name": name, "group": group, "to_next": to_next})
    return out


def _to_next(errors: _Errors, path: str, raw, last: bool):
    if last:
        if raw is not None:
            errors.add(path, "last-phase-arrangement", "the last phase has no next phase to be arranged with")
        return None
    if raw is None:
        return {"arrangement": "sequential", "min_gap": None}
    obj = _object(errors, path, raw, {"arrangement", "min_gap"})
    if obj is None:
        return None
    arrangement = _choice(errors, f"{path}.arrangement", obj.get("arrangement"), ARRANGEMENTS)
    gap = obj.get("min_gap")
    if gap is not None:
        if not _is_number(gap) or gap < 0:
            errors.add(f"{path}.min_gap", "invalid-number", "a gap is a number of years, zero or more")
            gap = None
        elif arrangement != "sequential":
            errors.add(f"{path}.min_gap", "gap-needs-sequential", "only a sequential arrangement has a gap")
    return {"arrangement": arrangement, "min_gap": gap}


def _assignments(errors: _Errors, raw, keys: set[str]) -> list[dict]:
    out, seen = [], {}
    for i, item in enumerate(_list(errors, "assignments", raw)):
        path = f"assignments[{i}]"
        obj = _object(errors, path, item, {"context", "phase"})
        if obj is None:
            continue
        cid = _context_id(errors, f"{path}.context", obj.get("context"))
        phase = obj.get("phase")
        if phase not in keys:
            errors.add(f"{path}.phase", "unknown-phase", f"no phase {phase!r} in phases")
        if cid is not None:
            if cid in seen:
                errors.add(f"{path}.context", "duplicate-assignment",
                           f"context {cid} is already assigned at assignments[{seen[cid]}]")
            seen[cid] = i
        out.append({"context": cid, "phase": phase})
    return out


def _decisions(errors: _Errors, name: str, raw, choices, with_reason: bool) -> list[dict]:
    out, seen = [], {}
    allowed = {"relationship", "decision"} | ({"reason"} if with_reason else set())
    for i, item in enumerate(_list(errors, name, raw)):
        path = f"{name}[{i}]"
        obj = _object(errors, path, item, allowed)
        if obj is None:
            continue
        rid = _relationship_id(errors, f"{path}.relationship", obj.get("relationship"))
        decision = _choice(errors, f"{path}.decision", obj.get("decision"), choices)
        if rid is not None:
            if rid in seen:
                errors.add(f"{path}.relationship", "duplicate-decision",
                           f"relationship {rid} is already decided at {name}[{seen[rid]}]")
            seen[rid] = i
        entry = {"relationship": rid, "decision": decision}
        if with_reason:
            entry["reason"] = _text(errors, f"{path}.reason", obj.get("reason"), required=False)
        out.append(entry)
    return out


def _set_aside(errors: _Errors, raw, decided: dict[int, str]) -> list[dict]:
    out, seen = [], {}
    for i, item in enumerate(_list(errors, "set_aside", raw)):
        path = f"set_aside[{i}]"
        obj = _object(errors, path, item, {"relationship", "reason"})
        if obj is None:
            continue
        rid = _relationship_id(errors, f"{path}.relationship", obj.get("relationship"))
        reason = _text(errors, f"{path}.reason", obj.get("reason"), required=True)
        if rid is not None:
            if rid in seen:
                errors.add(f"{path}.relationship", "duplicate-decision",
                           f"relationship {rid} is already set aside at set_aside[{seen[rid]}]")
            elif rid in decided:
                errors.add(f"{path}.relationship", "decided-twice", f"relationship {rid} is also decided at {decided[rid]}")
            seen[rid] = i
        out.append({"relationship": rid, "reason": reason})
    return out


def _orderings(errors: _Errors, raw) -> list[dict]:
    out, seen = [], {}
    for i, item in enumerate(_list(errors, "orderings", raw)):
        path = f"orderings[{i}]"
        obj = _object(errors, path, item, {"earlier", "later", "strict", "reason"})
        if obj is None:
            continue
        earlier = _context_id(errors, f"{path}.earlier", obj.get("earlier"))
        later = _context_id(errors, f"{path}.later", obj.get("later"))
        strict = obj.get("strict", True)
        if not isinstance(strict, bool):
            errors.add(f"{path}.strict", "invalid-type", "must be true or false")
            strict = True
        reason = _text(errors, f"{path}.reason", obj.get("reason"), required=True)
        if earlier is not None and earlier == later:
            errors.add(f"{path}.later", "self-ordering", "a context cannot be ordered against itself")
        elif earlier is not None and later is not None:
            if (earlier, later) in seen:
                errors.add(path, "duplicate-ordering", f"the same ordering is given at orderings[{seen[(earlier, later)]}]")
            seen[(earlier, later)] = i
        out.append({"earlier": earlier, "later": later, "strict": strict, "reason": reason})
    return out


def _evidence(errors: _Errors, raw) -> list[dict]:
    out, seen = [], {}
    for i, item in enumerate(_list(errors, "evidence", raw)):
        path = f"evidence[{i}]"
        obj = _object(errors, path, item, {"evidence", "use", "outlier_prior"})
        if obj is None:
            continue
        ref = obj.get("evidence")
        if not isinstance(ref, str) or not _EVIDENCE.match(ref):
            errors.add(f"{path}.evidence", "invalid-evidence-ref", "write evidence as '<kind>:<id>', e.g. 'determination:4'")
        elif ref in seen:
            errors.add(f"{path}.evidence", "duplicate-evidence", f"{ref} is already used at evidence[{seen[ref]}]")
        else:
            seen[ref] = i
        use = _choice(errors, f"{path}.use", obj.get("use"), EVIDENCE_USES)
        prior = obj.get("outlier_prior")
        if not _is_number(prior) or not 0 <= prior <= 1:
            errors.add(f"{path}.outlier_prior", "invalid-probability", "a prior probability between 0 and 1")
            prior = None
        out.append({"evidence": ref, "use": use, "outlier_prior": prior})
    return out


def _estimate(errors: _Errors, raw) -> list[int]:
    out, seen = [], {}
    for i, item in enumerate(_list(errors, "estimate", raw)):
        cid = _context_id(errors, f"estimate[{i}]", item)
        if cid is None:
            continue
        if cid in seen:
            errors.add(f"estimate[{i}]", "duplicate-context", f"context {cid} is already listed at estimate[{seen[cid]}]")
            continue
        seen[cid] = i
        out.append(cid)
    return out


def _event(errors: _Errors, path: str, value, keys: set[str], evidence: set[str]) -> str | None:
    if not isinstance(value, str):
        errors.add(path, "invalid-event", "an event is a string such as 'phase:<key>:beginning' or 'context:<id>'")
        return None
    parts = value.split(":")
    if parts[0] == "phase" and len(parts) == 3:
        if parts[1] not in keys:
            errors.add(path, "unknown-phase", f"no phase {parts[1]!r} in phases")
        elif parts[2] not in ("beginning", "close"):
            errors.add(path, "invalid-event", "a phase event is its beginning or its close")
        return value
    if parts[0] == "context" and len(parts) == 2:
        if not parts[1].isdigit() or int(parts[1]) <= 0:
            errors.add(path, "unresolved-label", f"context {parts[1]!r} must be given by id")
            return None
        return f"context:{int(parts[1])}"
    if parts[0] == "evidence" and len(parts) == 3:
        ref = f"{parts[1]}:{parts[2]}"
        if not _EVIDENCE.match(ref):
            errors.add(path, "invalid-evidence-ref", "write evidence events as 'evidence:<kind>:<id>'")
        elif ref not in evidence:
            errors.add(path, "evidence-not-used", f"{ref} is not listed in evidence")
        return value
    errors.add(path, "invalid-event", "an event is 'phase:<key>:beginning|close', 'context:<id>' or 'evidence:<kind>:<id>'")
    return None


_QUESTION_FIELDS = {"duration": ("phase",), "gap": ("from", "to"), "precedence": ("earlier", "later")}


def _questions(errors: _Errors, raw, keys: set[str], evidence: set[str]) -> list[dict]:
    out, seen = [], {}
    for i, item in enumerate(_list(errors, "questions", raw)):
        path = f"questions[{i}]"
        if not isinstance(item, Mapping):
            errors.add(path, "invalid-type", "must be an object")
            continue
        kind = _choice(errors, f"{path}.kind", item.get("kind"), QUESTION_KINDS)
        if kind is None:
            continue
        fields = _QUESTION_FIELDS[kind]
        obj = _object(errors, path, item, {"kind", "label", *fields})
        q = {"kind": kind}
        if kind == "duration":
            phase = obj.get("phase")
            if phase not in keys:
                errors.add(f"{path}.phase", "unknown-phase", f"no phase {phase!r} in phases")
            q["phase"] = phase
        else:
            for name in fields:
                q[name] = _event(errors, f"{path}.{name}", obj.get(name), keys, evidence)
            if q[fields[0]] is not None and q[fields[0]] == q[fields[1]]:
                errors.add(f"{path}.{fields[1]}", "same-event", "the two events must differ")
        label = obj.get("label")
        if label is not None:
            q["label"] = _text(errors, f"{path}.label", label, required=False, max_length=200)
        key = canonical_json({k: v for k, v in q.items() if k != "label"})
        if key in seen:
            errors.add(path, "duplicate-question", f"the same question is asked at questions[{seen[key]}]")
        seen[key] = i
        out.append(q)
    return out


def validate(document) -> dict:
    """Check a document's shape and internal references; return its canonical form.

    Raises
    ------
    ContentInvalid
        With every problem found, each naming its exact path
        (``phases[2].to_next.arrangement``), a stable code and a message.
    """
    errors = _Errors()
    if document is None:
        document = {}
    document = read_content(document)
    obj = _object(errors, "content", document, set(SECTIONS))
    if obj is None:
        raise ContentInvalid(errors.items)
    for key in list(obj):
        if key not in SECTIONS:
            obj.pop(key)
    errors.items = [dict(e, field=e["field"].removeprefix("content.")) for e in errors.items]
    phases = _phases(errors, obj.get("phases"))
    keys = {p["key"] for p in phases if p["key"]}
    equalities = _decisions(errors, "equalities", obj.get("equalities"), EQUALITY_DECISIONS, with_reason=True)
    uncertain = _decisions(errors, "uncertain", obj.get("uncertain"), UNCERTAIN_DECISIONS, with_reason=False)
    decided = {}
    for name, entries in (("equalities", equalities), ("uncertain", uncertain)):
        for i, e in enumerate(entries):
            if e["relationship"] is None:
                continue
            if e["relationship"] in decided:
                errors.add(f"{name}[{i}].relationship", "decided-twice",
                           f"relationship {e['relationship']} is also decided at {decided[e['relationship']]}")
            else:
                decided[e["relationship"]] = f"{name}[{i}]"
    evidence = _evidence(errors, obj.get("evidence"))
    doc = {
        "phases": phases,
        "assignments": _assignments(errors, obj.get("assignments"), keys),
        "equalities": equalities,
        "set_aside": _set_aside(errors, obj.get("set_aside"), decided),
        "uncertain": uncertain,
        "orderings": _orderings(errors, obj.get("orderings")),
        "evidence": evidence,
        "estimate": _estimate(errors, obj.get("estimate")),
        "questions": _questions(errors, obj.get("questions"), keys, {e["evidence"] for e in evidence if e["evidence"]}),
    }
    if errors.items:
        raise ContentInvalid(errors.items)
    return _canonical(doc)


def _canonical(doc: dict) -> dict:
    """Sort what has no order of its own, so equal content has one form (and one hash)."""
    return {
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


def resolve_labels(document, lookup: Callable[[str], int | None]) -> dict:
    """Replace context labels (strings) by ids with ``lookup(label)``.

    Returns a copy; unknown labels raise :class:`ContentInvalid` at their path.
    Anything that is not a label is left for :func:`validate` to judge.
    """
    if not isinstance(document, Mapping):
        return document
    errors = _Errors()
    doc = json.loads(json.dumps(document))

    def resolve(path, value):
        if isinstance(value, str) and value.strip():
            found = lookup(value.strip())
            if found is None:
                errors.add(path, "unknown-context", f"no context labelled {value!r} at this revision")
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
    if errors.items:
        raise ContentInvalid(errors.items)
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
