"""Bayes factors and posterior model probabilities from marginal likelihoods.

For candidate models ``M_1..M_m`` of the same evidence with marginal
likelihoods ``Z_i = p(y | M_i)`` the Bayes factor of ``M_i`` against ``M_j``
is ``Z_i / Z_j`` (Kass & Raftery 1995) and, under equal prior weights, the
posterior probability of ``M_i`` is ``Z_i / sum_j Z_j``.  Each ``log Z_i``
carries a Monte Carlo standard error from independent stepping-stone repeats
(:mod:`chronology.engine.marginal_likelihood`); the estimates of different
models are independent, so the error of ``log Z_i - log Z_j`` is the root sum
of squares, and the errors of the probabilities are found by simulation
(``log Z_i ~ N(estimate, mcse^2)``).

For two nested models, where ``M_0`` fixes an outlier indicator ``phi = 0``
of ``M_1`` and ``phi`` is a priori independent of the dates, the Bayes factor
is also the Savage-Dickey ratio ``P(phi = 0 | y, M_1) / P(phi = 0 | M_1)``
(Dickey 1971; Verdinelli & Wasserman 1995), estimated from one posterior
run of ``M_1`` (:func:`savage_dickey_outlier`): an independent check.

References
----------
Kass, R. E. & Raftery, A. E. (1995). Bayes factors. JASA 90(430), 773-795.
Dickey, J. M. (1971). The weighted likelihood ratio, linear hypotheses on
normal location parameters. Annals of Mathematical Statistics 42(1), 204-223.
Verdinelli, I. & Wasserman, L. (1995). Computing Bayes factors using a
generalization of the Savage-Dickey density ratio. JASA 90(430), 614-618.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

from chronology.engine.marginal_likelihood import MarginalLikelihood
from chronology.engine.model import Model
from chronology.engine.sampler import run_chains

__all__ = [
    "PRIOR_CAUTION",
    "UNDETERMINED",
    "Comparison",
    "SavageDickey",
    "compare",
    "evidence_strength",
    "strength_of",
    "savage_dickey_outlier",
]

PRIOR_CAUTION = (
    "Bayes factors depend on the priors: the overall range, the boundary prior and the outlier priors of each "
    "model. A wider range or another prior can change them a great deal even where the dates hardly move, so "
    "compare only models with the same range and evidence, and read the figures with a qualified specialist."
)

_STRENGTH = ((2.0, "not worth more than a bare mention"), (6.0, "positive"), (10.0, "strong"))


def evidence_strength(log_bf: float) -> str:
    """Kass & Raftery's (1995, §3.2) words for ``2 ln BF`` of the better model over another."""
    two = 2.0 * abs(float(log_bf))
    for limit, word in _STRENGTH:
        if two < limit:
            return word
    return "very strong"


#: Words given instead of a strength when the Monte Carlo error could reverse the order of two candidates.
UNDETERMINED = "not determined: the Monte Carlo error is too large (run more repeats or stones)"


def strength_of(log_bf: float, mcse: float) -> str:
    # the order of two candidates is not established when log BF is within two standard errors of zero,
    # and no word is given for an error over one log unit (common practice)
    if mcse > 1.0 or abs(log_bf) < 2.0 * mcse:
        return UNDETERMINED
    return evidence_strength(log_bf)


@dataclass(frozen=True)
class Comparison:
    """Marginal likelihoods of candidates, their Bayes factors and posterior probabilities."""

    names: tuple[str, ...]
    log_ml: np.ndarray
    mcse: np.ndarray
    probabilities: np.ndarray
    probability_mcse: np.ndarray

    def _i(self, name: str) -> int:
        return self.names.index(name)

    def log_bayes_factor(self, a: str, b: str) -> float:
        """``log(Z_a / Z_b)``."""
        return float(self.log_ml[self._i(a)] - self.log_ml[self._i(b)])

    def log_bayes_factor_mcse(self, a: str, b: str) -> float:
        return float(np.hypot(self.mcse[self._i(a)], self.mcse[self._i(b)]))

    @property
    def best(self) -> str:
        return self.names[int(np.argmax(self.log_ml))]

    def as_dict(self) -> dict:
        best = self.best
        rows = []
        for i, name in enumerate(self.names):
            lbf = self.log_bayes_factor(best, name)
            rows.append({
                "name": name,
                "log_marginal_likelihood": float(self.log_ml[i]),
                "mcse": float(self.mcse[i]),
                "posterior_probability": float(self.probabilities[i]),
                "posterior_probability_mcse": float(self.probability_mcse[i]),
                "log_bayes_factor_of_best": lbf,
                "log_bayes_factor_of_best_mcse": 0.0 if name == best else self.log_bayes_factor_mcse(best, name),
                "bayes_factor_of_best": float(np.exp(lbf)) if lbf < 700 else None,
                "strength": None if name == best else strength_of(lbf, self.log_bayes_factor_mcse(best, name)),
            })
        return {"best": best, "candidates": rows, "prior_weights": "equal", "caution": PRIOR_CAUTION,
                "strength_scale": "Kass & Raftery (1995), 2 ln BF: <2 bare mention, 2-6 positive, 6-10 strong, "
                                  ">10 very strong"}


def _probabilities(log_ml: np.ndarray) -> np.ndarray:
    w = np.exp(log_ml - np.max(log_ml, axis=-1, keepdims=True))
    return w / w.sum(axis=-1, keepdims=True)


def compare(estimates: Mapping[str, MarginalLikelihood], *, entropy: int = 0, simulations: int = 4000) -> Comparison:
    """Bayes factors and posterior probabilities (equal prior weights) of named estimates.

    Parameters
    ----------
    estimates : mapping of name -> MarginalLikelihood
        At least one; all of models of the same evidence.
    entropy : int
        Seed of the simulation that gives the probabilities' Monte Carlo errors.
    simulations : int

    Returns
    -------
    Comparison
    """
    if not estimates:
        raise ValueError("at least one marginal likelihood is needed")
    names = tuple(estimates)
    log_ml = np.array([estimates[n].log_ml for n in names])
    mcse = np.array([estimates[n].mcse for n in names])
    rng = np.random.default_rng(entropy)
    sims = _probabilities(log_ml + rng.standard_normal((simulations, len(names))) * mcse)
    return Comparison(names, log_ml, mcse, _probabilities(log_ml), sims.std(axis=0, ddof=1))


@dataclass(frozen=True)
class SavageDickey:
    """``P(phi = 0 | y, M_1) / P(phi = 0 | M_1)`` for one outlier indicator, with its Monte Carlo error on the log scale."""

    evidence: str
    posterior_inlier: float
    prior_inlier: float
    log_ratio: float
    mcse: float


def savage_dickey_outlier(model: Model, evidence_key: str, *, entropy: int, chains: int = 4,
                          iterations: int = 10000, warmup: int = 1000, batches: int = 10) -> SavageDickey:
    """The Savage-Dickey ratio for removing the outlier term of one determination.

    The Monte Carlo error of the posterior inlier probability is from batch
    means (``batches`` per chain); on the log scale it is that error over the
    probability (delta method).

    Raises
    ------
    KeyError
        If ``evidence_key`` has no outlier term in ``model``.
    """
    prior_q = None
    for _key, term in model.evidence:
        if term.key == evidence_key and term.has_outlier_model:
            prior_q = term.outlier_prior
    if prior_q is None:
        raise KeyError(f"{evidence_key} has no outlier term in the model")
    results = run_chains(model, entropy=entropy, n_chains=chains, iterations=iterations, warmup=warmup)
    j = results[0].evidence_keys.index(evidence_key)
    inlier = np.concatenate([1.0 - r.outliers[:, j] for r in results])
    batch_means = np.array([b.mean() for r in results for b in np.array_split(1.0 - r.outliers[:, j], batches)])
    p = float(inlier.mean())
    se = float(batch_means.std(ddof=1) / np.sqrt(batch_means.size))
    return SavageDickey(evidence_key, p, 1.0 - prior_q, float(np.log(p) - np.log1p(-prior_q)), se / p)
