"""The questions a version asks of its model, as model questions and as plain words.

A version's content asks for the ``duration`` of a phase, the ``gap``
between two events or the ``precedence`` of one event over another
(:mod:`chronology.interpretations.content`).  Events are named there as
``phase:<key>:beginning|close``, ``context:<id>`` or
``evidence:<kind>:<id>``; here they become the model's event keys, and every
question gets a label in plain words that names contexts by label,
determinations by lab code and phases by name, never by internal id.
"""

from __future__ import annotations

from chronology.engine.legacy_names import event_ref, question_kind
from chronology.engine.model_compiler import QuestionInput, beginning_key, changeover_key, close_key

from .compile_evidence import KIND_ALIASES
from .model_inputs import ModelRefused

__all__ = ["boundary_keys", "boundary_labels", "compile_questions"]

def _refuse(message: str, **details):
    raise ModelRefused("invalid-question", message, **details)


def boundary_keys(phases) -> dict[str, str]:
    """``phase:<key>:beginning|close`` -> the model's boundary key (contiguous phases share a changeover)."""
    out = {}
    for j, p in enumerate(phases):
        out.setdefault(f"phase:{p.key}:beginning", beginning_key(p.key))
        nxt = phases[j + 1] if j + 1 < len(phases) else None
        if nxt is not None and p.arrangement_next == "contiguous":
            shared = changeover_key(p.key, nxt.key)
            out[f"phase:{p.key}:close"] = out[f"phase:{nxt.key}:beginning"] = shared
        else:
            out[f"phase:{p.key}:close"] = close_key(p.key)
    return out


def boundary_labels(phases) -> dict[str, str]:
    """``phase:<key>:beginning|close`` -> "Beginning of X", "Close of X" or "Changeover X to Y"."""
    out = {}
    for j, p in enumerate(phases):
        name = p.label or p.key
        out.setdefault(f"phase:{p.key}:beginning", f"Beginning of {name}")
        nxt = phases[j + 1] if j + 1 < len(phases) else None
        if nxt is not None and p.arrangement_next == "contiguous":
            shared = f"Changeover {name} to {nxt.label or nxt.key}"
            out[f"phase:{p.key}:close"] = out[f"phase:{nxt.key}:beginning"] = shared
        else:
            out[f"phase:{p.key}:close"] = f"Close of {name}"
    return out


def compile_questions(reading, rep: dict, terms, event_labels: dict) -> tuple[list[QuestionInput], dict]:
    """Model questions of ``reading`` and a plain-words label for each (by question key).

    Parameters
    ----------
    reading : ModelSpec
        Its ``questions`` may use the earlier names (read through the alias table).
    rep : dict
        Context id -> the context id of its event (equal contexts share one).
    terms : list
        The evidence terms (``key``, ``use``, ``context``, ``label``).
    event_labels : dict
        Event context id -> its label ("1013 and 2013" for equal contexts).
    """
    keys = boundary_keys(reading.phases)
    words = boundary_labels(reading.phases)
    names = {p.key: p.label or p.key for p in reading.phases}
    by_key = {t.key: t for t in terms}

    def event(i, ref) -> tuple[str, str]:
        ref = event_ref(ref)
        if ref in keys:
            return keys[ref], words[ref]
        kind, _, rest = ref.partition(":")
        if kind == "context":
            c = int(rest)
            if c not in rep:
                _refuse(f"question {i + 1} names a context that is not in the model", question=i, context=c)
            return f"ctx:{rep[c]}", f"context {event_labels.get(rep[c], rep[c])}"
        if kind == "evidence":
            ek, _, number = rest.partition(":")
            t = by_key.get(f"{KIND_ALIASES.get(ek, ek)}:{number}")
            if t is None or t.use == "excluded":
                _refuse(f"question {i + 1} names evidence the model does not use", question=i, evidence=rest)
            if t.use == "included":
                return f"ctx:{rep[t.context]}", f"{t.label} (context {event_labels.get(rep[t.context], '')})"
            return f"sample:{t.key}", f"the sample dated by {t.label}"
        _refuse(f"question {i + 1} names an event that is not a phase boundary, context or evidence", question=i,
                event=ref)

    out, labels = [], {}
    for i, q in enumerate(reading.questions):
        kind = question_kind(q["kind"])
        if kind == "duration":
            phase = str(q["phase"])
            qi = QuestionInput("duration", phase, None, f"duration:{phase}")
            text = f"How long {names.get(phase, phase)} lasted"
        elif kind == "gap":
            (a, ta), (b, tb) = event(i, q["from"]), event(i, q["to"])
            qi = QuestionInput("gap", a, b, f"gap:{a}:{b}")
            text = f"Gap from {ta} to {tb}"
        elif kind == "precedence":
            (a, ta), (b, tb) = event(i, q["earlier"]), event(i, q["later"])
            qi = QuestionInput("precedence", a, b, f"precedence:{a}:{b}")
            text = f"Probability that {ta} came before {tb}"
        else:
            _refuse(f"question {i + 1} is of an unknown kind", question=i, kind=kind)
        out.append(qi)
        labels[qi.key] = q.get("label") or text
    return out, labels
