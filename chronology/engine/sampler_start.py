"""Dispersed valid starting states for sampler chains.

A state is built along a random linear extension of the constraint DAG, so
every constraint holds without rejection: dated events are drawn from their
likelihoods within their feasible bounds, then repaired by a forward pass.

Interval priors with bounded support (a uniform duration, a lognormal gap
that must be positive) need a start of finite prior density too: the chains
would otherwise never leave a state of zero density.  :func:`initial_state`
moves the boundaries of an interval out of range to the nearest length
inside its support where their neighbours leave room, and draws a new state
when that is not enough; later attempts draw the dated events from their
likelihoods raised to a growing power (closer to their peaks, so the members
of a phase spread less than dispersed draws of wide or many-peaked
calibrations can).  Where the members themselves are spread wider than a
uniform duration allows, moving boundaries cannot help: the sampler then
runs a few hundred sweeps from that state with each uniform softened into
normal tails outside its bounds (finite everywhere, so the sweeps pull the
phase into the bounds together with its members), and starts from where
they end once every prior holds.  That is a way to a start only; the chain
itself samples the model as stated.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from chronology.engine.errors import ModelError
from chronology.engine.interval_priors import SOFT_UNIFORM, interval_log_density
from chronology.engine.sampler_flat import DATED, FlatModel

__all__ = ["initial_state"]

#: fresh starting states tried before a model's interval priors are declared out of reach
START_ATTEMPTS = 50
#: sweeps under the softened uniforms when moving boundaries is not enough
SOFT_SWEEPS = 300


def random_linear_extension(f: FlatModel, rng: np.random.Generator) -> list[int]:
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


def draw_between(f: FlatModel, v: int, lo: float, hi: float, rng: np.random.Generator,
                 sharpen: float = 1.0) -> float:
    """A draw from event v's likelihood (to the power ``sharpen``) on [lo, hi] (uniform for undated events)."""
    if hi <= lo:
        return lo
    if f.kind[v] != DATED:
        return float(rng.uniform(lo, hi))
    r = f.row[v]
    ll = f.static_ll[r].copy()
    for d in range(f.det_ptr[v], f.det_ptr[v + 1]):
        ll = ll + np.logaddexp(f.det_in[d], f.det_out[d])
    if sharpen != 1.0:
        ll = ll * sharpen
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


def initial_state(f: FlatModel, rng: np.random.Generator) -> np.ndarray:
    """A dispersed valid state of finite prior density (see the module docstring).

    Raises
    ------
    ModelError
        ``prior-out-of-reach`` when no start found satisfies every interval
        prior's support (e.g. a maximum duration shorter than the evidence
        and the order allow).
    """
    for attempt in range(START_ATTEMPTS):
        # dispersed first; then ever closer to the likelihoods' peaks
        sharpen = 1.0 if attempt < 10 else 2.0 ** ((attempt - 10) // 4 + 1)
        x = _ordered_state(f, rng, sharpen)
        if not f.interval_earlier.size or _repair_intervals(f, x):
            return x
        if attempt % 4 == 3 and (f.interval_code == 0).any():
            x = _softened(f, x, rng)
            if x is not None:
                return x
    raise ModelError("no starting state satisfies the interval priors: a duration or gap prior leaves no room "
                     "for the order and the evidence", code="prior-out-of-reach")


def _softened(f: FlatModel, x: np.ndarray, rng: np.random.Generator) -> np.ndarray | None:
    """``x`` after :data:`SOFT_SWEEPS` sweeps with the uniform priors softened, if every prior then holds."""
    from chronology.engine.sampler_kernel import kernel_args, sweep_block

    soft = dataclasses.replace(f, interval_code=np.where(f.interval_code == 0, SOFT_UNIFORM, f.interval_code))
    x = x.copy()
    phi = np.zeros(len(f.evidence_keys), dtype=np.int8)
    state = rng.integers(1, 2**63, size=4, dtype=np.uint64)
    n_ph = f.phase_start.shape[0]
    log_tau = np.zeros((n_ph, 2))
    for p in range(n_ph):
        log_tau[p] = (np.log(0.1 * max(f.latest[f.phase_start[p]] - f.earliest[f.phase_start[p]], f.step)),
                      np.log(0.1))
    sweep_block(SOFT_SWEEPS, SOFT_SWEEPS, 1, x, phi, state, np.empty((0, f.n_events)),
                np.empty((0, phi.size), dtype=np.int8), 0, *kernel_args(soft), 0, 1, log_tau)
    return x if _repair_intervals(f, x) else None


def _interval_ok(f: FlatModel, x: np.ndarray, i: int) -> bool:
    d = x[f.interval_later[i]] - x[f.interval_earlier[i]]
    return bool(np.isfinite(interval_log_density(d, f.interval_code[i], f.interval_p1[i], f.interval_p2[i])))


def _room(f: FlatModel, x: np.ndarray, v: int) -> tuple[float, float]:
    lo = max([f.earliest[v], f.hard_lo[v]] + [x[p] for p in f.pred_idx[f.pred_ptr[v]:f.pred_ptr[v + 1]]])
    hi = min([f.latest[v], f.hard_hi[v]] + [x[s] for s in f.succ_idx[f.succ_ptr[v]:f.succ_ptr[v + 1]]])
    return lo, hi


def _target(f: FlatModel, x: np.ndarray, i: int) -> float:
    """The length inside the support nearest to the current one (a little inside, for a uniform)."""
    code, p1, p2 = f.interval_code[i], f.interval_p1[i], f.interval_p2[i]
    d = x[f.interval_later[i]] - x[f.interval_earlier[i]]
    if code == 0:
        margin = 0.01 * (p2 - p1)
        return float(min(max(d, p1 + margin), p2 - margin))
    return float(max(d, 0.01 * p1))  # only a lognormal has a bounded (positive) support


def _repair_intervals(f: FlatModel, x: np.ndarray, passes: int = 4) -> bool:
    """Move boundaries of intervals outside their prior's support toward its middle, within their order bounds.

    Only the later event moves first (then the earlier), each inside the room
    its placed neighbours leave, so every constraint still holds.
    """
    for _ in range(passes):
        bad = [i for i in range(f.interval_earlier.size) if not _interval_ok(f, x, i)]
        if not bad:
            return True
        for i in bad:
            a, b = f.interval_earlier[i], f.interval_later[i]
            want = _target(f, x, i)
            lo, hi = _room(f, x, b)
            x[b] = min(max(x[a] + want, lo), hi)
            if not _interval_ok(f, x, i):
                lo, hi = _room(f, x, a)
                x[a] = min(max(x[b] - want, lo), hi)
    return all(_interval_ok(f, x, i) for i in range(f.interval_earlier.size))


def _ordered_state(f: FlatModel, rng: np.random.Generator, sharpen: float = 1.0) -> np.ndarray:
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
        if f.kind[v] == DATED:
            tentative[v] = draw_between(f, v, f.earliest[v], f.latest[v], rng, sharpen)
    below = tentative.copy()  # earliest tentative date among v and its descendants
    for v in reversed(f.topo):
        for w in f.succ_idx[f.succ_ptr[v]:f.succ_ptr[v + 1]]:
            below[v] = min(below[v], below[w])
    x = np.empty(n)
    for v in random_linear_extension(f, rng):
        preds = f.pred_idx[f.pred_ptr[v]:f.pred_ptr[v + 1]]
        lo = max([f.earliest[v]] + [x[p] for p in preds])
        hi = f.latest[v]
        if f.kind[v] == DATED:
            t = tentative[v]
            x[v] = t if lo <= t <= hi else draw_between(f, v, lo, hi, rng, sharpen)
        else:
            # just above the placed predecessors when the tentative dates below are earlier
            top = min(hi, below[v]) if below[v] > lo else min(hi, lo + max(10 * f.step, 0.002 * (f.hi - f.lo)))
            x[v] = float(rng.uniform(lo, top)) if top > lo else lo
    return x

