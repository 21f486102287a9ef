"""Typed exceptions raised by the engine.

Each carries a stable machine ``code`` (kebab-case), a human ``message`` and a
``details`` dict of plain data, so the API can map it to one 4xx error body
without knowing the algorithm that raised it.
"""

from __future__ import annotations

__all__ = [
    "EngineError",
    "OrderError",
    "CycleError",
    "ContradictionError",
    "CalibrationError",
    "EvidenceError",
    "ModelError",
    "SamplingCancelled",
    "DiagramError",
    "AlternativesInputError",
    "SearchCancelled",
]


class EngineError(Exception):
    """Base of every error the engine raises on purpose."""

    code = "engine-error"

    def __init__(self, message: str, *, code: str | None = None, details: dict | None = None):
        super().__init__(message)
        self.message = message
        if code is not None:
            self.code = code
        self.details = details or {}

    def as_dict(self) -> dict:
        return {"code": self.code, "message": self.message, **self.details}


class OrderError(EngineError):
    """The temporal order cannot be built as asked."""

    code = "order-error"


class CycleError(OrderError):
    """The relationships close a cycle; ``details['cycle']`` lists them in order."""

    code = "cycle"


class ContradictionError(OrderError):
    """An equality joins two contexts that are ordered."""

    code = "contradiction"


class CalibrationError(EngineError):
    """A determination or curve cannot be used for calibration."""

    code = "calibration-error"


class ModelError(EngineError):
    """A chronological model cannot be compiled or sampled."""

    code = "model-error"


class DiagramError(EngineError):
    """The stratigraphic diagram cannot be laid out from the data given."""

    code = "diagram-error"


class SamplingCancelled(EngineError):
    """A sampling run was stopped by its cancel check; ``details`` say how far it got."""

    code = "sampling-cancelled"


class EvidenceError(EngineError):
    """Calendar dating evidence (TPQ, TAQ, documentary or scientific date) is unusable."""

    code = "evidence-error"


class AlternativesInputError(EngineError):
    """An alternatives problem (base order and undecided items) is malformed."""

    code = "invalid-alternatives"


class SearchCancelled(EngineError):
    """A search over interpretive alternatives was stopped by its cancel check."""

    code = "search-cancelled"
