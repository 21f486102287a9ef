"""A committed version compiled with changes that are never saved: alternatives and variations.

Weighing and sensitivity runs compile a version under changes its author did
not make: another decision for an undecided equality or uncertain
relationship (an *alternative*), or another curve, reservoir offset, outlier
prior, overall range or arrangement (a *variation*).  The changes are plain
data applied to copies of the version's content, its normalised reading and
the evidence as it stood at the version's revision; the compile is the runs
app's own (:func:`chronology.runs.compile.build_model`), so a variant is
exactly the model a version with those changes would give.

A variation is a JSON object; every key is optional:

``label``         text naming it in the report;
``curve``         id of another imported curve for every determination;
``delta_r``       ``{"mean": ..., "sd": ...}`` reservoir offset for every determination;
``outlier_prior`` the prior outlier probability of every radiocarbon usage;
``range``         ``[lo, hi]``, the overall range in astronomical years;
``arrangement``   ``{"phase": key or "*", "to": "sequential"|"contiguous"|"overlapping"}``.
"""

from __future__ import annotations

import copy
import dataclasses
import itertools

from chronology.engine.errors import EngineError
from chronology.runs.compile import ARRANGEMENTS, CompiledModel, ModelRefused, build_model, spec_from_content
from chronology.runs.sources import evidence_at, version_parts

__all__ = ["VARIATION_KEYS", "Decisions", "check_variation", "compile_variant", "decision_sets", "order_of", "record_of",
           "undecided_items"]

VARIATION_KEYS = ("label", "curve", "delta_r", "outlier_prior", "range", "arrangement")


@dataclasses.dataclass(frozen=True)
class Decisions:
    """Decisions for some undecided items: relationship id -> accepted or not."""

    accepted: frozenset = frozenset()
    rejected: frozenset = frozenset()


def _invalid(field: str, message: str) -> ModelRefused:
    return ModelRefused("invalid-variation", message, status=400, field=field)


def check_variation(v, index: int = 0) -> dict:
    """The variation's shape, checked; raises ``ModelRefused`` (400) naming the field."""
    where = f"variations[{index}]"
    if not isinstance(v, dict):
        raise _invalid(where, "a variation is a JSON object")
    unknown = sorted(set(v) - set(VARIATION_KEYS))
    if unknown:
        raise _invalid(f"{where}.{unknown[0]}", f"unknown key {unknown[0]!r}; allowed: {', '.join(VARIATION_KEYS)}")
    if len(set(v) - {"label"}) == 0:
        raise _invalid(where, "a variation changes at least one of curve, delta_r, outlier_prior, range, arrangement")
    if "curve" in v and not isinstance(v["curve"], (int, str)):
        raise _invalid(f"{where}.curve", "curve is the id of an imported curve")
    if "delta_r" in v:
        d = v["delta_r"]
        if not (isinstance(d, dict) and isinstance(d.get("mean"), (int, float))
                and isinstance(d.get("sd", 0), (int, float)) and d.get("sd", 0) >= 0):
            raise _invalid(f"{where}.delta_r", "delta_r is {\"mean\": number, \"sd\": number >= 0}")
    if "outlier_prior" in v:
        q = v["outlier_prior"]
        if not isinstance(q, (int, float)) or isinstance(q, bool) or not 0 <= q < 1:
            raise _invalid(f"{where}.outlier_prior", "outlier_prior is a probability in [0, 1)")
    if "range" in v:
        r = v["range"]
        if not (isinstance(r, list) and len(r) == 2 and all(isinstance(x, (int, float)) for x in r) and r[0] < r[1]):
            raise _invalid(f"{where}.range", "range is [lo, hi] in astronomical years with lo < hi")
    if "arrangement" in v:
        a = v["arrangement"]
        if not (isinstance(a, dict) and isinstance(a.get("phase"), str) and a.get("to") in ARRANGEMENTS):
            raise _invalid(f"{where}.arrangement",
                           "arrangement is {\"phase\": key or \"*\", \"to\": one of " + ", ".join(ARRANGEMENTS) + "}")
    if "label" in v and not isinstance(v["label"], str):
        raise _invalid(f"{where}.label", "label is text")
    return v


def record_of(version):
    """(project, revision, content, contexts, relationships) of a committed version."""
    from projects.record.reads import snapshot

    project, revision, content = version_parts(version)
    contexts, relationships = snapshot(project, revision)
    return project, revision, content, contexts, relationships


def undecided_items(content: dict, relationships) -> list[tuple[int, str]]:
    """(relationship id, "equality" or "uncertain") of every item the content leaves undecided, ascending."""
    from chronology.interpretations.content import effective_decisions

    eff = effective_decisions(content, {r.id: r for r in relationships})
    items = [(rid, "equality") for rid, d in eff["equalities"].items() if d == "undecided"]
    items += [(rid, "uncertain") for rid, d in eff["uncertain"].items() if d == "undecided"]
    return sorted(items)


def decision_sets(items):
    """Each of the ``2^k`` ways of deciding ``items`` ((id, kind) pairs): (accepted ids, rejected ids), all accepted first."""
    for bits in itertools.product((True, False), repeat=len(items)):
        yield (sorted(rid for (rid, _k), yes in zip(items, bits) if yes),
               sorted(rid for (rid, _k), yes in zip(items, bits) if not yes))


def _decided(content: dict, items: list[tuple[int, str]], decisions: Decisions) -> dict:
    doc = copy.deepcopy(content)
    equalities = {e["relationship"]: e for e in doc.get("equalities") or ()}
    uncertain = {e["relationship"]: e for e in doc.get("uncertain") or ()}
    for rid, kind in items:
        if rid not in decisions.accepted and rid not in decisions.rejected:
            continue
        yes = rid in decisions.accepted
        if kind == "equality":
            equalities[rid] = {"relationship": rid, "decision": "accepted" if yes else "set_aside",
                               "reason": "weighed as an alternative"}
        else:
            uncertain[rid] = {"relationship": rid, "decision": "accepted" if yes else "rejected"}
    doc["equalities"] = list(equalities.values())
    doc["uncertain"] = list(uncertain.values())
    return doc


def _with_arrangement(content: dict, change: dict) -> dict:
    doc = copy.deepcopy(content)
    phases = doc.get("phases") or []
    keys = [p["key"] for p in phases]
    if change["phase"] != "*" and change["phase"] not in keys:
        raise _invalid("arrangement.phase", f"the version has no phase {change['phase']!r}")
    for j, p in enumerate(phases[:-1]):
        if change["phase"] in ("*", p["key"]):
            p["to_next"] = {**(p.get("to_next") or {}), "arrangement": change["to"]}
            if change["to"] != "sequential":
                # only a sequential arrangement has a gap, so a gap prior goes with it
                p["to_next"].pop("gap", None)
    return doc


def _with_evidence_changes(evidence, variation: dict, curve_loader):
    if "curve" not in variation and "delta_r" not in variation:
        return evidence
    ev = copy.copy(evidence)
    ev.curves = dict(evidence.curves)
    ev.determinations = dict(evidence.determinations)
    name = None
    if "curve" in variation:
        name = str(variation["curve"])
        if name not in ev.curves:
            ev.curves[name] = curve_loader(name)
    for ident, d in evidence.determinations.items():
        changes = {}
        if name is not None:
            changes["curve"] = name
        if "delta_r" in variation:
            changes["delta_r"] = float(variation["delta_r"]["mean"])
            changes["delta_r_sigma"] = float(variation["delta_r"].get("sd", 0.0))
        ev.determinations[ident] = dataclasses.replace(d, **changes)
    return ev


def _load_curve(project):
    def load(name: str):
        from chronology.evidence.curves import engine_curve
        from chronology.evidence.models import Curve

        curve = Curve.objects.select_related("table").filter(pk=name if name.isdigit() else -1).first()
        if curve is None:
            raise ModelRefused("unknown-curve", f"no imported curve {name!r}", status=400, field="curve")
        return engine_curve(curve)
    return load


def order_of(version, decisions: Decisions):
    """The record's temporal order under ``version`` with ``decisions``, and the record: (graph, contexts).

    Raises ``ModelRefused`` as the compile would.
    """
    from chronology.engine.temporal_graph import compile_order

    _project, _revision, content, contexts, relationships = record_of(version)
    content = _decided(content, undecided_items(content, relationships), decisions)
    try:
        reading = spec_from_content(content, relationships, {c.id for c in contexts})
        return compile_order(contexts, relationships, reading.policy), contexts
    except EngineError as exc:
        raise ModelRefused.from_engine(exc) from exc


def compile_variant(version, *, decisions: Decisions | None = None, variation: dict | None = None,
                    range_: tuple[float, float] | None = None) -> CompiledModel:
    """Compile ``version`` with ``decisions`` for undecided items and one ``variation`` applied.

    ``range_`` sets the overall range (for comparing models on one range);
    a variation's own ``range`` wins over it.

    Raises
    ------
    ModelRefused
        As :func:`chronology.runs.compile.compile_version` does, or
        ``invalid-variation``/``unknown-curve`` (400) for a bad variation.
    """
    project, revision, content, contexts, relationships = record_of(version)
    variation = variation or {}
    if decisions is not None:
        content = _decided(content, undecided_items(content, relationships), decisions)
    if "arrangement" in variation:
        content = _with_arrangement(content, variation["arrangement"])
    evidence = _with_evidence_changes(evidence_at(project, revision), variation, _load_curve(project))
    try:
        reading = spec_from_content(content, relationships, {c.id for c in contexts})
    except EngineError as exc:
        raise ModelRefused.from_engine(exc) from exc
    if "outlier_prior" in variation:
        q = float(variation["outlier_prior"])
        reading.usages = [dataclasses.replace(u, outlier_prior=q)
                          if u.evidence.split(":")[0] in ("determination", "sample") else u for u in reading.usages]
    chosen_range = variation.get("range") or range_
    if chosen_range is not None:
        reading.range = (float(chosen_range[0]), float(chosen_range[1]))
    compiled = build_model(contexts, relationships, reading, evidence)
    return dataclasses.replace(compiled, record_revision=revision)
