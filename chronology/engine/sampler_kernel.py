"""One chain's sweeps as one numba kernel (releases the GIL).

A sweep updates, in model order, every node by its single-site update
(:mod:`chronology.engine.sampler_updates`; boundaries by slice sampling with
shrinkage from ``[lo, hi]``, Neal 2003, §4), then each phase as a block
(:mod:`chronology.engine.sampler_blocks`) with proposal scales tuned toward
acceptance 0.44 during warm-up only (Robbins-Monro), then every outlier
indicator by Gibbs with its shift integrated out (Christen 1994).
"""

from __future__ import annotations

import numpy as np
from numba import njit

from chronology.engine.sampler_blocks import block_mh, block_logdens
from chronology.engine.sampler_flat import FlatModel
from chronology.engine.sampler_random import uniform
from chronology.engine.sampler_updates import bounds, cell, draw_static, draw_window, local_log_prior

__all__ = ["BLOCK_REPEATS", "sweep_block", "kernel_args"]

#: shift and scale proposals per phase per sweep
BLOCK_REPEATS = 1


@njit(cache=True, nogil=True)
def sweep_block(n_iter, record_from, thin, x, phi, rng, out_x, out_phi, out_pos,
                 kind, pred_ptr, pred_idx, succ_ptr, succ_idx, row, static_ll, static_cdf,
                 det_ptr, det_in, det_out, det_logq, det_log1mq, det_node,
                 phase_start, phase_end, phase_n, shift_ptr, shift_idx,
                 block_first, block_last, block_k, block_group, group_ptr, group_blocks,
                 node_phase_ptr, node_phase_idx, node_block_ptr, node_block_idx,
                 iv_earlier, iv_later, iv_code, iv_p1, iv_p2, node_iv_ptr, node_iv_idx,
                 prior_active, L, U, left, step, hard_lo, hard_hi, it0, block_every, log_tau):
    N = x.shape[0]
    G = static_ll.shape[1]
    R = U - L
    buf = np.empty(G)
    mark = np.full(N, -1, dtype=np.int64)
    xs = x.copy()
    pos = out_pos
    for it in range(it0, it0 + n_iter):
        # --- single-site updates ------------------------------------------
        for v in range(N):
            lo, hi = bounds(v, x, pred_ptr, pred_idx, succ_ptr, succ_idx, L, U)
            if hard_lo[v] > lo:
                lo = hard_lo[v]
            if hard_hi[v] < hi:
                hi = hard_hi[v]
            if hi <= lo:
                continue
            kv = kind[v]
            if kv == 0:
                t = np.nan
                if det_ptr[v + 1] == det_ptr[v]:
                    t = draw_static(static_cdf[row[v]], lo, hi, left, step, G, rng)
                if np.isnan(t):
                    t = draw_window(v, lo, hi, x[v], row, static_ll, det_ptr, det_in, det_out, phi,
                                     left, step, G, rng, buf)
                x[v] = t
            elif kv == 1 or not prior_active:
                x[v] = lo + uniform(rng) * (hi - lo)
            else:
                # slice sampling with shrinkage from the whole [lo, hi] (Neal 2003, §4)
                x0 = x[v]
                y = local_log_prior(v, x, node_phase_ptr, node_phase_idx, node_block_ptr, node_block_idx,
                                     phase_start, phase_end, phase_n, block_first, block_last, block_k,
                                     block_group, group_ptr, group_blocks, R, iv_earlier, iv_later, iv_code,
                                     iv_p1, iv_p2, node_iv_ptr, node_iv_idx)
                y += np.log(uniform(rng))
                a, b = lo, hi
                accepted = False
                for _ in range(100):
                    x[v] = a + uniform(rng) * (b - a)
                    f = local_log_prior(v, x, node_phase_ptr, node_phase_idx, node_block_ptr,
                                         node_block_idx, phase_start, phase_end, phase_n,
                                         block_first, block_last, block_k, block_group, group_ptr, group_blocks, R,
                                         iv_earlier, iv_later, iv_code, iv_p1, iv_p2, node_iv_ptr, node_iv_idx)
                    if f > y:
                        accepted = True
                        break
                    if x[v] < x0:
                        a = x[v]
                    else:
                        b = x[v]
                if not accepted:
                    x[v] = x0
        # --- whole-phase shift and scale moves (slice sampling, Neal 2003) ----
        for p in range(phase_start.shape[0] if it % block_every == 0 else 0):
            s0, s1 = shift_ptr[p], shift_ptr[p + 1]
            stamp = it * phase_start.shape[0] + p
            for j in range(s0, s1):
                mark[shift_idx[j]] = stamp
                xs[shift_idx[j]] = x[shift_idx[j]]
            for j in range(s0, s1):
                xs[shift_idx[j]] = x[shift_idx[j]]
            g = block_logdens(0, 0.0, 0.0, s0, s1, shift_idx, xs, x, mark, stamp, kind, pred_ptr, pred_idx,
                               succ_ptr, succ_idx, row, static_ll, det_ptr, det_in, det_out, phi,
                               phase_start, phase_end, phase_n, block_first, block_last, block_k,
                               block_group, group_ptr, group_blocks, iv_earlier, iv_later, iv_code, iv_p1, iv_p2,
                               prior_active, L, U, R, left, step, G, hard_lo, hard_hi)
            for move in range(2 * BLOCK_REPEATS):
                mode = move % 2
                # the scale pivot is the current midpoint, which scaling leaves in place
                pivot = 0.5 * (x[phase_end[p]] + x[phase_start[p]])
                for j in range(s0, s1):
                    xs[shift_idx[j]] = x[shift_idx[j]]
                t = np.exp(log_tau[p, mode])
                ok, g = block_mh(mode, t, pivot, g, s0, s1, shift_idx, xs, x, mark, stamp, kind, pred_ptr,
                                  pred_idx, succ_ptr, succ_idx, row, static_ll, det_ptr, det_in, det_out,
                                  phi, phase_start, phase_end, phase_n, block_first, block_last, block_k,
                                  block_group, group_ptr, group_blocks, iv_earlier, iv_later, iv_code, iv_p1,
                                  iv_p2, prior_active, L, U, R, left, step, G, hard_lo, hard_hi, rng)
                if it < record_from:
                    # Robbins-Monro tuning toward acceptance 0.44, during warm-up only
                    log_tau[p, mode] += (1.0 / np.sqrt(1.0 + it)) * ((1.0 if ok else 0.0) - 0.44)
        # --- outlier indicators (Christen 1994), shift integrated out ---------
        for d in range(det_node.shape[0]):
            v = det_node[d]
            k = cell(x[v], left, step, G)
            lodds = det_logq[d] - det_log1mq[d] + det_out[d, k] - det_in[d, k]
            if lodds > 0:
                p1 = 1.0 / (1.0 + np.exp(-lodds))
            else:
                e = np.exp(lodds)
                p1 = e / (1.0 + e)
            phi[d] = 1 if uniform(rng) < p1 else 0
        # --- record ----------------------------------------------------------
        if it >= record_from and (it - record_from) % thin == 0 and pos < out_x.shape[0]:
            out_x[pos, :] = x
            out_phi[pos, :] = phi
            pos += 1
    return pos


def kernel_args(f: FlatModel):
    return (f.kind, f.pred_ptr, f.pred_idx, f.succ_ptr, f.succ_idx, f.row, f.static_ll, f.static_cdf,
            f.det_ptr, f.det_in, f.det_out, f.det_logq, f.det_log1mq, f.det_node,
            f.phase_start, f.phase_end, f.phase_n, f.shift_ptr, f.shift_idx,
            f.block_first, f.block_last, f.block_k, f.block_group, f.group_ptr, f.group_blocks,
            f.node_phase_ptr, f.node_phase_idx, f.node_block_ptr, f.node_block_idx,
            f.interval_earlier, f.interval_later, f.interval_code, f.interval_p1, f.interval_p2,
            f.node_interval_ptr, f.node_interval_idx,
            bool(f.prior_active), float(f.lo), float(f.hi), float(f.left), float(f.step), f.hard_lo, f.hard_hi)

