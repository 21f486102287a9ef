"""Flat arrays the sampler kernel works on: a compiled model flattened by :func:`flatten`.

The constraint DAG is stored as CSR predecessor/successor lists, each dated
event's fixed likelihood as one row of ``static_ll`` with its normalised CDF
(for exact inverse-CDF draws, Buck, Litton & Smith 1992), determinations under
the outlier model (Christen 1994) as separate rows, and the span-uniform
boundary prior (Nicholls & Jones 2001) with any interval priors on durations
and gaps as index arrays from :func:`chronology.engine.priors.prior_structure`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from chronology.engine.model import Model
from chronology.engine.model_compiler import feasible_bounds
from chronology.engine.priors import prior_structure

__all__ = ["FlatModel", "ChainResult", "flatten", "DATED", "UNDATED", "BOUNDARY"]

DATED, UNDATED, BOUNDARY = 0, 1, 2
_KIND_CODE = {"dated": DATED, "undated": UNDATED, "boundary": BOUNDARY}


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
    block_group: np.ndarray
    group_ptr: np.ndarray
    group_blocks: np.ndarray
    node_phase_ptr: np.ndarray
    node_phase_idx: np.ndarray
    node_block_ptr: np.ndarray
    node_block_idx: np.ndarray
    interval_earlier: np.ndarray
    interval_later: np.ndarray
    interval_code: np.ndarray
    interval_p1: np.ndarray
    interval_p2: np.ndarray
    node_interval_ptr: np.ndarray
    node_interval_idx: np.ndarray
    prior_active: bool
    lo: float
    hi: float
    left: float
    step: float
    earliest: np.ndarray
    latest: np.ndarray
    topo: np.ndarray
    hard_lo: np.ndarray
    hard_hi: np.ndarray

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
    hard_lo, hard_hi = _hard_bounds(model, index)
    earliest, latest = _tightened(np.asarray(earliest, dtype=float), np.asarray(latest, dtype=float),
                                  hard_lo, hard_hi, topo, preds, succs)
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
    node_intervals = [[] for _ in range(n)]
    for j, (a, b) in enumerate(zip(pstruct.interval_earlier, pstruct.interval_later)):
        node_intervals[a].append(j)
        node_intervals[b].append(j)
    pp, pi = _csr(preds, n)
    sp, si = _csr(succs, n)
    dp, _ = _csr(dets_per_node, n)
    shp, shi = _csr(shift_sets, len(shift_sets))
    npp, npi = _csr(node_phases, n)
    nbp, nbi = _csr(node_blocks, n)
    nip, nii = _csr(node_intervals, n)
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
        block_group=pstruct.block_group, group_ptr=pstruct.group_ptr, group_blocks=pstruct.group_blocks,
        node_phase_ptr=npp, node_phase_idx=npi, node_block_ptr=nbp, node_block_idx=nbi,
        interval_earlier=pstruct.interval_earlier, interval_later=pstruct.interval_later,
        interval_code=pstruct.interval_code, interval_p1=pstruct.interval_p1, interval_p2=pstruct.interval_p2,
        node_interval_ptr=nip, node_interval_idx=nii,
        prior_active=bool(pstruct.active), lo=float(model.range_lo), hi=float(model.range_hi),
        left=float(g.start - g.step / 2), step=float(g.step),
        earliest=earliest, latest=latest,
        topo=np.asarray(topo, dtype=np.int64), hard_lo=hard_lo, hard_hi=hard_hi,
    )


def _hard_bounds(model: Model, index: dict) -> tuple[np.ndarray, np.ndarray]:
    """Exact years of termini not under the outlier model: hard bounds inside their grid cells."""
    n = len(index)
    lo, hi = np.full(n, -np.inf), np.full(n, np.inf)
    for e in model.events:
        for t in e.evidence:
            if t.bound is None or t.has_outlier_model:
                continue
            i = index[e.key]
            if t.kind == "tpq":
                lo[i] = max(lo[i], t.bound)
            elif t.kind == "taq":
                hi[i] = min(hi[i], t.bound)
    return lo, hi


def _tightened(earliest, latest, hard_lo, hard_hi, topo, preds, succs):
    """Feasible bounds with the hard bounds carried along the order (successors of a bound event too)."""
    earliest = np.maximum(earliest, hard_lo)
    latest = np.minimum(latest, hard_hi)
    for v in topo:
        for p in preds[v]:
            earliest[v] = max(earliest[v], earliest[p])
    for v in reversed(list(topo)):
        for s in succs[v]:
            latest[v] = min(latest[v], latest[s])
    return earliest, latest

