"""Metropolis-within-Gibbs sampler for compiled chronological models.

The model is flattened to arrays (:func:`flatten`) and one chain is run by a
numba-compiled kernel (:func:`run_chain`), so chains can be separate
background tasks; :func:`run_chains` runs several in threads (the kernel
releases the GIL).  One sweep updates, in model order:

* dated events exactly from their full conditional ``L(theta) 1[lo <= theta
  <= hi]`` by inverse CDF (Buck, Litton & Smith 1992; Nicholls & Jones 2001).
  Each grid value is the middle of its cell and the likelihood is constant
  inside a cell, so the CDF is linear inside cells.  Events without outlier
  terms use a precomputed CDF; events with outlier terms, or windows deep in
  a tail where the global CDF loses precision, use the window ``[lo, hi]``;
* undated events uniformly on ``[lo, hi]``;
* boundaries by slice sampling with shrinkage from ``[lo, hi]`` (Neal 2003,
  §4) on their span-prior conditional (:mod:`chronology.engine.priors`);
* each phase as a block (members and boundaries): a shift, then a scaling
  about its boundary midpoint, each by random-walk Metropolis (Metropolis
  et al. 1953) with a proposal scale tuned toward acceptance 0.44 during
  warm-up only (Robbins-Monro); the scale move includes its Jacobian
  ``c^(k-1)`` along the scale group (Liu & Sabatti 2000);
* every outlier indicator by Gibbs with its shift integrated out (Christen
  1994): the outlier component is the broader likelihood array supplied.

``lo``/``hi`` are the latest predecessor and the earliest successor in the
constraint DAG, clipped to ``L..U``.  Chains start from dispersed valid states
built along a random linear extension of the DAG (no rejection).  Randomness
comes from ``numpy.random.SeedSequence(entropy).spawn(n_chains)``: each chain
seeds a xoshiro256** generator (Blackman & Vigna 2021) that lives in the
kernel, so the same model, seed and settings give identical draws.
"""

from __future__ import annotations

import time
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from typing import Callable

import numpy as np
from numba import njit

from chronology.engine.errors import SamplingCancelled
from chronology.engine.model import Model
from chronology.engine.model_compiler import feasible_bounds
from chronology.engine.priors import prior_structure

__all__ = [
    "SAMPLER_METHOD",
    "FlatModel",
    "ChainResult",
    "flatten",
    "chain_seeds",
    "run_chain",
    "run_chains",
    "warm_up",
]

SAMPLER_METHOD = (
    "Metropolis-within-Gibbs: inverse-CDF Gibbs for dated events, slice sampling (Neal 2003) "
    "for boundaries, Metropolis whole-phase shift and scale moves, outlier indicators by Gibbs "
    "(Christen 1994); "
    "uniform-span boundary prior (Nicholls & Jones 2001)"
)

_DATED, _UNDATED, _BOUNDARY = 0, 1, 2
#: shift and scale proposals per phase per sweep
BLOCK_REPEATS = 1
_KIND_CODE = {"dated": _DATED, "undated": _UNDATED, "boundary": _BOUNDARY}


@dataclass(frozen=True, eq=False)
class FlatModel:
    """A model as flat arrays for the kernel (built by :func:`flatten`)."""

    event_keys: tuple[str, ...]
    evidence_keys: tuple[str, ...]
    evidence_events: tuple[str, ...]
    kind: np.ndarray
    pred_ptr: np.ndarray
    pred_idx: np.ndarray
    succ_ptr: np.ndarray
    succ_idx: np.ndarray
    row: np.ndarray
    static_ll: np.ndarray
    static_cdf: np.ndarray
    det_ptr: np.ndarray
    det_in: np.ndarray
    det_out: np.ndarray
    det_logq: np.ndarray
    det_log1mq: np.ndarray
    det_node: np.ndarray
    phase_start: np.ndarray
    phase_end: np.ndarray
    phase_n: np.ndarray
    shift_ptr: np.ndarray
    shift_idx: np.ndarray
    block_first: np.ndarray
    block_last: np.ndarray
    block_k: np.ndarray
    node_phase_ptr: np.ndarray
    node_phase_idx: np.ndarray
    node_block_ptr: np.ndarray
    node_block_idx: np.ndarray
    prior_active: bool
    lo: float
    hi: float
    left: float
    step: float
    earliest: np.ndarray
    latest: np.ndarray
    topo: np.ndarray

    @property
    def n_events(self) -> int:
        return len(self.event_keys)


@dataclass(frozen=True, eq=False)
class ChainResult:
    """Draws of one chain.

    ``draws[k, i]`` is event ``event_keys[i]`` at kept draw ``k``;
    ``outliers[k, j]`` is 1 when determination ``evidence_keys[j]`` (under the
    outlier model) is an outlier at draw ``k``.
    """

    chain: int
    event_keys: tuple[str, ...]
    evidence_keys: tuple[str, ...]
    draws: np.ndarray
    outliers: np.ndarray
    iterations: int
    warmup: int
    thin: int
    seconds: float
    initial: np.ndarray


def _csr(lists, n):
    ptr = np.zeros(n + 1, dtype=np.int64)
    for i, l in enumerate(lists):
        ptr[i + 1] = ptr[i] + len(l)
    idx = np.array([v for l in lists for v in l], dtype=np.int64)
    return ptr, idx


def flatten(model: Model) -> FlatModel:
    """Flatten ``model`` to arrays; checks feasibility first.

    Raises
    ------
    ModelError
        ``model-cycle`` or ``empty-support`` (see :func:`feasible_bounds`).
    """
    earliest, latest, topo = feasible_bounds(model)
    keys = model.event_keys
    n = len(keys)
    index = {k: i for i, k in enumerate(keys)}
    g = model.grid
    preds = [[] for _ in range(n)]
    succs = [[] for _ in range(n)]
    for c in model.constraints:
        preds[index[c.later]].append(index[c.earlier])
        succs[index[c.earlier]].append(index[c.later])
    kind = np.array([_KIND_CODE[e.kind] for e in model.events], dtype=np.int64)
    row = np.full(n, -1, dtype=np.int64)
    static, dets_per_node = [], [[] for _ in range(n)]
    det_in, det_out, det_q, det_node, det_keys, det_events = [], [], [], [], [], []
    for i, e in enumerate(model.events):
        if e.kind != "dated":
            continue
        total = np.zeros(g.n)
        for t in e.evidence:
            if t.has_outlier_model:
                dets_per_node[i].append(len(det_in))
                det_in.append(t.loglik)
                det_out.append(t.outlier_loglik)
                det_q.append(t.outlier_prior)
                det_node.append(i)
                det_keys.append(t.key)
                det_events.append(e.key)
            else:
                total = total + t.loglik
        row[i] = len(static)
        static.append(total)
    static_ll = np.array(static, dtype=float).reshape(len(static), g.n)
    static_cdf = np.zeros((len(static), g.n + 1))
    for r in range(len(static)):
        m = np.max(static_ll[r])
        if np.isfinite(m):
            c = np.concatenate(([0.0], np.cumsum(np.exp(static_ll[r] - m))))
            static_cdf[r] = c / c[-1]
    pstruct = prior_structure(model)
    shift_sets = []
    for p in model.phases:
        members = [index[p.start], index[p.end]] + [index[k] for k in p.members]
        shift_sets.append(sorted(set(members)))
    node_phases = [[] for _ in range(n)]
    for j, (a, b) in enumerate(zip(pstruct.phase_start, pstruct.phase_end)):
        node_phases[a].append(j)
        if b != a:
            node_phases[b].append(j)
    node_blocks = [[] for _ in range(n)]
    for j, (a, b) in enumerate(zip(pstruct.block_first, pstruct.block_last)):
        node_blocks[a].append(j)
        if b != a:
            node_blocks[b].append(j)
    pp, pi = _csr(preds, n)
    sp, si = _csr(succs, n)
    dp, _ = _csr(dets_per_node, n)
    shp, shi = _csr(shift_sets, len(shift_sets))
    npp, npi = _csr(node_phases, n)
    nbp, nbi = _csr(node_blocks, n)
    nd = len(det_in)
    q = np.array(det_q, dtype=float)
    return FlatModel(
        event_keys=keys,
        evidence_keys=tuple(det_keys),
        evidence_events=tuple(det_events),
        kind=kind, pred_ptr=pp, pred_idx=pi, succ_ptr=sp, succ_idx=si, row=row,
        static_ll=static_ll, static_cdf=static_cdf, det_ptr=dp,
        det_in=np.array(det_in, dtype=float).reshape(nd, g.n),
        det_out=np.array(det_out, dtype=float).reshape(nd, g.n),
        det_logq=np.log(q) if nd else np.zeros(0),
        det_log1mq=np.log1p(-q) if nd else np.zeros(0),
        det_node=np.array(det_node, dtype=np.int64),
        phase_start=pstruct.phase_start, phase_end=pstruct.phase_end, phase_n=pstruct.phase_n,
        shift_ptr=shp, shift_idx=shi,
        block_first=pstruct.block_first, block_last=pstruct.block_last, block_k=pstruct.block_k,
        node_phase_ptr=npp, node_phase_idx=npi, node_block_ptr=nbp, node_block_idx=nbi,
        prior_active=bool(pstruct.active), lo=float(model.range_lo), hi=float(model.range_hi),
        left=float(g.start - g.step / 2), step=float(g.step),
        earliest=np.asarray(earliest, dtype=float), latest=np.asarray(latest, dtype=float),
        topo=np.asarray(topo, dtype=np.int64),
    )


# ---------------------------------------------------------------------------
# random numbers: xoshiro256** (Blackman & Vigna 2021), state of four uint64
# ---------------------------------------------------------------------------
@njit(cache=True, nogil=True)
def _rotl(x, k):
    return (x << np.uint64(k)) | (x >> np.uint64(64 - k))


@njit(cache=True, nogil=True)
def _uniform(s):
    result = _rotl(s[1] * np.uint64(5), 7) * np.uint64(9)
    t = s[1] << np.uint64(17)
    s[2] ^= s[0]
    s[3] ^= s[1]
    s[1] ^= s[2]
    s[0] ^= s[3]
    s[2] ^= t
    s[3] = _rotl(s[3], 45)
    # 53 random bits, shifted half a unit so the value is never 0 or 1
    return (float(result >> np.uint64(11)) + 0.5) * (1.0 / 9007199254740992.0)


# ---------------------------------------------------------------------------
# kernel pieces
# ---------------------------------------------------------------------------
@njit(cache=True, nogil=True)
def _cell(theta, left, step, G):
    k = int(np.floor((theta - left) / step))
    if k < 0:
        return 0
    if k >= G:
        return G - 1
    return k


@njit(cache=True, nogil=True)
def _node_ll_cell(v, k, row, static_ll, det_ptr, det_in, det_out, phi):
    val = static_ll[row[v], k]
    for d in range(det_ptr[v], det_ptr[v + 1]):
        val += det_out[d, k] if phi[d] else det_in[d, k]
    return val


@njit(cache=True, nogil=True)
def _bounds(v, x, pred_ptr, pred_idx, succ_ptr, succ_idx, L, U):
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
def _cdf_at(c, theta, left, step, G):
    pos = (theta - left) / step
    if pos <= 0.0:
        return 0.0
    if pos >= G:
        return c[G]
    k = int(pos)
    return c[k] + (pos - k) * (c[k + 1] - c[k])


@njit(cache=True, nogil=True)
def _draw_static(c, lo, hi, left, step, G, rng):
    clo = _cdf_at(c, lo, left, step, G)
    chi = _cdf_at(c, hi, left, step, G)
    if not (chi - clo > 1e-9):
        return np.nan  # too little mass for the global CDF: caller uses the window
    u = clo + _uniform(rng) * (chi - clo)
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
def _draw_window(v, lo, hi, cur, row, static_ll, det_ptr, det_in, det_out, phi, left, step, G, rng, buf):
    k0 = _cell(lo, left, step, G)
    k1 = _cell(hi, left, step, G)
    m = -np.inf
    for k in range(k0, k1 + 1):
        val = _node_ll_cell(v, k, row, static_ll, det_ptr, det_in, det_out, phi)
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
    u = _uniform(rng) * total
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
def _local_log_prior(v, x, node_phase_ptr, node_phase_idx, node_block_ptr, node_block_idx,
                     phase_start, phase_end, phase_n, block_first, block_last, block_k, R):
    total = 0.0
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
        total -= np.log(R - S) + (block_k[b] - 2) * np.log(S)
    return total


@njit(cache=True, nogil=True)
def _full_log_prior(x, phase_start, phase_end, phase_n, block_first, block_last, block_k, R):
    total = 0.0
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
        total -= np.log(R - S) + (block_k[b] - 2) * np.log(S)
    return total


@njit(cache=True, nogil=True)
def _block_logdens(mode, prm, pivot, s0, s1, shift_idx, xs, x, mark, stamp, kind, pred_ptr, pred_idx,
                   succ_ptr, succ_idx, row, static_ll, det_ptr, det_in, det_out, phi,
                   phase_start, phase_end, phase_n, block_first, block_last, block_k,
                   prior_active, L, U, R, left, step, G):
    # moves the block to parameter prm and returns its log density (with the
    # Jacobian term of the scale move), -inf if an outside constraint breaks
    c = np.exp(prm)
    for j in range(s0, s1):
        v = shift_idx[j]
        x[v] = xs[v] + prm if mode == 0 else pivot + c * (xs[v] - pivot)
    g = 0.0
    for j in range(s0, s1):
        v = shift_idx[j]
        if x[v] < L or x[v] > U:
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
            g += _node_ll_cell(v, _cell(x[v], left, step, G), row, static_ll, det_ptr, det_in, det_out, phi)
    if prior_active:
        g += _full_log_prior(x, phase_start, phase_end, phase_n, block_first, block_last, block_k, R)
    if mode == 1:
        # generalised Gibbs along the scale group (Liu & Sabatti 2000): scaling k values about
        # their own fixed boundary midpoint has Jacobian c^(k-1); Haar measure du for u = log c
        g += (s1 - s0 - 1) * prm
    return g


@njit(cache=True, nogil=True)
def _block_mh(mode, tau, pivot, g0, s0, s1, shift_idx, xs, x, mark, stamp, kind, pred_ptr, pred_idx,
              succ_ptr, succ_idx, row, static_ll, det_ptr, det_in, det_out, phi,
              phase_start, phase_end, phase_n, block_first, block_last, block_k,
              prior_active, L, U, R, left, step, G, rng):
    """Random-walk Metropolis on the block parameter (shift or log scale).

    ``g0`` is the block's log density at the current state without the scale
    Jacobian; returns (accepted, log density of the state kept).
    """
    # Box-Muller normal proposal
    z = np.sqrt(-2.0 * np.log(_uniform(rng))) * np.cos(2.0 * np.pi * _uniform(rng))
    d = tau * z
    g = _block_logdens(mode, d, pivot, s0, s1, shift_idx, xs, x, mark, stamp, kind, pred_ptr, pred_idx,
                       succ_ptr, succ_idx, row, static_ll, det_ptr, det_in, det_out, phi,
                       phase_start, phase_end, phase_n, block_first, block_last, block_k,
                       prior_active, L, U, R, left, step, G)
    if g > -np.inf and np.log(_uniform(rng)) < g - g0:
        return True, g - (s1 - s0 - 1) * d if mode == 1 else g
    for j in range(s0, s1):
        x[shift_idx[j]] = xs[shift_idx[j]]
    return False, g0


@njit(cache=True, nogil=True)
def _sweep_block(n_iter, record_from, thin, x, phi, rng, out_x, out_phi, out_pos,
                 kind, pred_ptr, pred_idx, succ_ptr, succ_idx, row, static_ll, static_cdf,
                 det_ptr, det_in, det_out, det_logq, det_log1mq, det_node,
                 phase_start, phase_end, phase_n, shift_ptr, shift_idx,
                 block_first, block_last, block_k,
                 node_phase_ptr, node_phase_idx, node_block_ptr, node_block_idx,
                 prior_active, L, U, left, step, it0, block_every, log_tau):
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
            lo, hi = _bounds(v, x, pred_ptr, pred_idx, succ_ptr, succ_idx, L, U)
            if hi <= lo:
                continue
            kv = kind[v]
            if kv == 0:
                t = np.nan
                if det_ptr[v + 1] == det_ptr[v]:
                    t = _draw_static(static_cdf[row[v]], lo, hi, left, step, G, rng)
                if np.isnan(t):
                    t = _draw_window(v, lo, hi, x[v], row, static_ll, det_ptr, det_in, det_out, phi,
                                     left, step, G, rng, buf)
                x[v] = t
            elif kv == 1 or not prior_active:
                x[v] = lo + _uniform(rng) * (hi - lo)
            else:
                # slice sampling with shrinkage from the whole [lo, hi] (Neal 2003, §4)
                x0 = x[v]
                y = _local_log_prior(v, x, node_phase_ptr, node_phase_idx, node_block_ptr, node_block_idx,
                                     phase_start, phase_end, phase_n, block_first, block_last, block_k, R)
                y += np.log(_uniform(rng))
                a, b = lo, hi
                accepted = False
                for _ in range(100):
                    x[v] = a + _uniform(rng) * (b - a)
                    f = _local_log_prior(v, x, node_phase_ptr, node_phase_idx, node_block_ptr,
                                         node_block_idx, phase_start, phase_end, phase_n,
                                         block_first, block_last, block_k, R)
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
            g = _block_logdens(0, 0.0, 0.0, s0, s1, shift_idx, xs, x, mark, stamp, kind, pred_ptr, pred_idx,
                               succ_ptr, succ_idx, row, static_ll, det_ptr, det_in, det_out, phi,
                               phase_start, phase_end, phase_n, block_first, block_last, block_k,
                               prior_active, L, U, R, left, step, G)
            for move in range(2 * BLOCK_REPEATS):
                mode = move % 2
                # the scale pivot is the current midpoint, which scaling leaves in place
                pivot = 0.5 * (x[phase_end[p]] + x[phase_start[p]])
                for j in range(s0, s1):
                    xs[shift_idx[j]] = x[shift_idx[j]]
                t = np.exp(log_tau[p, mode])
                ok, g = _block_mh(mode, t, pivot, g, s0, s1, shift_idx, xs, x, mark, stamp, kind, pred_ptr,
                                  pred_idx, succ_ptr, succ_idx, row, static_ll, det_ptr, det_in, det_out,
                                  phi, phase_start, phase_end, phase_n, block_first, block_last, block_k,
                                  prior_active, L, U, R, left, step, G, rng)
                if it < record_from:
                    # Robbins-Monro tuning toward acceptance 0.44, during warm-up only
                    log_tau[p, mode] += (1.0 / np.sqrt(1.0 + it)) * ((1.0 if ok else 0.0) - 0.44)
        # --- outlier indicators (Christen 1994), shift integrated out ---------
        for d in range(det_node.shape[0]):
            v = det_node[d]
            k = _cell(x[v], left, step, G)
            lodds = det_logq[d] - det_log1mq[d] + det_out[d, k] - det_in[d, k]
            if lodds > 0:
                p1 = 1.0 / (1.0 + np.exp(-lodds))
            else:
                e = np.exp(lodds)
                p1 = e / (1.0 + e)
            phi[d] = 1 if _uniform(rng) < p1 else 0
        # --- record ----------------------------------------------------------
        if it >= record_from and (it - record_from) % thin == 0 and pos < out_x.shape[0]:
            out_x[pos, :] = x
            out_phi[pos, :] = phi
            pos += 1
    return pos


def _kernel_args(f: FlatModel):
    return (f.kind, f.pred_ptr, f.pred_idx, f.succ_ptr, f.succ_idx, f.row, f.static_ll, f.static_cdf,
            f.det_ptr, f.det_in, f.det_out, f.det_logq, f.det_log1mq, f.det_node,
            f.phase_start, f.phase_end, f.phase_n, f.shift_ptr, f.shift_idx,
            f.block_first, f.block_last, f.block_k,
            f.node_phase_ptr, f.node_phase_idx, f.node_block_ptr, f.node_block_idx,
            bool(f.prior_active), float(f.lo), float(f.hi), float(f.left), float(f.step))


# ---------------------------------------------------------------------------
# starting states
# ---------------------------------------------------------------------------
def _random_linear_extension(f: FlatModel, rng: np.random.Generator) -> list[int]:
    n = f.n_events
    indeg = np.diff(f.pred_ptr).copy()
    ready = [v for v in range(n) if indeg[v] == 0]
    out = []
    while ready:
        v = ready.pop(int(rng.integers(len(ready))))
        out.append(v)
        for w in f.succ_idx[f.succ_ptr[v]:f.succ_ptr[v + 1]]:
            indeg[w] -= 1
            if indeg[w] == 0:
                ready.append(int(w))
    return out


def _draw_between(f: FlatModel, v: int, lo: float, hi: float, rng: np.random.Generator) -> float:
    """A draw from event v's likelihood on [lo, hi] (uniform for undated events)."""
    if hi <= lo:
        return lo
    if f.kind[v] != _DATED:
        return float(rng.uniform(lo, hi))
    r = f.row[v]
    ll = f.static_ll[r].copy()
    for d in range(f.det_ptr[v], f.det_ptr[v + 1]):
        ll = ll + np.logaddexp(f.det_in[d], f.det_out[d])
    G = ll.size
    edges = f.left + f.step * np.arange(G + 1)
    width = np.clip(np.minimum(edges[1:], hi) - np.maximum(edges[:-1], lo), 0.0, None)
    with np.errstate(divide="ignore"):
        lw = ll + np.log(width)
    m = lw.max()
    if not np.isfinite(m):
        return float(rng.uniform(lo, hi))
    w = np.exp(lw - m)
    k = int(rng.choice(G, p=w / w.sum()))
    return float(rng.uniform(max(lo, edges[k]), min(hi, edges[k + 1])))


def _initial_state(f: FlatModel, rng: np.random.Generator) -> np.ndarray:
    """A dispersed valid state along a random linear extension of the constraint DAG.

    Dated events are first drawn from their likelihoods within their feasible
    bounds; then, in extension order, each event is placed at or after its
    placed predecessors and not after its feasible latest value (which never
    exceeds its successors' latest values), so every constraint holds.
    Undated events and boundaries go uniformly between their placed
    predecessors and the earliest tentative date below them.
    """
    n = f.n_events
    tentative = np.full(n, np.inf)
    for v in range(n):
        if f.kind[v] == _DATED:
            tentative[v] = _draw_between(f, v, f.earliest[v], f.latest[v], rng)
    below = tentative.copy()  # earliest tentative date among v and its descendants
    for v in reversed(f.topo):
        for w in f.succ_idx[f.succ_ptr[v]:f.succ_ptr[v + 1]]:
            below[v] = min(below[v], below[w])
    x = np.empty(n)
    for v in _random_linear_extension(f, rng):
        preds = f.pred_idx[f.pred_ptr[v]:f.pred_ptr[v + 1]]
        lo = max([f.earliest[v]] + [x[p] for p in preds])
        hi = f.latest[v]
        if f.kind[v] == _DATED:
            t = tentative[v]
            x[v] = t if lo <= t <= hi else _draw_between(f, v, lo, hi, rng)
        else:
            # just above the placed predecessors when the tentative dates below are earlier
            top = min(hi, below[v]) if below[v] > lo else min(hi, lo + max(10 * f.step, 0.002 * (f.hi - f.lo)))
            x[v] = float(rng.uniform(lo, top)) if top > lo else lo
    return x


# ---------------------------------------------------------------------------
# public drivers
# ---------------------------------------------------------------------------
def chain_seeds(entropy: int, n_chains: int) -> list[np.random.SeedSequence]:
    """``numpy.random.SeedSequence(entropy).spawn(n_chains)``: one independent seed per chain."""
    if n_chains < 1:
        raise ValueError("n_chains must be >= 1")
    return np.random.SeedSequence(entropy).spawn(n_chains)


def run_chain(
    model: Model | FlatModel,
    seed: np.random.SeedSequence,
    *,
    chain: int = 0,
    iterations: int = 5000,
    warmup: int = 1000,
    thin: int = 1,
    progress: Callable[[int], None] | None = None,
    cancel: Callable[[], bool] | None = None,
    check_every: int = 1000,
    block_every: int = 1,
) -> ChainResult:
    """Run ONE chain and return its kept draws.

    Parameters
    ----------
    model : Model or FlatModel
    seed : numpy.random.SeedSequence
        One of :func:`chain_seeds`.
    chain : int
        Chain number, stored in the result.
    iterations : int
        Sweeps kept after warm-up (before thinning).
    warmup : int
        Sweeps discarded first.
    thin : int
        Keep every ``thin``-th sweep: ``iterations // thin`` draws.
    progress : callable, optional
        Called with the number of sweeps done (warm-up included) every
        ``check_every`` sweeps and at the end.
    cancel : callable, optional
        Called every ``check_every`` sweeps; returning True stops the chain
        with :class:`~chronology.engine.errors.SamplingCancelled`.
    block_every : int
        Whole-phase shift and scale moves every ``block_every`` sweeps.

    Returns
    -------
    ChainResult
    """
    if iterations < 1 or warmup < 0 or thin < 1 or check_every < 1 or block_every < 1:
        raise ValueError("iterations >= 1, warmup >= 0, thin >= 1 and check_every >= 1 are required")
    f = model if isinstance(model, FlatModel) else flatten(model)
    rng_py = np.random.Generator(np.random.PCG64(seed))
    state = seed.generate_state(4, dtype=np.uint64)
    if not state.any():
        state[0] = 1
    x = _initial_state(f, rng_py)
    initial = x.copy()
    nd = len(f.evidence_keys)
    phi = np.zeros(nd, dtype=np.int8)
    q = np.exp(f.det_logq)
    phi[:] = rng_py.uniform(size=nd) < q
    n_keep = iterations // thin
    out_x = np.empty((n_keep, f.n_events))
    out_phi = np.empty((n_keep, nd), dtype=np.int8)
    total = warmup + iterations
    args = _kernel_args(f)
    # initial block proposal scales: a tenth of the phase's feasible room, and 10% in scale
    n_ph = f.phase_start.shape[0]
    log_tau = np.zeros((n_ph, 2))
    for p in range(n_ph):
        room = max(f.latest[f.phase_start[p]] - f.earliest[f.phase_start[p]], f.step)
        log_tau[p] = (np.log(0.1 * room), np.log(0.1))
    done, pos = 0, 0
    t0 = time.perf_counter()
    while done < total:
        if cancel is not None and cancel():
            raise SamplingCancelled("sampling was cancelled", details={"chain": chain, "iterations_done": done})
        step_n = min(check_every, total - done)
        pos = _sweep_block(step_n, warmup, thin, x, phi, state, out_x, out_phi, pos, *args, done, block_every,
                           log_tau)
        done += step_n
        if progress is not None:
            progress(done)
    seconds = time.perf_counter() - t0
    return ChainResult(chain, f.event_keys, f.evidence_keys, out_x[:pos], out_phi[:pos],
                       iterations, warmup, thin, seconds, initial)


def run_chains(
    model: Model,
    *,
    entropy: int,
    n_chains: int = 4,
    iterations: int = 5000,
    warmup: int = 1000,
    thin: int = 1,
    workers: int | None = None,
    progress: Callable[[int], None] | None = None,
    cancel: Callable[[], bool] | None = None,
    check_every: int = 1000,
    block_every: int = 1,
) -> list[ChainResult]:
    """Run ``n_chains`` chains seeded by :func:`chain_seeds` in a thread pool.

    ``progress`` receives the total sweeps done over all chains.  Results are
    identical whatever ``workers`` is, since each chain owns its generator.
    """
    f = flatten(model)
    seeds = chain_seeds(entropy, n_chains)
    done = [0] * n_chains

    def one(c):
        def report(k):
            done[c] = k
            if progress is not None:
                progress(sum(done))
        return run_chain(f, seeds[c], chain=c, iterations=iterations, warmup=warmup, thin=thin,
                         progress=report, cancel=cancel, check_every=check_every,
                         block_every=block_every)

    workers = workers or min(n_chains, 4)
    if workers == 1:
        return [one(c) for c in range(n_chains)]
    with ThreadPoolExecutor(max_workers=workers) as pool:
        return list(pool.map(one, range(n_chains)))


def warm_up() -> float:
    """Compile (or load from cache) the kernel on a tiny model; returns the seconds it took."""
    from chronology.engine.grid import CalendarGrid
    from chronology.engine.model_compiler import EvidenceInput, PhaseInput, compile_model

    t0 = time.perf_counter()
    g = CalendarGrid(0.0, 1.0, 50)
    ll = -0.5 * ((g.years - 25.0) / 3.0) ** 2
    m = compile_model(g, phases=[PhaseInput("w", ("a",))], order=[],
                      evidence=[EvidenceInput("w1", "a", ll, outlier_prior=0.05, outlier_loglik=ll / 4)],
                      range_lo=0.0, range_hi=49.0)
    run_chain(m, chain_seeds(0, 1)[0], iterations=2, warmup=0)
    return time.perf_counter() - t0
