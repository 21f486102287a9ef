"""Benchmark of the chronological-model sampler on three generated models.

(a) three phases in sequence, 8 dated events each (24 events, 6 boundaries);
(b) 200 dated events in 10 sequential phases.  Likelihoods are normal on a
1-year grid (sigma 25 years) around invented true dates.
(c) three phases in sequence, 8 events each, with radiocarbon likelihoods on
the SYNTHETIC curve (ages simulated at invented true dates, errors 25-35
years) and stratigraphic order inside each phase (two sequences of four
members, as two stacks of deposits in one phase would give).
Sampling time is measured apart from the one-off numba compile (or cache
load) time, ``compile_seconds``, and, for (c), apart from building the model
(likelihoods on the grid, compiling and flattening), ``model_seconds``.
"""

from __future__ import annotations

import time

import numpy as np

from chronology.engine.diagnostics import diagnose, stack_chains, to_inference_data
from chronology.engine.grid import CalendarGrid
from chronology.engine.model_compiler import EvidenceInput, PhaseInput, compile_model
from chronology.engine.calibration import curve_on_grid, log_likelihood
from chronology.engine.sampler import flatten, run_chains, warm_up
from chronology.engine.synthetic_curve import synthetic_curve

__all__ = ["generated_model", "radiocarbon_model", "run", "QUICK"]

QUICK = {"iterations_a": 2000, "iterations_b": 600}


def generated_model(n_phases: int, per_phase: int, *, seed: int = 2024, sigma: float = 25.0):
    """A model of ``n_phases`` sequential phases with ``per_phase`` dated events each."""
    rng = np.random.default_rng(seed)
    grid = CalendarGrid(-1500.0, 1.0, 2501)
    years = grid.years
    phases, evidence = [], []
    t = -1200.0
    for j in range(n_phases):
        span = rng.uniform(40, 120)
        true = np.sort(rng.uniform(t, t + span, per_phase))
        members = []
        for i, d in enumerate(true):
            ctx = f"{j}-{i}"
            members.append(ctx)
            y = d + rng.normal(0, sigma)
            evidence.append(EvidenceInput(f"VXL-{j:02d}{i:02d}", ctx, -0.5 * ((years - y) / sigma) ** 2))
        phases.append(PhaseInput(f"P{j + 1}", tuple(members), "sequential" if j + 1 < n_phases else None))
        t += span + rng.uniform(20, 60)
    return compile_model(grid, phases=phases, order=[], evidence=evidence, range_lo=-1500.0, range_hi=1000.0)


def radiocarbon_model(n_phases: int = 3, per_phase: int = 8, *, seed: int = 2025):
    """Sequential phases dated by radiocarbon on the synthetic curve, with order inside each phase."""
    rng = np.random.default_rng(seed)
    grid = CalendarGrid(-1800.0, 1.0, 1601)
    curve = curve_on_grid(synthetic_curve(), grid)
    phases, evidence, order = [], [], []
    t = -1500.0
    for j in range(n_phases):
        span = rng.uniform(60, 150)
        true = rng.uniform(t, t + span, per_phase)
        members = [f"{j}-{i}" for i in range(per_phase)]
        # two stacks: members 0..3 and 4..7 each in stratigraphic order (earliest first)
        for stack in (members[: per_phase // 2], members[per_phase // 2:]):
            idx = [members.index(m) for m in stack]
            ranked = [stack[k] for k in np.argsort(true[idx])]
            order += [(a, b, False) for a, b in zip(ranked, ranked[1:])]
        for i, d in enumerate(true):
            k = min(max(int(round(d - grid.start)), 0), grid.n - 1)
            sigma = rng.uniform(25, 35)
            age = rng.normal(curve.mu[k], np.sqrt(sigma ** 2 + curve.variance[k]))
            evidence.append(EvidenceInput(f"VXL-R{j:02d}{i:02d}", members[i], log_likelihood(age, sigma, curve)))
        phases.append(PhaseInput(f"P{j + 1}", tuple(members), "sequential" if j + 1 < n_phases else None))
        t += span + rng.uniform(20, 60)
    return compile_model(grid, phases=phases, order=order, evidence=evidence, range_lo=grid.start,
                         range_hi=grid.end)


def _case(model, n_events: int, chains: int, iterations: int, warmup: int, entropy: int) -> dict:
    t0, c0 = time.perf_counter(), time.process_time()
    res = run_chains(model, entropy=entropy, n_chains=chains, iterations=iterations, warmup=warmup,
                     workers=min(chains, 2))
    seconds = time.perf_counter() - t0
    cpu = time.process_time() - c0
    dates, _ = stack_chains(res)
    report = diagnose(to_inference_data(dates, model.event_keys))
    sweeps = chains * (iterations + warmup)
    return {
        "events": n_events,
        "chains": chains,
        "iterations": iterations,
        "warmup": warmup,
        "seconds": round(seconds, 4),
        "cpu_seconds": round(cpu, 4),
        "min_bulk_ess": round(report.min_ess_bulk, 1),
        "max_r_hat": round(report.max_r_hat, 4),
        "converged": report.converged,
        "ess_per_s": round(report.min_ess_bulk / seconds, 1),
        "updates_per_s": round(sweeps * len(model.events) / seconds, 1),
    }


def run(*, iterations_a: int = 20000, iterations_b: int = 6000, chains: int = 4, entropy: int = 20241) -> dict:
    """Run the three cases; returns ``{"suite": "sampler", "cases": [...]}``.

    ``seconds`` is sampling wall time over all chains (2 worker threads),
    ``compile_seconds`` the kernel compile or cache load, ``ess_per_s`` the
    slowest parameter's bulk ESS per sampling second, ``updates_per_s``
    single-parameter updates per second.  ``cpu_seconds`` (process CPU time
    over all threads) shows how much of the wall time other load took.
    """
    compile_seconds = warm_up()
    cases = []
    for n_phases, per_phase, iters in ((3, 8, iterations_a), (10, 20, iterations_b)):
        model = generated_model(n_phases, per_phase)
        case = _case(model, n_phases * per_phase, chains, iters, max(1000, iters // 10), entropy)
        case["name"] = f"normal-{n_phases}x{per_phase}"
        case["compile_seconds"] = round(compile_seconds, 3)
        cases.append(case)
    t0 = time.perf_counter()
    model = radiocarbon_model()
    flatten(model)
    model_seconds = time.perf_counter() - t0
    case = _case(model, 24, chains, iterations_a, max(1000, iterations_a // 10), entropy)
    case.update({"name": "radiocarbon-with-order", "compile_seconds": round(compile_seconds, 3),
                 "model_seconds": round(model_seconds, 3),
                 "constraints_inside_phases": sum(1 for c in model.constraints
                                                  if c.earlier.startswith("ctx:") and c.later.startswith("ctx:"))})
    cases.append(case)
    return {"suite": "sampler", "cases": cases}


if __name__ == "__main__":  # pragma: no cover
    import json

    print(json.dumps(run(), indent=2))
