"""The compiled chronological model as plain data.

A :class:`Model` is what the sampler consumes and what a model run archives:
the calendar grid, the events (dated, undated and boundary parameters) with
their evidence as log-likelihood arrays on the grid, the order constraints
between events, the phases with their arrangement, the overall range
``L..U``, any informative priors on the length of a phase or of the gap
after it (:class:`IntervalPrior`) and the questions to answer from the draws.

Dates are astronomical years (1 BC = 0) increasing toward the present.  Every
grid value is the middle of its cell: cell ``i`` covers
``[start + (i - 1/2) step, start + (i + 1/2) step)`` and the likelihood is
constant inside it.

Serialisation is our own JSON schema (:data:`MODEL_JSON_SCHEMA`, JSON-Schema
draft 2020-12).  Log-likelihood arrays are lists of numbers in which ``null``
stands for minus infinity (zero likelihood), since JSON has no infinities.
The canonical form (sorted keys, no whitespace, shortest round-trip float
repr) is hashed with SHA-256 to give :meth:`Model.spec_hash`.
"""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass, field

import numpy as np

from chronology.engine.grid import CalendarGrid
from chronology.engine.interval_priors import DISTRIBUTIONS, INTERVAL_KINDS
from chronology.engine.legacy_names import question_kind

__all__ = [
    "EVENT_KINDS",
    "ARRANGEMENTS",
    "QUESTION_KINDS",
    "PRIORS",
    "MODEL_SCHEMA_VERSION",
    "READABLE_SCHEMA_VERSIONS",
    "MODEL_JSON_SCHEMA",
    "Evidence",
    "Event",
    "Constraint",
    "Phase",
    "IntervalPrior",
    "Question",
    "Model",
]

EVENT_KINDS = ("dated", "undated", "boundary")
ARRANGEMENTS = ("sequential", "contiguous", "overlapping")
QUESTION_KINDS = ("duration", "gap", "precedence")
#: ``span-uniform``: Nicholls & Jones (2001); ``uniform``: the plain order prior.
PRIORS = ("span-uniform", "uniform")
MODEL_SCHEMA_VERSION = 2
#: Versions :meth:`Model.from_dict` reads; version 1 used the earlier question names.
READABLE_SCHEMA_VERSIONS = (1, 2)

_LOGLIK_ARRAY = {"type": "array", "items": {"type": ["number", "null"]}}

#: JSON-Schema (draft 2020-12) of :meth:`Model.to_json`.
MODEL_JSON_SCHEMA: dict = {
    "$schema": "https://json-schema.org/draft/2020-12/schema",
    "title": "Tellstack chronological model",
    "type": "object",
    "required": ["schema_version", "grid", "range", "prior", "events", "constraints", "phases", "questions"],
    "additionalProperties": False,
    "properties": {
        "schema_version": {"const": MODEL_SCHEMA_VERSION},
        "grid": {
            "type": "object",
            "required": ["start", "step", "n"],
            "additionalProperties": False,
            "properties": {
                "start": {"type": "number"},
                "step": {"type": "number", "exclusiveMinimum": 0},
                "n": {"type": "integer", "minimum": 2},
            },
        },
        "range": {
            "type": "object",
            "required": ["lo", "hi"],
            "additionalProperties": False,
            "properties": {"lo": {"type": "number"}, "hi": {"type": "number"}},
        },
        "prior": {"enum": list(PRIORS)},
        "excluded_evidence": {"type": "array", "items": {"type": "string"}},
        "events": {
            "type": "array",
            "items": {
                "type": "object",
                "required": ["key", "kind", "label", "phase", "evidence"],
                "additionalProperties": False,
                "properties": {
                    "key": {"type": "string", "minLength": 1},
                    "kind": {"enum": list(EVENT_KINDS)},
                    "label": {"type": "string"},
                    "phase": {"type": ["string", "null"]},
                    "offset_of": {"type": ["string", "null"]},
                    "offset_direction": {"enum": ["older", "younger", None]},
                    "evidence": {
                        "type": "array",
                        "items": {
                            "type": "object",
                            "required": ["key", "loglik"],
                            "additionalProperties": False,
                            "properties": {
                                "key": {"type": "string", "minLength": 1},
                                "label": {"type": "string"},
                                "kind": {"type": "string"},
                                "loglik": _LOGLIK_ARRAY,
                                "outlier_loglik": {"anyOf": [_LOGLIK_ARRAY, {"type": "null"}]},
                                "outlier_prior": {"type": "number", "minimum": 0, "maximum": 1},
                                "bound": {"type": ["number", "null"]},
                            },
                        },
                    },
                },
            },
        },
        "constraints": {
            "type": "array",
            "items": {
                "type": "array",
                "prefixItems": [{"type": "string"}, {"type": "string"}, {"type": "boolean"}],
                "minItems": 3,
                "maxItems": 3,
            },
        },
        "phases": {
            "type": "array",
            "items": {
                "type": "object",
                "required": ["key", "label", "start", "end", "members", "arrangement_next"],
                "additionalProperties": False,
                "properties": {
                    "key": {"type": "string", "minLength": 1},
                    "label": {"type": "string"},
                    "start": {"type": "string"},
                    "end": {"type": "string"},
                    "members": {"type": "array", "items": {"type": "string"}},
                    "arrangement_next": {"enum": list(ARRANGEMENTS) + [None]},
                },
            },
        },
        "interval_priors": {
            "type": "array",
            "items": {
                "type": "object",
                "required": ["kind", "phase", "earlier", "later", "distribution", "parameters"],
                "additionalProperties": False,
                "properties": {
                    "kind": {"enum": list(INTERVAL_KINDS)},
                    "phase": {"type": "string"},
                    "earlier": {"type": "string"},
                    "later": {"type": "string"},
                    "distribution": {"enum": list(DISTRIBUTIONS)},
                    "parameters": {"type": "object", "additionalProperties": {"type": "number"}},
                },
            },
        },
        "questions": {
            "type": "array",
            "items": {
                "type": "object",
                "required": ["key", "kind", "a", "b"],
                "additionalProperties": False,
                "properties": {
                    "key": {"type": "string", "minLength": 1},
                    "kind": {"enum": list(QUESTION_KINDS)},
                    "a": {"type": "string"},
                    "b": {"type": ["string", "null"]},
                },
            },
        },
    },
}


def _encode_loglik(arr: np.ndarray | None):
    if arr is None:
        return None
    return [float(v) if math.isfinite(v) else None for v in np.asarray(arr, dtype=float)]


def _decode_loglik(values) -> np.ndarray | None:
    if values is None:
        return None
    return np.array([-np.inf if v is None else float(v) for v in values], dtype=float)


@dataclass(frozen=True, eq=False)
class Evidence:
    """One likelihood term attached to an event.

    Parameters
    ----------
    key : str
        Stable identifier (for a radiocarbon determination, its lab code).
    loglik : numpy.ndarray
        Log-likelihood on the model grid; ``-inf`` where the likelihood is zero.
    outlier_loglik : numpy.ndarray or None
        Log-likelihood of the outlier component (Christen 1994) with its shift
        already integrated out, i.e. a broader normal likelihood; ``None`` when
        the term is not under the outlier model.
    outlier_prior : float
        Prior probability that the term is an outlier (0 when not modelled).
    label, kind : str
        Display label and evidence kind (``radiocarbon``, ``calendar`` ...).
    bound : float or None
        For a terminus (``tpq``/``taq``), its exact year: a hard bound the
        sampler holds inside the grid cell that contains it (the log-likelihood
        alone bounds the event only to whole cells).
    """

    key: str
    loglik: np.ndarray
    outlier_loglik: np.ndarray | None = None
    outlier_prior: float = 0.0
    label: str = ""
    kind: str = "radiocarbon"
    bound: float | None = None

    @property
    def has_outlier_model(self) -> bool:
        return self.outlier_loglik is not None and self.outlier_prior > 0.0

    def as_dict(self) -> dict:
        out = {
            "key": self.key,
            "label": self.label,
            "kind": self.kind,
            "loglik": _encode_loglik(self.loglik),
            "outlier_loglik": _encode_loglik(self.outlier_loglik),
            "outlier_prior": float(self.outlier_prior),
        }
        if self.bound is not None:
            out["bound"] = float(self.bound)
        return out

    @classmethod
    def from_dict(cls, d: dict) -> "Evidence":
        return cls(
            key=d["key"],
            loglik=_decode_loglik(d["loglik"]),
            outlier_loglik=_decode_loglik(d.get("outlier_loglik")),
            outlier_prior=float(d.get("outlier_prior", 0.0)),
            label=d.get("label", ""),
            kind=d.get("kind", "radiocarbon"),
            bound=None if d.get("bound") is None else float(d["bound"]),
        )


@dataclass(frozen=True, eq=False)
class Event:
    """A parameter of the model: an event date or a phase boundary.

    ``offset_of`` names the context event a residual (``older``) or intrusive
    (``younger``) sample belongs to; such an event carries the sample's
    evidence and is constrained one-sidedly against that context event.
    """

    key: str
    kind: str
    label: str = ""
    phase: str | None = None
    evidence: tuple[Evidence, ...] = ()
    offset_of: str | None = None
    offset_direction: str | None = None

    def as_dict(self) -> dict:
        return {
            "key": self.key,
            "kind": self.kind,
            "label": self.label,
            "phase": self.phase,
            "offset_of": self.offset_of,
            "offset_direction": self.offset_direction,
            "evidence": [e.as_dict() for e in self.evidence],
        }

    @classmethod
    def from_dict(cls, d: dict) -> "Event":
        return cls(
            key=d["key"],
            kind=d["kind"],
            label=d.get("label", ""),
            phase=d.get("phase"),
            evidence=tuple(Evidence.from_dict(e) for e in d["evidence"]),
            offset_of=d.get("offset_of"),
            offset_direction=d.get("offset_direction"),
        )


@dataclass(frozen=True)
class Constraint:
    """``earlier`` precedes ``later`` (strictly or not).

    On a continuous time axis strict and weak order have the same posterior
    (ties have probability zero); the flag is kept for the record.
    """

    earlier: str
    later: str
    strict: bool = True


@dataclass(frozen=True)
class Phase:
    """A phase: its beginning (``start``) and close (``end``) boundary events, members, and link to the next phase.

    The field names ``start``/``end`` are those of the archived model JSON;
    :attr:`beginning` and :attr:`close` read them in the words of the outputs.
    """

    key: str
    label: str
    start: str
    end: str
    members: tuple[str, ...]
    arrangement_next: str | None = None

    @property
    def beginning(self) -> str:
        return self.start

    @property
    def close(self) -> str:
        return self.end


@dataclass(frozen=True)
class IntervalPrior:
    """An informative prior on ``later - earlier``, the length between two events.

    ``kind`` is ``duration`` (a phase's beginning to its close) or ``gap``
    (its close to the next phase's beginning); ``phase`` names the phase;
    ``parameters`` are the family's two parameters in the order of
    :data:`~chronology.engine.interval_priors.DISTRIBUTIONS` (e.g. ``(min,
    max)`` for the uniform).  The density multiplies the boundary prior
    (:mod:`chronology.engine.priors`).
    """

    kind: str
    phase: str
    earlier: str
    later: str
    distribution: str
    parameters: tuple[float, float]

    def as_dict(self) -> dict:
        names = DISTRIBUTIONS[self.distribution]
        return {"kind": self.kind, "phase": self.phase, "earlier": self.earlier, "later": self.later,
                "distribution": self.distribution,
                "parameters": {n: float(v) for n, v in zip(names, self.parameters)}}

    @classmethod
    def from_dict(cls, d: dict) -> "IntervalPrior":
        names = DISTRIBUTIONS[d["distribution"]]
        return cls(d["kind"], d["phase"], d["earlier"], d["later"], d["distribution"],
                   tuple(float(d["parameters"][n]) for n in names))


@dataclass(frozen=True)
class Question:
    """A derived quantity: ``duration`` of phase ``a``, ``gap`` ``b - a``, or ``precedence`` P(a before b)."""

    key: str
    kind: str
    a: str
    b: str | None = None


@dataclass(frozen=True, eq=False)
class Model:
    """A compiled chronological model (see the module docstring)."""

    grid: CalendarGrid
    events: tuple[Event, ...]
    constraints: tuple[Constraint, ...]
    phases: tuple[Phase, ...]
    range_lo: float
    range_hi: float
    questions: tuple[Question, ...] = ()
    prior: str = "span-uniform"
    excluded_evidence: tuple[str, ...] = field(default=())
    interval_priors: tuple[IntervalPrior, ...] = ()

    # --- lookups -------------------------------------------------------
    @property
    def event_keys(self) -> tuple[str, ...]:
        return tuple(e.key for e in self.events)

    def event(self, key: str) -> Event:
        for e in self.events:
            if e.key == key:
                return e
        raise KeyError(key)

    def phase(self, key: str) -> Phase:
        for p in self.phases:
            if p.key == key:
                return p
        raise KeyError(key)

    @property
    def evidence(self) -> tuple[tuple[str, Evidence], ...]:
        """Every evidence term with its event key, in model order."""
        return tuple((e.key, ev) for e in self.events for ev in e.evidence)

    # --- serialisation -------------------------------------------------
    def as_dict(self) -> dict:
        out = {
            "schema_version": MODEL_SCHEMA_VERSION,
            "grid": {"start": float(self.grid.start), "step": float(self.grid.step), "n": int(self.grid.n)},
            "range": {"lo": float(self.range_lo), "hi": float(self.range_hi)},
            "prior": self.prior,
            "excluded_evidence": list(self.excluded_evidence),
            "events": [e.as_dict() for e in self.events],
            "constraints": [[c.earlier, c.later, bool(c.strict)] for c in self.constraints],
            "phases": [
                {
                    "key": p.key,
                    "label": p.label,
                    "start": p.start,
                    "end": p.end,
                    "members": list(p.members),
                    "arrangement_next": p.arrangement_next,
                }
                for p in self.phases
            ],
            "questions": [{"key": q.key, "kind": q.kind, "a": q.a, "b": q.b} for q in self.questions],
        }
        if self.interval_priors:
            # only when set, so models without them keep their hashes
            out["interval_priors"] = [p.as_dict() for p in self.interval_priors]
        return out

    def to_json(self) -> str:
        """Canonical JSON text (sorted keys, compact separators)."""
        return json.dumps(self.as_dict(), sort_keys=True, separators=(",", ":"), allow_nan=False)

    @classmethod
    def from_dict(cls, d: dict) -> "Model":
        if d.get("schema_version") not in READABLE_SCHEMA_VERSIONS:
            raise ValueError(f"unsupported model schema version {d.get('schema_version')!r}")
        g = d["grid"]
        return cls(
            grid=CalendarGrid(float(g["start"]), float(g["step"]), int(g["n"])),
            events=tuple(Event.from_dict(e) for e in d["events"]),
            constraints=tuple(Constraint(a, b, bool(s)) for a, b, s in d["constraints"]),
            phases=tuple(
                Phase(p["key"], p["label"], p["start"], p["end"], tuple(p["members"]), p["arrangement_next"])
                for p in d["phases"]
            ),
            range_lo=float(d["range"]["lo"]),
            range_hi=float(d["range"]["hi"]),
            # archived version-1 files name their questions in the earlier words
            questions=tuple(Question(q["key"], question_kind(q["kind"]), q["a"], q["b"]) for q in d["questions"]),
            prior=d["prior"],
            excluded_evidence=tuple(d.get("excluded_evidence", ())),
            interval_priors=tuple(IntervalPrior.from_dict(p) for p in d.get("interval_priors", ())),
        )

    @classmethod
    def from_json(cls, text: str) -> "Model":
        return cls.from_dict(json.loads(text))

    def spec_hash(self) -> str:
        """SHA-256 hex digest of :meth:`to_json`, stable across processes."""
        return hashlib.sha256(self.to_json().encode("utf-8")).hexdigest()
