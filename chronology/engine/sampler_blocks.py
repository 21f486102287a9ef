"""Whole-phase block moves of the sampler kernel (numba).

Each phase (members and boundaries) moves as a block: a shift, then a scaling
about its boundary midpoint, each by random-walk Metropolis (Metropolis et al.
1953).  The scale move includes its Jacobian ``c^(k-1)`` along the scale
group (Liu & Sabatti 2000).  Block moves cure the slow mixing of boundaries
and extreme events that pin each other under single-site updates.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from chronology.engine.sampler_random import standard_normal, uniform
from chronology.engine.sampler_updates import cell, full_log_prior, node_ll_cell

__all__ = ["block_logdens", "block_mh"]


@njit(cache=True, nogil=True)
def block_logdens(mode, prm, pivot, s0, s1, shift_idx, xs, x, mark, stamp, kind, pred_ptr, pred_idx,
                   succ_ptr, succ_idx, row, static_ll, det_ptr, det_in, det_out, phi,
                   phase_start, phase_end, phase_n, block_first, block_last, block_k,
                   block_group, group_ptr, group_blocks, iv_earlier, iv_later, iv_code, iv_p1, iv_p2,
                   prior_active, L, U, R, left, step, G, hard_lo, hard_hi):
    # moves the block to parameter prm and returns its log density (with the
    # Jacobian term of the scale move), -inf if an outside constraint breaks
    c = np.exp(prm)
    for j in range(s0, s1):
        v = shift_idx[j]
        x[v] = xs[v] + prm if mode == 0 else pivot + c * (xs[v] - pivot)
    g = 0.0
    for j in range(s0, s1):
        v = shift_idx[j]
        if x[v] < L or x[v] > U or x[v] < hard_lo[v] or x[v] > hard_hi[v]:
            return -np.inf
        for q in range(pred_ptr[v], pred_ptr[v + 1]):
            w = pred_idx[q]
            if mark[w] != stamp and x[w] > x[v]:
                return -np.inf
        for q in range(succ_ptr[v], succ_ptr[v + 1]):
            w = succ_idx[q]
            if mark[w] != stamp and x[w] < x[v]:
                return -np.inf
        if kind[v] == 0:
            g += node_ll_cell(v, cell(x[v], left, step, G), row, static_ll, det_ptr, det_in, det_out, phi)
    if prior_active:
        g += full_log_prior(x, phase_start, phase_end, phase_n, block_first, block_last, block_k,
                            block_group, group_ptr, group_blocks, R, iv_earlier, iv_later, iv_code, iv_p1, iv_p2)
    if mode == 1:
        # generalised Gibbs along the scale group (Liu & Sabatti 2000): scaling k values about
        # their own fixed boundary midpoint has Jacobian c^(k-1); Haar measure du for u = log c
        g += (s1 - s0 - 1) * prm
    return g


@njit(cache=True, nogil=True)
def block_mh(mode, tau, pivot, g0, s0, s1, shift_idx, xs, x, mark, stamp, kind, pred_ptr, pred_idx,
              succ_ptr, succ_idx, row, static_ll, det_ptr, det_in, det_out, phi,
              phase_start, phase_end, phase_n, block_first, block_last, block_k,
              block_group, group_ptr, group_blocks, iv_earlier, iv_later, iv_code, iv_p1, iv_p2,
              prior_active, L, U, R, left, step, G, hard_lo, hard_hi, rng):
    """Random-walk Metropolis on the block parameter (shift or log scale).

    ``g0`` is the block's log density at the current state without the scale
    Jacobian; returns (accepted, log density of the state kept).
    """
    z = standard_normal(rng)
    d = tau * z
    g = block_logdens(mode, d, pivot, s0, s1, shift_idx, xs, x, mark, stamp, kind, pred_ptr, pred_idx,
                       succ_ptr, succ_idx, row, static_ll, det_ptr, det_in, det_out, phi,
                       phase_start, phase_end, phase_n, block_first, block_last, block_k,
                       block_group, group_ptr, group_blocks, iv_earlier, iv_later, iv_code, iv_p1, iv_p2,
                       prior_active, L, U, R, left, step, G, hard_lo, hard_hi)
    if g > -np.inf and np.log(uniform(rng)) < g - g0:
        return True, g - (s1 - s0 - 1) * d if mode == 1 else g
    for j in range(s0, s1):
        x[shift_idx[j]] = xs[shift_idx[j]]
    return False, g0

