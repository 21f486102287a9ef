"""Single-site updates of the sampler kernel (numba).

* a dated event is drawn exactly from its full conditional ``L(theta)
  1[lo <= theta <= hi]`` by inverse CDF (Buck, Litton & Smith 1992; Nicholls
  & Jones 2001): each grid value is the middle of its cell and the likelihood
  is constant inside a cell, so the CDF is linear inside cells.  Events
  without outlier terms use the precomputed CDF (:func:`draw_static`); events
  with outlier terms, or windows deep in a tail where the global CDF loses
  precision, use the window ``[lo, hi]`` (:func:`draw_window`);
* ``lo``/``hi`` are the latest predecessor and the earliest successor in the
  constraint DAG, clipped to ``L..U`` (:func:`bounds`);
* the boundary prior factors (:func:`local_log_prior` for one node,
  :func:`full_log_prior` for a whole state) are the span-uniform prior of
  Nicholls & Jones (2001), with the exact room of overlapping phases'
  ordered beginnings (:func:`group_log_volume`), times the densities of
  any interval priors on durations and gaps
  (:mod:`chronology.engine.interval_priors`), see
  :mod:`chronology.engine.priors`.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from chronology.engine.interval_priors import interval_log_density
from chronology.engine.ordered_volume import log_ordered_volume
from chronology.engine.sampler_random import uniform

__all__ = ["cell", "node_ll_cell", "bounds", "cdf_at", "draw_static", "draw_window", "group_log_volume",
           "local_log_prior", "full_log_prior"]


@njit(cache=True, nogil=True)
def cell(theta, left, step, G):
    k = int(np.floor((theta - left) / step))
    if k < 0:
        return 0
    if k >= G:
        return G - 1
    return k


@njit(cache=True, nogil=True)
def node_ll_cell(v, k, row, static_ll, det_ptr, det_in, det_out, phi):
    val = static_ll[row[v], k]
    for d in range(det_ptr[v], det_ptr[v + 1]):
        val += det_out[d, k] if phi[d] else det_in[d, k]
    return val


@njit(cache=True, nogil=True)
def bounds(v, x, pred_ptr, pred_idx, succ_ptr, succ_idx, L, U):
    lo = L
    for j in range(pred_ptr[v], pred_ptr[v + 1]):
        w = x[pred_idx[j]]
        if w > lo:
            lo = w
    hi = U
    for j in range(succ_ptr[v], succ_ptr[v + 1]):
        w = x[succ_idx[j]]
        if w < hi:
            hi = w
    return lo, hi


@njit(cache=True, nogil=True)
def cdf_at(c, theta, left, step, G):
    pos = (theta - left) / step
    if pos <= 0.0:
        return 0.0
    if pos >= G:
        return c[G]
    k = int(pos)
    return c[k] + (pos - k) * (c[k + 1] - c[k])


@njit(cache=True, nogil=True)
def draw_static(c, lo, hi, left, step, G, rng):
    clo = cdf_at(c, lo, left, step, G)
    chi = cdf_at(c, hi, left, step, G)
    if not (chi - clo > 1e-9):
        return np.nan  # too little mass for the global CDF: caller uses the window
    u = clo + uniform(rng) * (chi - clo)
    a, b = 0, G  # invariant c[a] <= u < c[b]
    while b - a > 1:
        m = (a + b) >> 1
        if c[m] <= u:
            a = m
        else:
            b = m
    w = c[a + 1] - c[a]
    theta = left + step * (a + ((u - c[a]) / w if w > 0 else 0.5))
    if theta < lo:
        theta = lo
    if theta > hi:
        theta = hi
    return theta


@njit(cache=True, nogil=True)
def draw_window(v, lo, hi, cur, row, static_ll, det_ptr, det_in, det_out, phi, left, step, G, rng, buf):
    k0 = cell(lo, left, step, G)
    k1 = cell(hi, left, step, G)
    m = -np.inf
    for k in range(k0, k1 + 1):
        val = node_ll_cell(v, k, row, static_ll, det_ptr, det_in, det_out, phi)
        buf[k - k0] = val
        if val > m:
            m = val
    if not np.isfinite(m):
        return cur
    total = 0.0
    for k in range(k0, k1 + 1):
        a = max(lo, left + k * step)
        b = min(hi, left + (k + 1) * step)
        e = np.exp(buf[k - k0] - m)
        buf[k - k0] = e
        if b > a:
            total += e * (b - a)
    if not (total > 0.0):
        return cur
    u = uniform(rng) * total
    for k in range(k0, k1 + 1):
        a = max(lo, left + k * step)
        b = min(hi, left + (k + 1) * step)
        if b <= a:
            continue
        w = buf[k - k0] * (b - a)
        if u < w or k == k1:
            if buf[k - k0] > 0:
                t = a + u / buf[k - k0]
                return min(max(t, a), b)
        u -= w
    return cur


@njit(cache=True, nogil=True)
def group_log_volume(g, x, block_first, block_last, group_ptr, group_blocks, R):
    """Log room of group ``g``'s ordered beginnings (``log(R - S)`` for a lone chain, Steck 1971 otherwise)."""
    g0, g1 = group_ptr[g], group_ptr[g + 1]
    if g1 - g0 == 1:
        b = group_blocks[g0]
        return np.log(R - (x[block_last[b]] - x[block_first[b]]))
    rooms = np.empty(g1 - g0)
    for j in range(g0, g1):
        b = group_blocks[j]
        rooms[j - g0] = R - (x[block_last[b]] - x[block_first[b]])
    return log_ordered_volume(rooms, R)


@njit(cache=True, nogil=True)
def local_log_prior(v, x, node_phase_ptr, node_phase_idx, node_block_ptr, node_block_idx,
                     phase_start, phase_end, phase_n, block_first, block_last, block_k, block_group,
                     group_ptr, group_blocks, R, iv_earlier, iv_later, iv_code, iv_p1, iv_p2,
                     node_iv_ptr, node_iv_idx):
    total = 0.0
    for j in range(node_iv_ptr[v], node_iv_ptr[v + 1]):
        i = node_iv_idx[j]
        total += interval_log_density(x[iv_later[i]] - x[iv_earlier[i]], iv_code[i], iv_p1[i], iv_p2[i])
        if total == -np.inf:
            return total
    for j in range(node_phase_ptr[v], node_phase_ptr[v + 1]):
        p = node_phase_idx[j]
        n = phase_n[p]
        if n > 0:
            s = x[phase_end[p]] - x[phase_start[p]]
            if s <= 0.0:
                return -np.inf
            total -= n * np.log(s)
    for j in range(node_block_ptr[v], node_block_ptr[v + 1]):
        b = node_block_idx[j]
        S = x[block_last[b]] - x[block_first[b]]
        if S <= 0.0 or S >= R:
            return -np.inf
        total -= (block_k[b] - 2) * np.log(S)
    for j in range(node_block_ptr[v], node_block_ptr[v + 1]):
        g = block_group[node_block_idx[j]]
        seen = False
        for jj in range(node_block_ptr[v], j):
            if block_group[node_block_idx[jj]] == g:
                seen = True
        if not seen:
            total -= group_log_volume(g, x, block_first, block_last, group_ptr, group_blocks, R)
    return total


@njit(cache=True, nogil=True)
def full_log_prior(x, phase_start, phase_end, phase_n, block_first, block_last, block_k, block_group,
                    group_ptr, group_blocks, R, iv_earlier, iv_later, iv_code, iv_p1, iv_p2):
    total = 0.0
    for i in range(iv_earlier.shape[0]):
        total += interval_log_density(x[iv_later[i]] - x[iv_earlier[i]], iv_code[i], iv_p1[i], iv_p2[i])
        if total == -np.inf:
            return total
    for p in range(phase_start.shape[0]):
        n = phase_n[p]
        if n > 0:
            s = x[phase_end[p]] - x[phase_start[p]]
            if s <= 0.0:
                return -np.inf
            total -= n * np.log(s)
    for b in range(block_first.shape[0]):
        S = x[block_last[b]] - x[block_first[b]]
        if S <= 0.0 or S >= R:
            return -np.inf
        total -= (block_k[b] - 2) * np.log(S)
    for g in range(group_ptr.shape[0] - 1):
        total -= group_log_volume(g, x, block_first, block_last, group_ptr, group_blocks, R)
    return total
