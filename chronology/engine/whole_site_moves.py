"""Whole-site shift and scale moves for power posteriors near the prior.

Near the prior (``beta`` close to 0) the sampler's single-site and
whole-phase updates move the site as a whole only slowly: under the
span-uniform prior (Nicholls & Jones 2001) the site may lie anywhere in the
overall range and its total span is uniform on ``[0, R]``, but every
boundary is pinned by its neighbours, so the site's place and its total
span wander in small steps (autocorrelation times of a few hundred sweeps
on the five-phase demo).  The stepping-stone ratios at those stones are
means over draws of ``L^(delta beta)``, which depends mostly on where the
site lies, so their Monte Carlo error is large there.

Two Metropolis-Hastings moves of every event at once fix the place and the
span:

* a **shift** ``x -> x + d`` with ``d`` uniform on the whole interval of
  shifts that keep every event inside the range and its hard bounds.  The
  interval seen from the shifted state is the same interval moved by ``-d``,
  so the proposal is symmetric; the prior is a function of differences
  between events only (spans and the order), so its ratio is 1 and the move
  is accepted with probability ``min(1, (L(x + d) / L(x))^beta)`` (always at
  ``beta = 0``: there it is an exact draw of the place given the shape);
* a **scale** about the midpoint ``m`` of the earliest and latest event,
  ``x -> m + c (x - m)`` with ``log c`` a normal random walk, which keeps
  every order and whose Jacobian is ``c^(N - 1)`` for ``N`` events (the
  midpoint is fixed by the move: generalised Gibbs along the scale group,
  Liu & Sabatti 2000), accepted with the ratio of the tempered posterior
  (prior from :func:`chronology.engine.sampler_updates.full_log_prior`).

Both leave the power posterior at ``beta`` invariant, so applied to draws
of a chain at stationarity they give draws of the same distribution, less
correlated with each other; the outlier indicators are left as they are
(they are a priori independent of the dates, and the acceptance ratio uses
the likelihood given them).

References
----------
Liu, J. S. & Sabatti, C. (2000). Generalised Gibbs sampler and multigrid
Monte Carlo for Bayesian computation. Biometrika 87(2), 353-369.
Nicholls, G. & Jones, M. (2001). Radiocarbon dating with temporal order
constraints. JRSS C 50(4), 503-521.
"""

from __future__ import annotations

import numpy as np

from chronology.engine.power_posterior import log_likelihoods
from chronology.engine.sampler_flat import FlatModel
from chronology.engine.sampler_updates import full_log_prior

__all__ = ["SCALE_STEP", "WholeSiteMoves", "whole_site_moves"]

#: Standard deviation of the log-scale random walk: the total span under the prior varies by a factor of
#: several, so steps of about 30 % are accepted often and still move far in a few rounds (common practice).
SCALE_STEP = 0.3


class WholeSiteMoves:
    """Moved draws with their untempered log-likelihoods and the moves' acceptance rates."""

    def __init__(self, draws: np.ndarray, log_likelihoods: np.ndarray, shift_rate: float, scale_rate: float):
        self.draws = draws
        self.log_likelihoods = log_likelihoods
        self.shift_rate = shift_rate
        self.scale_rate = scale_rate


def _box(flat: FlatModel) -> tuple[np.ndarray, np.ndarray]:
    # the same per-event limits the sampler's updates use: the range and each event's hard bounds
    return np.maximum(flat.lo, flat.hard_lo), np.minimum(flat.hi, flat.hard_hi)


def _tempered_gain(beta: float, new_ll: np.ndarray, old_ll: np.ndarray) -> np.ndarray:
    if beta == 0.0:
        return np.zeros_like(new_ll)  # the likelihood is flat at beta = 0, even where it is zero
    with np.errstate(invalid="ignore"):
        gain = beta * (new_ll - old_ll)
    return np.where(np.isfinite(new_ll), gain, -np.inf)


def _log_prior(flat: FlatModel, x: np.ndarray) -> float:
    if not flat.prior_active:
        return 0.0
    return float(full_log_prior(x, flat.phase_start, flat.phase_end, flat.phase_n, flat.block_first,
                                flat.block_last, flat.block_k, flat.block_group, flat.group_ptr,
                                flat.group_blocks, flat.hi - flat.lo, flat.interval_earlier, flat.interval_later,
                                flat.interval_code, flat.interval_p1, flat.interval_p2))


def whole_site_moves(flat: FlatModel, beta: float, draws: np.ndarray, outliers: np.ndarray,
                     rng: np.random.Generator, *, rounds: int = 4, scale_step: float = SCALE_STEP,
                     log_lik: np.ndarray | None = None) -> WholeSiteMoves:
    """Apply ``rounds`` whole-site shift and scale moves to every draw of a power posterior.

    Parameters
    ----------
    flat : FlatModel
        The untempered flat model (``beta = 1``).
    beta : float
        The inverse temperature the draws come from, in ``[0, 1]``.
    draws, outliers : numpy.ndarray
        Kept draws (one row per draw, events in model order) and their
        outlier indicators, as in :class:`~chronology.engine.sampler_flat.ChainResult`.
    rng : numpy.random.Generator
    rounds : int
        Shift-then-scale rounds per draw.
    scale_step : float
        Standard deviation of the log-scale proposal.
    log_lik : numpy.ndarray, optional
        The draws' untempered log-likelihoods, when already known.

    Returns
    -------
    WholeSiteMoves
        The moved draws (a new array), their untempered log-likelihoods and
        the acceptance rate of each move.

    Notes
    -----
    Each move leaves ``p_beta`` invariant, so each moved draw has the
    distribution its draw had; see the module docstring for why the
    proposals are symmetric and what the acceptance ratios are.

    References
    ----------
    Liu, J. S. & Sabatti, C. (2000). Biometrika 87(2), 353-369.
    """
    if not 0.0 <= beta <= 1.0:
        raise ValueError("the inverse temperature beta must be in [0, 1]")
    if rounds < 0 or not scale_step > 0:
        raise ValueError("rounds >= 0 and scale_step > 0 are required")
    x = np.array(draws, dtype=float, copy=True)
    phi = np.asarray(outliers)
    n_draws, n = x.shape
    ll = log_likelihoods(flat, x, phi) if log_lik is None else np.array(log_lik, dtype=float, copy=True)
    lo, hi = _box(flat)
    prior = np.array([_log_prior(flat, row) for row in x])
    shifts = scales = 0
    for _ in range(rounds):
        # shift: d uniform on every shift that keeps each event in its box
        d_lo = np.max(lo - x, axis=1)
        d_hi = np.min(hi - x, axis=1)
        d = d_lo + rng.uniform(size=n_draws) * np.maximum(d_hi - d_lo, 0.0)
        moved = x + d[:, None]
        new_ll = log_likelihoods(flat, moved, phi)
        take = np.log(rng.uniform(size=n_draws)) < _tempered_gain(beta, new_ll, ll)
        x[take], ll[take] = moved[take], new_ll[take]
        shifts += int(take.sum())
        # scale about the midpoint of the earliest and latest event, which the move keeps in place
        log_c = scale_step * rng.standard_normal(n_draws)
        mid = 0.5 * (x.min(axis=1) + x.max(axis=1))
        moved = mid[:, None] + np.exp(log_c)[:, None] * (x - mid[:, None])
        inside = np.all((moved >= lo) & (moved <= hi), axis=1)
        new_ll = np.where(inside, log_likelihoods(flat, moved, phi), -np.inf)
        new_prior = np.array([_log_prior(flat, row) if ok else -np.inf for row, ok in zip(moved, inside)])
        with np.errstate(invalid="ignore"):
            ratio = _tempered_gain(beta, new_ll, ll) + (new_prior - prior) + (n - 1) * log_c
        ratio = np.where(inside & np.isfinite(new_prior), ratio, -np.inf)
        take = np.log(rng.uniform(size=n_draws)) < ratio
        x[take], ll[take], prior[take] = moved[take], new_ll[take], new_prior[take]
        scales += int(take.sum())
    total = max(rounds * n_draws, 1)
    return WholeSiteMoves(x, ll, shifts / total, scales / total)
