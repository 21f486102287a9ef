"""Power posteriors of a compiled model: the likelihood raised to a temperature.

The power posterior at inverse temperature ``beta`` in ``[0, 1]`` is

    p_beta(theta, phi | y)  ∝  L(y | theta, phi)^beta  p(theta)  p(phi)

(Friel & Pettitt 2008; Xie et al. 2011): the prior at ``beta = 0`` and the
posterior at ``beta = 1``.  The outlier indicators ``phi`` (Christen 1994) are
parameters with their own prior, so only the likelihood given them is
tempered; the normalising constant at ``beta = 1`` is still the marginal
likelihood ``p(y)``, since summing over ``phi`` is part of the integral.

The sampler evaluates the likelihood only through its flat arrays (each
dated event's fixed log-likelihood row, and the in/out rows of every
determination under the outlier model), so tempering is a scaling of those
arrays by ``beta`` (with the inverse-CDF tables rebuilt): the kernel, its
Gibbs, slice and block updates all see ``L^beta`` without a change.  A cell
of zero likelihood stays zero for ``beta > 0`` and becomes one at ``beta = 0``
(the prior puts mass there).

References
----------
Friel, N. & Pettitt, A. N. (2008). Marginal likelihood estimation via power
posteriors. JRSS B 70(3), 589-607.
Xie, W., Lewis, P. O., Fan, Y., Kuo, L. & Chen, M.-H. (2011). Improving
marginal likelihood estimation for Bayesian phylogenetic model selection.
Systematic Biology 60(2), 150-160.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from chronology.engine.sampler_flat import ChainResult, FlatModel

__all__ = ["tempered", "draw_log_likelihoods", "log_likelihoods"]


def _scale(arr: np.ndarray, beta: float) -> np.ndarray:
    if beta == 0.0:
        return np.zeros_like(arr, dtype=float)
    out = np.array(arr, dtype=float, copy=True)
    finite = np.isfinite(out)
    out[finite] *= beta
    return out


def _cdf(rows: np.ndarray) -> np.ndarray:
    cdf = np.zeros((rows.shape[0], rows.shape[1] + 1))
    for r in range(rows.shape[0]):
        m = np.max(rows[r]) if rows.shape[1] else -np.inf
        if np.isfinite(m):
            c = np.concatenate(([0.0], np.cumsum(np.exp(rows[r] - m))))
            cdf[r] = c / c[-1]
    return cdf


def tempered(flat: FlatModel, beta: float) -> FlatModel:
    """The flat model of the power posterior at inverse temperature ``beta``.

    Parameters
    ----------
    flat : FlatModel
        From :func:`chronology.engine.sampler.flatten`, at ``beta = 1``.
    beta : float
        In ``[0, 1]``; 1 returns ``flat`` itself.

    Returns
    -------
    FlatModel
        For :func:`chronology.engine.sampler.run_chain`.

    Raises
    ------
    ValueError
        If ``beta`` is outside ``[0, 1]``.

    Examples
    --------
    >>> prior_only = tempered(flatten(model), 0.0)  # doctest: +SKIP
    """
    beta = float(beta)
    if not 0.0 <= beta <= 1.0:
        raise ValueError("the inverse temperature beta must be in [0, 1]")
    if beta == 1.0:
        return flat
    static = _scale(flat.static_ll, beta)
    return dataclasses.replace(
        flat,
        static_ll=static,
        static_cdf=_cdf(static),
        det_in=_scale(flat.det_in, beta),
        det_out=_scale(flat.det_out, beta),
    )


def draw_log_likelihoods(flat: FlatModel, result: ChainResult) -> np.ndarray:
    """``log L(y | theta, phi)`` (untempered) at every kept draw of a chain.

    Parameters
    ----------
    flat : FlatModel
        The untempered flat model (``beta = 1``).
    result : ChainResult
        Draws of a chain run on any power posterior of the same model.

    Returns
    -------
    numpy.ndarray
        One value per draw; ``-inf`` where a draw lies in a cell of zero
        likelihood (possible only for ``beta = 0``).
    """
    return log_likelihoods(flat, result.draws, result.outliers)


def log_likelihoods(flat: FlatModel, draws: np.ndarray, outliers: np.ndarray) -> np.ndarray:
    """``log L(y | theta, phi)`` (untempered) at each row of ``draws`` with the outlier indicators ``outliers``.

    The same sum as :func:`draw_log_likelihoods`, for states that are not a
    chain's kept draws (e.g. moved ones); ``-inf`` in cells of zero likelihood.
    """
    x = np.asarray(draws, dtype=float)
    G = flat.static_ll.shape[1]
    cells = np.clip(np.floor((x - flat.left) / flat.step).astype(np.int64), 0, G - 1)
    total = np.zeros(x.shape[0])
    dated = np.flatnonzero(flat.row >= 0)
    with np.errstate(invalid="ignore"):
        for v in dated:
            total += flat.static_ll[flat.row[v], cells[:, v]]
        for d in range(flat.det_node.shape[0]):
            k = cells[:, flat.det_node[d]]
            out = np.asarray(outliers)[:, d].astype(bool)
            total += np.where(out, flat.det_out[d, k], flat.det_in[d, k])
    return np.where(np.isnan(total), -np.inf, total)
