"""Plain inputs and outputs of model compilation, shared by the compiler and the database readers.

:class:`EvidenceSet` and its items are what :mod:`chronology.runs.sources`
reads from the database; :class:`ModelSpec` is a version's content normalised
by :mod:`chronology.runs.compile_content`; :class:`CompiledModel` is what
:func:`chronology.runs.compile.build_model` returns; :class:`ModelRefused` is
every refusal on the way.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from chronology.engine.curves import Curve
from chronology.engine.errors import EngineError
from chronology.engine.model import Model
from chronology.engine.temporal_graph import OrderPolicy

__all__ = [
    "ModelRefused",
    "Determination",
    "Sample",
    "CalendarDate",
    "Terminus",
    "EvidenceSet",
    "PhaseSpec",
    "Usage",
    "ModelSpec",
    "CompiledModel",
]


class ModelRefused(Exception):
    """The version cannot become a model; ``status`` is 409 (order conflict) or 422 (evidence)."""

    def __init__(self, code: str, message: str, *, status: int = 422, **details):
        super().__init__(message)
        self.code, self.message, self.status, self.details = code, message, status, details

    def as_dict(self) -> dict:
        return {"code": self.code, "message": self.message, **self.details}

    @classmethod
    def from_engine(cls, exc: EngineError) -> "ModelRefused":
        order_codes = {"cycle", "model-cycle", "contradiction", "order-error"}
        details = {k: v for k, v in exc.details.items() if k not in ("code", "message", "status")}
        return cls(exc.code, exc.message, status=409 if exc.code in order_codes else 422, **details)


@dataclass(frozen=True)
class Determination:
    """A radiocarbon determination; ``curve`` names an entry of ``EvidenceSet.curves``."""

    id: int
    lab_code: str
    cra: float
    sigma: float
    curve: str
    sample_id: int | None = None
    context_id: int | None = None
    delta_r: float = 0.0
    delta_r_sigma: float = 0.0


@dataclass(frozen=True)
class Sample:
    id: int
    context_id: int
    label: str = ""


@dataclass(frozen=True)
class CalendarDate:
    """A calendar date on a context: ``normal`` (mean ± sd), ``uniform`` (start..end) or ``fixed`` (year)."""

    id: int
    context_id: int
    form: str
    label: str = ""
    mean: float | None = None
    sd: float | None = None
    start: float | None = None
    end: float | None = None
    year: float | None = None


@dataclass(frozen=True)
class Terminus:
    """A terminus post quem (``tpq``) or ante quem (``taq``) for a context, astronomical year."""

    id: int
    context_id: int
    kind: str
    year: float
    label: str = ""


@dataclass
class EvidenceSet:
    samples: dict[int, Sample] = field(default_factory=dict)
    determinations: dict[int, Determination] = field(default_factory=dict)
    calendar: dict[int, CalendarDate] = field(default_factory=dict)
    termini: dict[int, Terminus] = field(default_factory=dict)
    curves: dict[str, Curve] = field(default_factory=dict)
    unsupported: dict[int, str] = field(default_factory=dict)

    def sample_determinations(self, sample_id: int) -> list[Determination]:
        return sorted((d for d in self.determinations.values() if d.sample_id == sample_id), key=lambda d: d.id)


@dataclass(frozen=True)
class PhaseSpec:
    key: str
    label: str
    members: tuple[int, ...]
    arrangement_next: str | None = None


@dataclass(frozen=True)
class Usage:
    evidence: str
    use: str = "included"
    outlier_prior: float = 0.0
    context: int | None = None


@dataclass
class ModelSpec:
    """A version's content, normalised (see :func:`spec_from_content`)."""

    phases: list[PhaseSpec] = field(default_factory=list)
    usages: list[Usage] = field(default_factory=list)
    policy: OrderPolicy = field(default_factory=OrderPolicy)
    undated: tuple = ()
    questions: list[dict] = field(default_factory=list)
    boundary_order: tuple = ()
    range: tuple[float, float] | None = None
    grid_step: float | None = None
    prior: str = "span-uniform"
    notes: tuple = ()
    #: ``IntervalPriorInput`` per duration or gap prior the version sets
    interval_priors: tuple = ()


@dataclass(frozen=True, eq=False)
class CompiledModel:
    """The model and what it was built from, for the run record.

    ``context_events`` maps each context the model uses to its event key
    (contexts merged into one event share it).
    """

    model: Model
    curves: tuple[dict, ...]
    notes: tuple[str, ...]
    evidence: tuple[dict, ...]
    question_labels: dict = field(default_factory=dict)
    record_revision: int | None = None
    context_events: dict = field(default_factory=dict)

    @property
    def model_hash(self) -> str:
        return self.model.spec_hash()
