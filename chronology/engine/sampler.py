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

The pieces live in their own modules: :mod:`~chronology.engine.sampler_flat`
(the flat arrays and chain results), :mod:`~chronology.engine.sampler_start`
(starting states), :mod:`~chronology.engine.sampler_updates` and
:mod:`~chronology.engine.sampler_blocks` (the update kernels),
:mod:`~chronology.engine.sampler_kernel` (one sweep) and
:mod:`~chronology.engine.sampler_random` (the generator); this module drives
chains and is where callers import from.
"""

from __future__ import annotations

import time
from concurrent.futures import ThreadPoolExecutor
from typing import Callable

import numpy as np

from chronology.engine.errors import SamplingCancelled
from chronology.engine.model import Model
from chronology.engine.sampler_flat import ChainResult, FlatModel, flatten
from chronology.engine.sampler_kernel import kernel_args, sweep_block
from chronology.engine.sampler_start import initial_state

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
    initial: np.ndarray | None = None,
    initial_outliers: np.ndarray | None = None,
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
    initial, initial_outliers : numpy.ndarray, optional
        A valid state to start from (event values in model order, and the
        outlier indicators), e.g. the last draw of another chain of the same
        model; by default a dispersed state along a random linear extension.

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
    x = initial_state(f, rng_py) if initial is None else np.array(initial, dtype=float)
    initial = x.copy()
    nd = len(f.evidence_keys)
    phi = np.zeros(nd, dtype=np.int8)
    q = np.exp(f.det_logq)
    phi[:] = rng_py.uniform(size=nd) < q
    if initial_outliers is not None:
        phi[:] = np.asarray(initial_outliers, dtype=np.int8)
    n_keep = iterations // thin
    out_x = np.empty((n_keep, f.n_events))
    out_phi = np.empty((n_keep, nd), dtype=np.int8)
    total = warmup + iterations
    args = kernel_args(f)
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
        pos = sweep_block(step_n, warmup, thin, x, phi, state, out_x, out_phi, pos, *args, done, block_every,
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
