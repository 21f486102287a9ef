"""The readings of a joint weighing's finished families, combined into one comparison.

Every reading of every family becomes a candidate with
``log p(y | reading) = log p(y | encompassing) + log BF`` and its error
(:func:`chronology.weighing.joint_work.readings_of`).  The readings of one
family share the stepping-stone estimate of their encompassing model, so
its error is common to them: it cancels from the Bayes factor of two
readings of one family and is drawn once per family in the simulation that
gives the probabilities' Monte Carlo errors (``log Z ~ N(estimate, mcse^2)``
per family, plus each reading's own error).  Posterior probabilities are
under equal prior weights on the readings; each jointly weighed
relationship's probability of holding is the sum over the readings that
accept it.
"""

from __future__ import annotations

import numpy as np

from chronology.engine.bayes_factors import PRIOR_CAUTION, strength_of
from chronology.engine.encompassing import ENCOMPASSING_METHOD
from chronology.engine.errors import EngineError
from chronology.engine.marginal_likelihood import MARGINAL_LIKELIHOOD_METHOD
from chronology.engine.posterior import CAUTION
from chronology.models import JobState

from .joint_work import readings_of

__all__ = ["JOINT_METHOD", "combine_joint", "simulated_log_ml", "probabilities"]

JOINT_METHOD = f"{ENCOMPASSING_METHOD}; each family's encompassing model by {MARGINAL_LIKELIHOOD_METHOD}"

_SIMULATIONS = 4000


def probabilities(log_ml: np.ndarray) -> np.ndarray:
    """Posterior probabilities under equal prior weights (last axis)."""
    w = np.exp(log_ml - np.max(log_ml, axis=-1, keepdims=True))
    return w / w.sum(axis=-1, keepdims=True)


def simulated_log_ml(rows: list[dict], *, entropy: int, simulations: int = _SIMULATIONS) -> np.ndarray:
    """Draws of every reading's ``log p(y)``: one shared error per family, one own error per reading."""
    rng = np.random.default_rng(entropy)
    families = sorted({r["job"] for r in rows})
    shared = {f: rng.standard_normal(simulations) for f in families}
    family_part = np.stack([shared[r["job"]] * r["family_mcse"] for r in rows], axis=1)
    own = rng.standard_normal((simulations, len(rows))) * np.array([r["joint_mcse"] for r in rows])
    return np.array([r["log_ml"] for r in rows]) + family_part + own


def _pair_mcse(a: dict, b: dict) -> float:
    if a["job"] == b["job"]:
        return float(np.hypot(a["joint_mcse"], b["joint_mcse"]))
    return float(np.hypot(a["mcse"], b["mcse"]))


def _candidates(rows: list[dict], sims: np.ndarray) -> tuple[str, list[dict]]:
    log_ml = np.array([r["log_ml"] for r in rows])
    p, p_mcse = probabilities(log_ml), probabilities(sims).std(axis=0, ddof=1)
    best = rows[int(np.argmax(log_ml))]
    out = []
    for i, r in enumerate(rows):
        lbf = float(best["log_ml"] - r["log_ml"])
        err = 0.0 if r is best else _pair_mcse(best, r)
        out.append({
            "name": r["name"], "version": r["version"], "accepted": r["accepted"], "rejected": r["rejected"],
            "job": r["job"], "model_hash": r["model_hash"],
            "log_marginal_likelihood": r["log_ml"], "mcse": r["mcse"],
            "posterior_probability": float(p[i]), "posterior_probability_mcse": float(p_mcse[i]),
            "log_bayes_factor_of_best": lbf, "log_bayes_factor_of_best_mcse": err,
            "bayes_factor_of_best": float(np.exp(lbf)) if lbf < 700 else None,
            "strength": None if r is best else strength_of(lbf, err),
            "log_bayes_factor_vs_encompassing": r["log_bayes_factor_vs_encompassing"],
            "posterior_fraction": r["posterior_fraction"], "prior_fraction": r["prior_fraction"],
        })
    return best["name"], out


def _inclusion(rows: list[dict], sims: np.ndarray, relationships: list[int], texts: dict) -> list[dict]:
    p = probabilities(np.array([r["log_ml"] for r in rows]))
    w = probabilities(sims)
    out = []
    for rid in relationships:
        member = np.array([rid in r["accepted"] for r in rows])
        out.append({"relationship": rid, "text": texts.get(str(rid), ""),
                    "probability_accepted": float(p[member].sum()),
                    "probability_accepted_mcse": float(w[:, member].sum(axis=1).std(ddof=1))})
    return out


def combine_joint(job, children) -> dict:
    """The comparison of every reading of the families that finished, with each relationship's probability."""
    rows, refused, failed = [], list(job.params.get("refused") or []), []
    relationships: list[int] = []
    texts: dict = {}
    for child in children:
        family = child.params["candidate"]
        relationships, texts = [int(r) for r in family["joint"]], family.get("texts") or {}
        if child.state != JobState.DONE:
            failed.append({"name": family["name"], "job": str(child.pk), "state": child.state, "error": child.error})
            continue
        found, not_weighed = readings_of(child.result, family["label"])
        rows += [{**r, "job": str(child.pk), "model_hash": child.result["model_hash"]} for r in found]
        refused += not_weighed
    if not rows:
        raise EngineError("no family of readings finished", code="no-estimates", details={"failed": failed})
    seed = int(job.params["seed"])
    sims = simulated_log_ml(rows, entropy=seed)
    best, candidates = _candidates(rows, sims)
    return {"best": best, "candidates": candidates, "prior_weights": "equal", "caution": PRIOR_CAUTION,
            "strength_scale": "Kass & Raftery (1995), 2 ln BF: <2 bare mention, 2-6 positive, 6-10 strong, "
                              ">10 very strong",
            "failed": failed, "refused": refused, "relationships": _inclusion(rows, sims, relationships, texts),
            "range": job.params["range"], "notes": job.params.get("notes") or [],
            "curves": job.params.get("curves") or [], "method": JOINT_METHOD,
            "settings": {**job.params["settings"], **{f"joint_{k}": v for k, v in job.params["joint"].items()}},
            "seed": seed, "review": CAUTION}
