"""A refusal met inside a weighing's job, as the domain error the job stores."""

from __future__ import annotations

from chronology.engine.errors import EngineError
from chronology.runs.compile import ModelRefused

__all__ = ["refused_in_job"]


def refused_in_job(exc: ModelRefused) -> EngineError:
    """``exc`` as the expected domain error :func:`chronology.jobs.execute` stores."""
    return EngineError(exc.message, code=exc.code, details=dict(exc.details))
