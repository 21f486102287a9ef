"""A version's questions (spans, intervals, order probabilities) to the model's question inputs."""

from __future__ import annotations

from chronology.engine.model_compiler import QuestionInput

from .compile_evidence import KIND_ALIASES, Term
from .model_inputs import ModelRefused, ModelSpec, PhaseSpec

__all__ = ["boundary_keys", "model_questions"]


def boundary_keys(phases: list[PhaseSpec]) -> dict[str, str]:
    """``phase:<key>:start|end`` -> the model's boundary key (contiguous phases share one)."""
    out = {}
    for j, p in enumerate(phases):
        out.setdefault(f"phase:{p.key}:start", f"start:{p.key}")
        nxt = phases[j + 1] if j + 1 < len(phases) else None
        if nxt is not None and p.arrangement_next == "contiguous":
            shared = f"transition:{p.key}:{nxt.key}"
            out[f"phase:{p.key}:end"] = out[f"phase:{nxt.key}:start"] = shared
        else:
            out[f"phase:{p.key}:end"] = f"end:{p.key}"
    return out


def model_questions(reading: ModelSpec, rep: dict, terms: list[Term]) -> tuple[list[QuestionInput], dict]:
    boundaries = boundary_keys(reading.phases)
    by_key = {t.key: t for t in terms}

    def event(i, ref):
        if ref in boundaries:
            return boundaries[ref]
        kind, _, rest = ref.partition(":")
        if kind == "context":
            c = int(rest)
            if c not in rep:
                raise ModelRefused("invalid-question", f"question {i + 1} names context {c}, which is not in the "
                                   "model", question=i)
            return f"ctx:{rep[c]}"
        if kind == "evidence":
            ek, _, number = rest.partition(":")
            t = by_key.get(f"{KIND_ALIASES.get(ek, ek)}:{number}")
            if t is None or t.use == "excluded":
                raise ModelRefused("invalid-question", f"question {i + 1} names evidence {rest}, which the model "
                                   "does not use", question=i)
            return f"ctx:{rep[t.context]}" if t.use == "included" else f"sample:{t.key}"
        raise ModelRefused("invalid-question", f"question {i + 1}: unknown event {ref!r}", question=i)

    out, labels = [], {}
    for i, q in enumerate(reading.questions):
        kind = q["kind"]
        if kind == "span":
            qi = QuestionInput("span", str(q["phase"]), None, f"span:{q['phase']}")
        elif kind == "interval":
            a, b = event(i, q["from"]), event(i, q["to"])
            qi = QuestionInput("interval", a, b, f"interval:{a}:{b}")
        elif kind == "order":
            a, b = event(i, q["earlier"]), event(i, q["later"])
            qi = QuestionInput("order", a, b, f"order:{a}:{b}")
        else:
            raise ModelRefused("invalid-question", f"unknown question kind {kind!r}", question=i)
        out.append(qi)
        labels[qi.key] = q.get("label") or _question_text(q)
    return out, labels


def _question_text(q: dict) -> str:
    if q["kind"] == "span":
        return f"span of phase {q['phase']}"
    if q["kind"] == "interval":
        return f"interval from {q['from']} to {q['to']}"
    return f"probability that {q['earlier']} is earlier than {q['later']}"
