"""Marginal likelihood of a compiled model by stepping-stone sampling.

Stepping-stone sampling (Xie, Lewis, Fan, Kuo & Chen 2011) writes the
marginal likelihood ``Z = p(y)`` as a product of ratios between power
posteriors (:mod:`chronology.engine.power_posterior`) on a ladder
``0 = beta_0 < beta_1 < ... < beta_K = 1``:

    Z = prod_k  Z_{beta_k} / Z_{beta_(k-1)},
    Z_{beta_k} / Z_{beta_(k-1)} = E_{beta_(k-1)} [ L(y | theta, phi)^(beta_k - beta_(k-1)) ],

each expectation estimated from draws of the power posterior at
``beta_(k-1)`` (the first from the prior itself, so the prior's normalising
constant, which the sampler never needs, cancels).  The stones are sampled
from the posterior down to the prior, each chain starting from the last
draw of the stone above (four times the warm-up for the first, at the
posterior).  The ladder puts the
stones at the quantiles of a Beta(alpha, 1) distribution,
``beta_k = (k / K)^(1 / alpha)`` with ``alpha = 0.3``, as the paper
recommends: most stones near the prior, where ``log Z_beta`` changes fastest.

The Monte Carlo error comes from independent repeats: each repeat runs the
whole ladder with its own seeds; the estimate is the mean of the repeats'
``log Z`` and its standard error their standard deviation over ``sqrt(R)``.

Every chain is the service's own sampler (:func:`chronology.engine.sampler.run_chain`)
on the tempered flat model.  Near the prior (``beta < whole_site_below``) the
site's place and total span mix slowly under the sampler's local moves, and
most of the estimate's error came from the first two stones; there every
kept draw also gets whole-site shift and scale moves
(:mod:`chronology.engine.whole_site_moves`), which keep the power posterior
invariant.

References
----------
Xie, W., Lewis, P. O., Fan, Y., Kuo, L. & Chen, M.-H. (2011). Improving
marginal likelihood estimation for Bayesian phylogenetic model selection.
Systematic Biology 60(2), 150-160.
"""

from __future__ import annotations

import time
from concurrent.futures import ThreadPoolExecutor
from dataclasses import asdict, dataclass, field
from typing import Callable

import numpy as np

from chronology.engine.errors import EngineError
from chronology.engine.model import Model
from chronology.engine.power_posterior import draw_log_likelihoods, tempered
from chronology.engine.sampler import run_chain
from chronology.engine.sampler_flat import FlatModel, flatten
from chronology.engine.whole_site_moves import whole_site_moves

__all__ = [
    "MARGINAL_LIKELIHOOD_METHOD",
    "MarginalLikelihoodError",
    "SteppingStoneSettings",
    "MarginalLikelihood",
    "beta_ladder",
    "log_mean_exp",
    "stepping_stone",
]

MARGINAL_LIKELIHOOD_METHOD = (
    "stepping-stone sampling (Xie, Lewis, Fan, Kuo & Chen 2011) over power posteriors on a Beta(0.3, 1) "
    "ladder, each sampled with the service's Metropolis-within-Gibbs sampler (with whole-site shift and scale "
    "moves near the prior); Monte Carlo error from independent repeats"
)


class MarginalLikelihoodError(EngineError):
    """A stepping-stone estimate that could not be made (every draw of a stone had zero likelihood)."""

    code = "marginal-likelihood-failed"


@dataclass(frozen=True)
class SteppingStoneSettings:
    """How hard to work for one marginal likelihood.

    ``stones`` ratios (K), ``alpha`` of the Beta(alpha, 1) ladder, per stone
    ``warmup`` sweeps then ``draws`` kept draws ``thin`` sweeps apart (times
    ``prior_thin_factor`` for stones sampled at ``beta < near_prior``, where
    the chain mixes slowest and the ratios vary most), ``whole_site_rounds``
    rounds of whole-site shift and scale moves
    (:mod:`chronology.engine.whole_site_moves`) applied to every draw of the
    stones sampled at ``beta < whole_site_below`` (0 rounds for none), and
    ``repeats`` independent runs of the whole ladder (at least 2, for the
    Monte Carlo error).
    """

    stones: int = 24
    alpha: float = 0.3
    draws: int = 400
    thin: int = 2
    warmup: int = 200
    repeats: int = 4
    prior_thin_factor: int = 1
    near_prior: float = 0.01
    whole_site_rounds: int = 4
    whole_site_below: float = 0.05

    def __post_init__(self):
        if (self.stones < 1 or self.draws < 2 or self.thin < 1 or self.warmup < 0 or self.repeats < 2
                or self.prior_thin_factor < 1 or self.whole_site_rounds < 0):
            raise ValueError("stones >= 1, draws >= 2, thin >= 1, warmup >= 0, repeats >= 2 and "
                             "whole_site_rounds >= 0 are required")
        if not self.alpha > 0:
            raise ValueError("alpha must be positive")

    def as_dict(self) -> dict:
        return asdict(self)


@dataclass(frozen=True)
class MarginalLikelihood:
    """A stepping-stone estimate of ``log p(y)`` with its Monte Carlo error.

    ``log_ml`` is the mean of ``repeat_log_ml`` and ``mcse`` its standard
    error; ``betas`` is the ladder and ``stone_log_ratios[r, k]`` the log of
    ratio ``k + 1`` in repeat ``r``.
    """

    log_ml: float
    mcse: float
    repeat_log_ml: tuple[float, ...]
    betas: tuple[float, ...]
    stone_log_ratios: np.ndarray = field(repr=False)
    settings: SteppingStoneSettings = field(default_factory=SteppingStoneSettings)
    seconds: float = 0.0
    method: str = MARGINAL_LIKELIHOOD_METHOD

    def as_dict(self) -> dict:
        return {
            "log_marginal_likelihood": self.log_ml,
            "mcse": self.mcse,
            "repeats": list(self.repeat_log_ml),
            "betas": list(self.betas),
            "stone_log_ratios": np.asarray(self.stone_log_ratios).mean(axis=0).tolist(),
            "settings": self.settings.as_dict(),
            "seconds": self.seconds,
            "method": self.method,
        }


def beta_ladder(stones: int, alpha: float = 0.3) -> np.ndarray:
    """``beta_k = (k / K)^(1 / alpha)``, ``k = 0..K``: quantiles of Beta(alpha, 1) (Xie et al. 2011).

    Examples
    --------
    >>> beta_ladder(2, 0.5).tolist()
    [0.0, 0.25, 1.0]
    """
    if stones < 1 or not alpha > 0:
        raise ValueError("stones >= 1 and alpha > 0 are required")
    return (np.arange(stones + 1) / stones) ** (1.0 / alpha)


def log_mean_exp(values: np.ndarray) -> float:
    """``log(mean(exp(values)))`` without overflow; ``-inf`` if every value is ``-inf``."""
    v = np.asarray(values, dtype=float)
    m = np.max(v)
    if not np.isfinite(m):
        return float(m)
    return float(m + np.log(np.mean(np.exp(v - m))))


def _one_ladder(flat: FlatModel, betas: np.ndarray, seed: np.random.SeedSequence, s: SteppingStoneSettings,
                done: Callable[[], None], cancel) -> np.ndarray:
    # from the posterior toward the prior, as Xie et al. (2011) do: each stone's chain starts from the last
    # draw of the stone above it, so no chain starts from a jammed dispersed state at a low temperature
    seeds = seed.spawn(len(betas) - 1)
    move_seeds = seed.spawn(len(betas) - 1)  # the next children: the chains' seeds stay as they were
    out = np.empty(len(betas) - 1)
    x, phi = None, None
    for k in range(len(betas) - 1, 0, -1):
        # near the prior the chain wanders slowly and the ratio varies most: thin more there
        thin = s.thin * (s.prior_thin_factor if betas[k - 1] < s.near_prior else 1)
        chain = run_chain(tempered(flat, betas[k - 1]), seeds[k - 1], iterations=s.draws * thin,
                          warmup=s.warmup * (4 if x is None else 1), thin=thin, cancel=cancel,
                          initial=x, initial_outliers=phi)
        ll = draw_log_likelihoods(flat, chain)
        draws = chain.draws
        if betas[k - 1] < s.whole_site_below and s.whole_site_rounds:
            # the site's place and total span are what wander slowly there; the whole-site moves keep
            # p_beta invariant, so the moved draws have the same distribution and are less correlated
            moved = whole_site_moves(flat, float(betas[k - 1]), draws, chain.outliers,
                                     np.random.default_rng(move_seeds[k - 1]), rounds=s.whole_site_rounds,
                                     log_lik=ll)
            draws, ll = moved.draws, moved.log_likelihoods
        out[k - 1] = log_mean_exp((betas[k] - betas[k - 1]) * ll)
        x, phi = draws[-1], chain.outliers[-1]
        done()
    return out


def stepping_stone(
    model: Model | FlatModel,
    *,
    entropy: int,
    settings: SteppingStoneSettings | None = None,
    workers: int = 1,
    progress: Callable[[float], None] | None = None,
    cancel: Callable[[], bool] | None = None,
) -> MarginalLikelihood:
    """Estimate ``log p(y)`` of ``model`` by stepping-stone sampling.

    Parameters
    ----------
    model : Model or FlatModel
    entropy : int
        Seed entropy; repeat ``r`` uses ``SeedSequence(entropy).spawn(R)[r]``,
        so the same model, entropy and settings give the same estimate.
    settings : SteppingStoneSettings, optional
    workers : int
        Repeats run in this many threads (the kernel releases the GIL).
    progress : callable, optional
        Called with the fraction of stones done.
    cancel : callable, optional
        Passed to every chain; returning True stops with ``SamplingCancelled``.

    Returns
    -------
    MarginalLikelihood

    Raises
    ------
    MarginalLikelihoodError
        When every draw of a stone has zero likelihood (the ladder is too coarse).

    Notes
    -----
    ``p(y)`` is a density in the units of the evidence's likelihoods (per
    radiocarbon year for a determination); only ratios between models that
    use the same evidence (Bayes factors) are meaningful.

    References
    ----------
    Xie, W., Lewis, P. O., Fan, Y., Kuo, L. & Chen, M.-H. (2011). Systematic
    Biology 60(2), 150-160.
    """
    s = settings or SteppingStoneSettings()
    flat = model if isinstance(model, FlatModel) else flatten(model)
    betas = beta_ladder(s.stones, s.alpha)
    seeds = np.random.SeedSequence(entropy).spawn(s.repeats)
    total = s.stones * s.repeats
    count = [0]

    def done():
        count[0] += 1
        if progress is not None:
            progress(count[0] / total)

    t0 = time.perf_counter()
    if workers <= 1:
        ratios = [_one_ladder(flat, betas, seeds[r], s, done, cancel) for r in range(s.repeats)]
    else:
        with ThreadPoolExecutor(max_workers=workers) as pool:
            ratios = list(pool.map(lambda r: _one_ladder(flat, betas, seeds[r], s, done, cancel), range(s.repeats)))
    ratios = np.array(ratios)
    per_repeat = ratios.sum(axis=1)
    if not np.all(np.isfinite(per_repeat)):
        stones = sorted({int(k) + 1 for k in np.argwhere(~np.isfinite(ratios))[:, 1]})
        raise MarginalLikelihoodError(
            "every draw of a stone near the prior lies where the likelihood is zero (outside a hard bound such as "
            "a terminus): use more stones so the first steps from the prior are smaller",
            details={"stones": stones, "settings": s.as_dict()})
    return MarginalLikelihood(
        log_ml=float(per_repeat.mean()),
        mcse=float(per_repeat.std(ddof=1) / np.sqrt(s.repeats)),
        repeat_log_ml=tuple(float(v) for v in per_repeat),
        betas=tuple(float(b) for b in betas),
        stone_log_ratios=ratios,
        settings=s,
        seconds=time.perf_counter() - t0,
    )
