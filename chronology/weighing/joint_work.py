"""The work of a joint weighing's jobs (see :mod:`chronology.weighing.joint`).

:func:`estimate_family` is one family's job: the marginal likelihood of its
encompassing model by stepping-stone sampling, then every reading's Bayes
factor against that model from one posterior and one prior-only run
(:func:`chronology.engine.encompassing.encompassing_weights`).
:func:`readings_of` turns the finished families into one row per reading,
``log p(y | reading) = log p(y | encompassing) + log BF``, with the errors
of the two added in quadrature.
"""

from __future__ import annotations

import itertools

import numpy as np

from chronology import jobs
from chronology.engine.encompassing import JointSettings, encompassing_weights
from chronology.engine.errors import SamplingCancelled
from chronology.engine.marginal_likelihood import SteppingStoneSettings, stepping_stone
from chronology.runs.compile import ModelRefused

from .candidates import compile_candidate
from .job_errors import refused_in_job
from .joint import reading_name, restrictions_of

__all__ = ["JOINT_KIND", "estimate_family", "readings_of"]

JOINT_KIND = "joint-readings"


def estimate_family(job, reporter: jobs.Reporter) -> dict:
    """One family's encompassing marginal likelihood and its readings' Bayes factors."""
    from chronology.runs.sources import find_version

    reporter.progress(0.02, force=True, step="compiling")
    family = job.params["candidate"]
    rng = tuple(job.params["range"]) if job.params.get("range") else None
    try:
        compiled = compile_candidate(job.project, family, rng)
        restrictions, skeleton, refused = restrictions_of(find_version(job.project, family["version"]), family,
                                                          compiled, rng)
    except ModelRefused as exc:
        raise refused_in_job(exc) from exc
    ss = SteppingStoneSettings(**job.params["settings"])
    js = JointSettings(**job.params["joint"])
    reporter.log(f"{len(compiled.model.events)} events; {len(restrictions)} relationships weighed jointly")
    try:
        ml = stepping_stone(compiled.model, entropy=int(job.params["seed"]), settings=ss, workers=1,
                            progress=lambda f: reporter.progress(0.05 + 0.6 * f, step="stepping stones"),
                            cancel=reporter.cancelled)
        weights = None
        if restrictions:
            weights = encompassing_weights(compiled.model, restrictions, entropy=int(job.params["seed"]) + 1,
                                           settings=js, skeleton=skeleton, cancel=reporter.cancelled,
                                           progress=lambda f: reporter.progress(0.65 + 0.35 * f, step="readings"))
    except SamplingCancelled as exc:
        raise jobs.JobCancelled() from exc
    labels = _node_labels(find_version(job.project, family["version"]))
    joint = weights.as_dict() if weights is not None else None
    for reading in (joint or {}).get("readings", ()):
        if reading["cycle"]:
            reading["cycle"] = [labels.get(n, n) for n in reading["cycle"]]
    return {"candidate": family, "model_hash": compiled.model_hash, **ml.as_dict(),
            "refused_relationships": {str(k): v for k, v in refused.items()},
            "joint": joint}


def _node_labels(version) -> dict[str, str]:
    from .variants import record_of

    contexts = record_of(version)[3]
    return {**{f"ctx:{c.id}": f"context {c.label}" for c in contexts},
            **{f"context:{c.id}": f"context {c.label}" for c in contexts}}


def _refusal(reading: dict, refused_names: list[str], refused: dict) -> tuple[str, str] | None:
    if refused_names:
        rid = refused_names[0]
        return refused[rid]["code"], f"accepting #{rid} alone is refused: {refused[rid]['reason']}"
    if reading is None:
        return None
    if reading["cycle"]:
        return "cycle", "the accepted relationships close a cycle: " + " before ".join(reading["cycle"])
    if reading["log_bf"] is None:
        return "not-estimable", (f"{reading['posterior_draws']} of the posterior draws and {reading['prior_draws']} "
                                 "of the prior draws satisfy these relationships: too few to estimate; run longer")
    return None


def readings_of(family_result: dict, label: str) -> tuple[list[dict], list[dict]]:
    """(estimable readings, refused readings) of one finished family, named as the one-by-one weighing names them."""
    family = family_result["candidate"]
    items = [tuple(i) for i in family["items"]]
    weighed = family_result["joint"] or {"names": [], "readings": [{"accepted": [], "log_bf": 0.0, "mcse": 0.0,
                                                                     "cycle": None}]}
    by_subset = {frozenset(r["accepted"]): r for r in weighed["readings"]}
    refused = family_result.get("refused_relationships") or {}
    rows, out_refused = [], []
    joint = [str(r) for r in family["joint"]]
    for bits in itertools.product((True, False), repeat=len(joint)):
        chosen = [rid for rid, yes in zip(joint, bits) if yes]
        reading = by_subset.get(frozenset(c for c in chosen if c not in refused))
        accepted = sorted(family["accepted"] + [int(c) for c in chosen])
        rejected = sorted(set(family["rejected"]) - set(accepted))
        spec = {"name": reading_name(label, items, set(accepted)), "version": family["version"],
                "accepted": accepted, "rejected": rejected}
        why = _refusal(reading, [c for c in chosen if c in refused], refused)
        if why is not None:
            out_refused.append({**spec, "code": why[0], "reason": why[1]})
            continue
        rows.append({**spec, "log_ml": family_result["log_marginal_likelihood"] + reading["log_bf"],
                     "mcse": float(np.hypot(family_result["mcse"], reading["mcse"])),
                     "family_mcse": float(family_result["mcse"]), "joint_mcse": float(reading["mcse"]),
                     "log_bayes_factor_vs_encompassing": reading["log_bf"],
                     "posterior_fraction": reading.get("posterior_fraction", 1.0),
                     "prior_fraction": reading.get("prior_fraction", 1.0)})
    return rows, out_refused
