"""The rules of interpretation content that its JSON Schema cannot state.

A schema says what each field looks like; it cannot say that a phase named in
an assignment is defined in ``phases``, that no context is assigned twice,
that a relationship is not both accepted and set aside, that an event
reference names a phase, a context or a piece of evidence the document uses,
or that a duration or gap prior gives its family's parameters (and only
those) with ``min < max`` and positive spreads.
:func:`problems` checks those, on any document (well-formed or not: pieces
that break the schema are left to the schema's errors and skipped here).
"""

from __future__ import annotations

import json
import re
from typing import Mapping

from chronology.engine.interval_priors import DISTRIBUTIONS

from .content_schema import schema

__all__ = ["QUESTION_FIELDS", "problems", "canonical_event"]

#: The fields each question kind names, in the order they are read.
QUESTION_FIELDS = {kind: tuple(f for f in rule["then"]["required"])
                   for kind, rule in ((r["if"]["properties"]["kind"]["const"], r)
                                      for r in schema()["$defs"]["question"]["allOf"])}
_KEY = re.compile(schema()["$defs"]["phaseKey"]["pattern"])
_EVIDENCE = re.compile(r"^([a-z][a-z0-9_]{0,39}):([0-9]{1,18})$")
_PHASE_EVENTS = ("beginning", "close")
_ARRANGEMENTS = tuple(schema()["$defs"]["arrangement"]["enum"])


class _Problems:
    def __init__(self):
        self.items: list[dict] = []

    def add(self, path: str, code: str, message: str) -> None:
        self.items.append({"field": path, "code": code, "message": message})


def _items(doc: Mapping, name: str) -> list:
    value = doc.get(name)
    return value if isinstance(value, list) else []


def _mapping_items(doc: Mapping, name: str):
    for i, item in enumerate(_items(doc, name)):
        if isinstance(item, Mapping):
            yield i, item


def _id(value) -> int | None:
    return value if isinstance(value, int) and not isinstance(value, bool) and value > 0 else None


def _number(value) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) and value == value


def problems(doc: Mapping) -> list[dict]:
    """Every cross-field problem of a document, each as ``{field, code, message}``."""
    out = _Problems()
    keys = _phases(out, doc)
    decided = _decisions(out, doc)
    evidence = _evidence(out, doc)
    _assignments(out, doc, keys)
    _set_aside(out, doc, decided)
    _orderings(out, doc)
    _estimate(out, doc)
    _questions(out, doc, keys, evidence)
    _range(out, doc)
    return out.items


def _range(out: _Problems, doc: Mapping) -> None:
    r = doc.get("range")
    if not isinstance(r, Mapping):
        return
    lo, hi = r.get("earliest"), r.get("latest")
    if _number(lo) and _number(hi) and not lo < hi:
        out.add("range.latest", "invalid-range", "the latest end of the overall range must be later than the earliest")


def _phases(out: _Problems, doc: Mapping) -> set[str]:
    items = _items(doc, "phases")
    seen: dict[str, int] = {}
    for i, p in enumerate(items):
        if not isinstance(p, Mapping):
            continue
        key = p.get("key")
        if isinstance(key, str) and _KEY.match(key):
            if key in seen:
                out.add(f"phases[{i}].key", "duplicate-phase", f"phase {key!r} is already defined at phases[{seen[key]}]")
            else:
                seen[key] = i
        _interval_prior(out, f"phases[{i}].duration", p.get("duration"))
        to_next = p.get("to_next")
        if isinstance(to_next, Mapping):
            _interval_prior(out, f"phases[{i}].to_next.gap", to_next.get("gap"))
            if to_next.get("gap") is not None and to_next.get("arrangement") in _ARRANGEMENTS \
                    and to_next.get("arrangement") != "sequential":
                out.add(f"phases[{i}].to_next.gap", "gap-needs-sequential", "only a sequential arrangement has a gap")
        if i == len(items) - 1:
            if to_next is not None:
                out.add(f"phases[{i}].to_next", "last-phase-arrangement",
                        "the last phase has no next phase to be arranged with")
        elif isinstance(to_next, Mapping):
            gap, arrangement = to_next.get("min_gap"), to_next.get("arrangement")
            if _number(gap) and gap >= 0 and arrangement in _ARRANGEMENTS and arrangement != "sequential":
                out.add(f"phases[{i}].to_next.min_gap", "gap-needs-sequential", "only a sequential arrangement has a gap")
    return set(seen)


_ALL_PARAMETERS = tuple(dict.fromkeys(name for names in DISTRIBUTIONS.values() for name in names))


def _interval_prior(out: _Problems, path: str, value) -> None:
    """A duration or gap prior: its family's two parameters, in range (the schema checks each is a number)."""
    if not isinstance(value, Mapping) or value.get("distribution") not in DISTRIBUTIONS:
        return
    family = value["distribution"]
    wanted = DISTRIBUTIONS[family]
    for name in wanted:
        if name not in value:
            out.add(f"{path}.{name}", "required", f"a {family} prior needs {name}")
    for name in _ALL_PARAMETERS:
        if name in value and name not in wanted:
            out.add(f"{path}.{name}", "parameter-not-used",
                    f"a {family} prior takes {' and '.join(wanted)}, not {name}")
    first, second = (value.get(n) for n in wanted)
    if family == "uniform":
        if _number(first) and _number(second) and not first < second:
            out.add(f"{path}.max", "invalid-range", "max must be greater than min")
        return
    if family == "lognormal" and _number(first) and not first > 0:
        out.add(f"{path}.median", "invalid-number", "the median must be greater than 0")
    if _number(second) and not second > 0:
        out.add(f"{path}.{wanted[1]}", "invalid-number", f"{wanted[1]} must be greater than 0")


def _decisions(out: _Problems, doc: Mapping) -> dict[int, str]:
    """Duplicates within equalities and uncertain, and one relationship decided in both."""
    decided: dict[int, str] = {}
    for name in ("equalities", "uncertain"):
        seen: dict[int, int] = {}
        for i, e in _mapping_items(doc, name):
            rid = _id(e.get("relationship"))
            if rid is None:
                continue
            if rid in seen:
                out.add(f"{name}[{i}].relationship", "duplicate-decision",
                        f"relationship {rid} is already decided at {name}[{seen[rid]}]")
                continue
            seen[rid] = i
            if rid in decided:
                out.add(f"{name}[{i}].relationship", "decided-twice", f"relationship {rid} is also decided at {decided[rid]}")
            else:
                decided[rid] = f"{name}[{i}]"
    return decided


def _evidence(out: _Problems, doc: Mapping) -> set[str]:
    seen: dict[str, int] = {}
    for i, e in _mapping_items(doc, "evidence"):
        ref = e.get("evidence")
        if not isinstance(ref, str) or not _EVIDENCE.match(ref):
            continue
        if ref in seen:
            out.add(f"evidence[{i}].evidence", "duplicate-evidence", f"{ref} is already used at evidence[{seen[ref]}]")
        else:
            seen[ref] = i
    return set(seen)


def _assignments(out: _Problems, doc: Mapping, keys: set[str]) -> None:
    seen: dict[int, int] = {}
    for i, a in _mapping_items(doc, "assignments"):
        phase = a.get("phase")
        if isinstance(phase, str) and phase not in keys:
            out.add(f"assignments[{i}].phase", "unknown-phase", f"no phase {phase!r} in phases")
        cid = _id(a.get("context"))
        if cid is not None:
            if cid in seen:
                out.add(f"assignments[{i}].context", "duplicate-assignment",
                        f"context {cid} is already assigned at assignments[{seen[cid]}]")
            seen[cid] = i


def _set_aside(out: _Problems, doc: Mapping, decided: dict[int, str]) -> None:
    seen: dict[int, int] = {}
    for i, e in _mapping_items(doc, "set_aside"):
        rid = _id(e.get("relationship"))
        if rid is None:
            continue
        if rid in seen:
            out.add(f"set_aside[{i}].relationship", "duplicate-decision",
                    f"relationship {rid} is already set aside at set_aside[{seen[rid]}]")
        elif rid in decided:
            out.add(f"set_aside[{i}].relationship", "decided-twice", f"relationship {rid} is also decided at {decided[rid]}")
        seen[rid] = i


def _orderings(out: _Problems, doc: Mapping) -> None:
    seen: dict[tuple[int, int], int] = {}
    for i, o in _mapping_items(doc, "orderings"):
        earlier, later = _id(o.get("earlier")), _id(o.get("later"))
        if earlier is None or later is None:
            continue
        if earlier == later:
            out.add(f"orderings[{i}].later", "self-ordering", "a context cannot be ordered against itself")
            continue
        if (earlier, later) in seen:
            out.add(f"orderings[{i}]", "duplicate-ordering", f"the same ordering is given at orderings[{seen[(earlier, later)]}]")
        seen[(earlier, later)] = i


def _estimate(out: _Problems, doc: Mapping) -> None:
    seen: dict[int, int] = {}
    for i, value in enumerate(_items(doc, "estimate")):
        cid = _id(value)
        if cid is None:
            continue
        if cid in seen:
            out.add(f"estimate[{i}]", "duplicate-context", f"context {cid} is already listed at estimate[{seen[cid]}]")
            continue
        seen[cid] = i


def canonical_event(value: str) -> str:
    """An event reference in its one written form (``context:007`` is ``context:7``)."""
    parts = value.split(":")
    if parts[0] == "context" and len(parts) == 2 and parts[1].isdigit():
        return f"context:{int(parts[1])}"
    return value


def _event_problem(path: str, value: str, keys: set[str], evidence: set[str]) -> tuple[str, str, str] | None:
    parts = value.split(":")
    if parts[0] == "phase" and len(parts) == 3:
        if parts[1] not in keys:
            return path, "unknown-phase", f"no phase {parts[1]!r} in phases"
        if parts[2] not in _PHASE_EVENTS:
            return path, "invalid-event", f"a phase event is its {' or its '.join(_PHASE_EVENTS)}"
        return None
    if parts[0] == "context" and len(parts) == 2:
        if not parts[1].isdigit() or int(parts[1]) <= 0:
            return path, "unresolved-label", f"context {parts[1]!r} must be given by id"
        return None
    if parts[0] == "evidence" and len(parts) == 3:
        ref = f"{parts[1]}:{parts[2]}"
        if not _EVIDENCE.match(ref):
            return path, "invalid-evidence-ref", "write evidence events as 'evidence:<kind>:<id>'"
        if ref not in evidence:
            return path, "evidence-not-used", f"{ref} is not listed in evidence"
        return None
    return path, "invalid-event", "an event is 'phase:<key>:<" + "|".join(_PHASE_EVENTS) + ">', 'context:<id>' or 'evidence:<kind>:<id>'"


def _questions(out: _Problems, doc: Mapping, keys: set[str], evidence: set[str]) -> None:
    seen: dict[str, int] = {}
    for i, q in _mapping_items(doc, "questions"):
        kind = q.get("kind")
        fields = QUESTION_FIELDS.get(kind) if isinstance(kind, str) else None  # any other kind is a schema error
        if fields is None:
            continue
        path = f"questions[{i}]"
        values = {}
        for name in fields:
            value = q.get(name)
            if not isinstance(value, str):
                continue
            if name == "phase":
                if value not in keys:
                    out.add(f"{path}.phase", "unknown-phase", f"no phase {value!r} in phases")
                values[name] = value
                continue
            problem = _event_problem(f"{path}.{name}", value, keys, evidence)
            if problem:
                out.add(*problem)
            values[name] = canonical_event(value)
        if len(fields) == 2 and len(values) == 2 and values[fields[0]] == values[fields[1]]:
            out.add(f"{path}.{fields[1]}", "same-event", "the two events must differ")
        key = json.dumps({"kind": q.get("kind"), **values}, sort_keys=True)
        if key in seen:
            out.add(path, "duplicate-question", f"the same question is asked at questions[{seen[key]}]")
        seen[key] = i
