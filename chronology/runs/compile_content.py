"""A version's content document normalised to a :class:`~chronology.runs.model_inputs.ModelSpec`."""

from __future__ import annotations

from chronology.engine.legacy_names import read_content
from chronology.engine.interval_priors import DISTRIBUTIONS, describe
from chronology.engine.model_compiler import IntervalPriorInput, beginning_key
from chronology.engine.record_data import RelationshipData

from .model_inputs import ModelRefused, ModelSpec, PhaseSpec, Usage

__all__ = ["USES", "ARRANGEMENTS", "spec_from_content"]

USES = ("included", "excluded", "residual", "intrusive")
ARRANGEMENTS = ("sequential", "contiguous", "overlapping")


def _arrangement(phase: dict) -> tuple[str | None, float | None]:
    to_next = phase.get("to_next")
    if not to_next:
        return None, None
    return to_next.get("arrangement"), to_next.get("min_gap")


def spec_from_content(content: dict, relationships: list[RelationshipData], context_ids: set[int]) -> ModelSpec:
    """Normalise a validated version document (``chronology.interpretations.content``) to a :class:`ModelSpec`.

    The order policy is the interpretation's own (``content.order_policy``):
    every equality and uncertain relationship decided, defaults included.
    """
    from chronology.interpretations.content import order_policy

    content = read_content(content or {})
    members: dict[str, list[int]] = {}
    for a in content.get("assignments") or ():
        members.setdefault(a["phase"], []).append(int(a["context"]))
    phases, boundary_order, notes, intervals = [], [], [], []
    raw_phases = list(content.get("phases") or ())
    for j, p in enumerate(raw_phases):
        arrangement, gap = _arrangement(p)
        if arrangement not in ARRANGEMENTS and arrangement is not None:
            raise ModelRefused("invalid-input", f"unknown arrangement {arrangement!r}", phase=p["key"])
        if gap:
            notes.append(f"phase {p['key']}: a minimum gap of {gap:g} years to the next phase is not modelled "
                         "(only the order of the boundaries is)")
        if arrangement == "overlapping" and j + 1 < len(raw_phases):
            # overlapping phases keep independent boundaries; their starts are in order
            boundary_order.append((beginning_key(p["key"]), beginning_key(raw_phases[j + 1]["key"]), False))
        for kind, prior in (("duration", p.get("duration")), ("gap", (p.get("to_next") or {}).get("gap"))):
            if prior:
                intervals.append(_interval_input(str(p["key"]), kind, prior))
                notes.append(f"phase {p['key']}: {kind} prior {_prior_text(prior)} multiplies the span-uniform "
                             "prior")
        phases.append(PhaseSpec(str(p["key"]), str(p.get("name") or p["key"]), tuple(members.get(p["key"], ())),
                                arrangement))
    usages = [Usage(str(u["evidence"]), str(u.get("use") or "included"), float(u.get("outlier_prior") or 0.0))
              for u in content.get("evidence") or ()]
    for u in usages:
        if u.use not in USES:
            raise ModelRefused("invalid-input", f"unknown evidence use {u.use!r}", evidence=u.evidence)
    policy = order_policy(content, {r.id: r for r in relationships}, contexts=set(context_ids))
    overall = content.get("range")
    return ModelSpec(
        range=None if not overall else (float(overall["earliest"]), float(overall["latest"])),
        phases=phases,
        usages=usages,
        policy=policy,
        undated=tuple(int(c) for c in content.get("estimate") or ()),
        questions=[dict(q) for q in content.get("questions") or ()],
        boundary_order=tuple(boundary_order),
        notes=tuple(notes),
        interval_priors=tuple(intervals),
    )


def _interval_input(phase: str, kind: str, prior: dict) -> IntervalPriorInput:
    family = prior["distribution"]
    return IntervalPriorInput(phase, kind, family, {n: prior.get(n) for n in DISTRIBUTIONS.get(family, ())})


def _prior_text(prior: dict) -> str:
    names = DISTRIBUTIONS.get(prior.get("distribution"), ())
    return describe(prior["distribution"], *(float(prior[n]) for n in names))
