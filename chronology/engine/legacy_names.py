"""Earlier names of model questions and phase boundaries, read as today's.

Interpretation versions are immutable and hashed, and archived model files
are kept with their runs, so documents written under the earlier vocabulary
stay exactly as stored.  They are read through this one table: every reader
normalises on read (:func:`read_content`, :func:`question_kind`), every writer
writes only the current names.  Hashes are always taken of the document as
stored, never of its normalised reading.

Current vocabulary:

* question kinds ``duration`` (how long a phase lasted), ``gap`` (the time
  between two events) and ``precedence`` (the probability that one event came
  before another);
* phase boundary references ``phase:<key>:beginning`` and
  ``phase:<key>:close``; the boundary two contiguous phases share is their
  ``changeover``.
"""

from __future__ import annotations

import copy
from typing import Any, Mapping

__all__ = ["QUESTION_KINDS", "BOUNDARY_ENDS", "question_kind", "event_ref", "read_content", "uses_legacy_names"]

#: Earlier question kind -> current kind.
QUESTION_KINDS: Mapping[str, str] = {"span": "duration", "interval": "gap", "order": "precedence"}
#: Earlier last part of ``phase:<key>:<end>`` -> current one.
BOUNDARY_ENDS: Mapping[str, str] = {"start": "beginning", "end": "close"}

_EVENT_FIELDS = ("from", "to", "earlier", "later")


def question_kind(kind: Any) -> Any:
    """The current name of a question kind (unknown values pass through for the validator to judge)."""
    return QUESTION_KINDS.get(kind, kind) if isinstance(kind, str) else kind


def event_ref(ref: Any) -> Any:
    """``phase:<key>:start|end`` read as ``phase:<key>:beginning|close``; anything else unchanged."""
    if not isinstance(ref, str):
        return ref
    parts = ref.split(":")
    if len(parts) == 3 and parts[0] == "phase" and parts[2] in BOUNDARY_ENDS:
        return f"phase:{parts[1]}:{BOUNDARY_ENDS[parts[2]]}"
    return ref


def _question(q: Any) -> Any:
    if not isinstance(q, Mapping):
        return q
    out = dict(q)
    if "kind" in out:
        out["kind"] = question_kind(out["kind"])
    for name in _EVENT_FIELDS:
        if name in out:
            out[name] = event_ref(out[name])
    return out


def uses_legacy_names(document: Any) -> bool:
    """Whether an interpretation document uses any earlier name."""
    if not isinstance(document, Mapping) or not isinstance(document.get("questions"), list):
        return False
    return any(_question(q) != q for q in document["questions"] if isinstance(q, Mapping))


def read_content(document: Any) -> Any:
    """An interpretation document with every earlier name read as the current one.

    Returns a new document when something was renamed, else ``document``
    itself; the argument is never modified (stored versions stay as stored).
    """
    if not uses_legacy_names(document):
        return document
    out = copy.deepcopy(dict(document))
    out["questions"] = [_question(q) for q in out["questions"]]
    return out
