"""Coverage of reported ranges on simulated realistic sites with known true dates.

Each simulated site has three phases in sequence, placed at random in
2000 cal BC - cal AD 500: phase durations ``U(50, 250)`` years, gaps between
phases ``U(0, 100)`` years, 4-7 members per phase (12-21 dated events),
each with one radiocarbon age drawn through the SYNTHETIC curve at its true
date with an error of 20-35 years.  Each site is fitted as the service would
by default: the overall range derived from the evidence (the likelihoods'
support within about 6 sigma of their peak, padded by half its width and at
least :data:`~chronology.runs.compile_range.MIN_RANGE_PAD` years), the
span-uniform prior (Nicholls & Jones 2001), 4 chains of 5000 sweeps after
1000 warm-up sweeps.  Reported: how often the 95.4 % highest-density range
(as the results give it) and the central 95 % interval of the draws contain
the truth, per boundary and for the events, with Clopper-Pearson 95 %
intervals (Clopper & Pearson 1934).

Variants separate the causes of a shortfall:

* ``realistic``: the sites above;
* ``exchangeable``: the same total spans, but the three durations and two
  gaps are an exchangeable split of it (``Dirichlet(1, ..., 1)``), which is
  what the span-uniform prior assumes of a chain of boundaries; if coverage
  is nominal here and short in ``realistic``, the shortfall is the gap
  between the sites and the prior, not the model or the sampler (the
  simulation-based calibration checks those);
* ``set-range``: the realistic sites with the overall range set by the user
  to the true site extent padded by 200 years each side (a user who knows
  the period), which narrows ``R``;
* ``duration-prior``: the realistic sites (the very same ones, seeded as
  ``realistic``) fitted with the duration prior that matches how they are
  simulated, ``uniform 50-250`` years on every phase
  (:mod:`chronology.engine.interval_priors`);
* ``duration-gap-prior``: the same, with the gap prior ``uniform 0-100``
  years between the phases as well.
"""

from __future__ import annotations

import time

import numpy as np
from scipy import stats

from chronology.engine.calibration import curve_on_grid, log_likelihood
from chronology.engine.grid import CalendarGrid
from chronology.engine.model_compiler import EvidenceInput, IntervalPriorInput, PhaseInput, compile_model
from chronology.engine.posterior import summarise
from chronology.engine.sampler import run_chains, warm_up
from chronology.engine.synthetic_curve import synthetic_curve
from chronology.runs.compile_range import MIN_RANGE_PAD

__all__ = ["VARIANTS", "QUICK", "simulate_site", "derived_range", "run"]

VARIANTS = ("realistic", "exchangeable", "set-range", "duration-prior", "duration-gap-prior")
#: the duration and gap priors that match the simulated sites (years)
SIMULATED_DURATION = {"min": 50.0, "max": 250.0}
SIMULATED_GAP = {"min": 0.0, "max": 100.0}
QUICK = {"sites": 4, "iterations": 1500, "warmup": 500}

_SUPPORT_DROP = 18.0  # log-likelihood drop of 6 sigma, as the service derives the range
_WIDE = CalendarGrid.spanning(-3500.0, 1500.0, 1.0)


def simulate_site(rng: np.random.Generator, exchangeable: bool = False) -> dict:
    """True boundaries (6, in time order), true member dates per phase and the errors."""
    durations = rng.uniform(50, 250, 3)
    gaps = rng.uniform(0, 100, 2)
    if exchangeable:
        pieces = rng.dirichlet(np.ones(5)) * (durations.sum() + gaps.sum())
        durations, gaps = pieces[[0, 2, 4]], pieces[[1, 3]]
    start = rng.uniform(-2000, 500 - durations.sum() - gaps.sum())
    bounds, t = [], start
    for j in range(3):
        bounds += [t, t + durations[j]]
        t += durations[j] + (gaps[j] if j < 2 else 0.0)
    members = [np.sort(rng.uniform(bounds[2 * j], bounds[2 * j + 1], rng.integers(4, 8))) for j in range(3)]
    sigmas = [rng.uniform(20, 35, len(m)) for m in members]
    return {"boundaries": np.array(bounds), "members": members, "sigmas": sigmas}


def _ages(site: dict, curve, rng) -> list[list[float]]:
    on = curve_on_grid(curve, _WIDE)
    out = []
    for m, s in zip(site["members"], site["sigmas"]):
        k = np.clip(np.round(m - _WIDE.start).astype(int), 0, _WIDE.n - 1)
        out.append((rng.normal(on.mu[k], np.sqrt(s ** 2 + on.variance[k]))).tolist())
    return out


def derived_range(ages, sigmas, curve) -> tuple[float, float]:
    """The service's default overall range for these determinations (see ``compile_range``)."""
    on = curve_on_grid(curve, _WIDE)
    lo, hi = np.inf, -np.inf
    for ys, ss in zip(ages, sigmas):
        for y, s in zip(ys, ss):
            ll = log_likelihood(y, s, on)
            years = _WIDE.years[ll >= ll.max() - _SUPPORT_DROP]
            lo, hi = min(lo, years.min()), max(hi, years.max())
    pad = max(0.5 * (hi - lo), MIN_RANGE_PAD)
    return float(np.floor(lo - pad)), float(np.ceil(hi + pad))


def _interval_priors(name: str) -> list[IntervalPriorInput]:
    out = []
    if name in ("duration-prior", "duration-gap-prior"):
        out += [IntervalPriorInput(f"P{j + 1}", "duration", "uniform", SIMULATED_DURATION) for j in range(3)]
    if name == "duration-gap-prior":
        out += [IntervalPriorInput(f"P{j + 1}", "gap", "uniform", SIMULATED_GAP) for j in range(2)]
    return out


def _model(ages, sigmas, curve, lo: float, hi: float, interval_priors=()):
    grid = CalendarGrid.spanning(lo, hi, 1.0)
    on = curve_on_grid(curve, grid)
    phases, evidence = [], []
    for j, (ys, ss) in enumerate(zip(ages, sigmas)):
        members = []
        for i, (y, s) in enumerate(zip(ys, ss)):
            ctx = f"{j}-{i}"
            members.append(ctx)
            evidence.append(EvidenceInput(f"SIM-{j}{i:02d}", ctx, log_likelihood(y, s, on)))
        phases.append(PhaseInput(f"P{j + 1}", tuple(members), "sequential" if j < 2 else None))
    return compile_model(grid, phases=phases, order=[], evidence=evidence, range_lo=grid.start, range_hi=grid.end,
                         interval_priors=interval_priors)


def _covers(ranges, truth: float, half_step: float) -> bool:
    return any(r.start - half_step <= truth <= r.end + half_step for r in ranges)


def _proportion(hits: int, n: int) -> dict:
    ci = stats.binomtest(hits, n).proportion_ci(0.95, method="exact") if n else None
    return {"covered": hits, "of": n, "rate": round(hits / n, 4) if n else None,
            "clopper_pearson_95": [round(ci.low, 4), round(ci.high, 4)] if ci else None}


def _variant(name: str, sites: int, entropy: int, curve, iterations: int, warmup: int, chains: int) -> dict:
    # the prior variants refit the realistic sites themselves, so the comparison is paired
    sites_of = "realistic" if name.startswith("duration") else name
    root = np.random.SeedSequence([entropy, VARIANTS.index(sites_of)])
    boundary_names = ["beginning:P1", "close:P1", "beginning:P2", "close:P2", "beginning:P3", "close:P3"]
    hpd_hits = {k: 0 for k in boundary_names}
    central_hits = {k: 0 for k in boundary_names}
    side = {k: {"truth_earlier": 0, "truth_later": 0} for k in boundary_names}
    ev_hpd = ev_central = ev_n = 0
    converged = 0
    t0 = time.perf_counter()
    for child in root.spawn(sites):
        data_seed, chain_seed = child.spawn(2)
        rng = np.random.default_rng(data_seed)
        site = simulate_site(rng, exchangeable=(name == "exchangeable"))
        ages = _ages(site, curve, rng)
        if name == "set-range":
            lo, hi = site["boundaries"][0] - 200.0, site["boundaries"][-1] + 200.0
            lo, hi = float(np.floor(lo)), float(np.ceil(hi))
        else:
            lo, hi = derived_range(ages, site["sigmas"], curve)
        model = _model(ages, site["sigmas"], curve, lo, hi, _interval_priors(name))
        res = run_chains(model, entropy=int(chain_seed.generate_state(1)[0]), n_chains=chains,
                         iterations=iterations, warmup=warmup, workers=min(chains, 2))
        dates = np.stack([r.draws for r in res])
        from chronology.engine.diagnostics import diagnose, to_inference_data

        converged += bool(diagnose(to_inference_data(dates, model.event_keys)).converged)
        summary = {e.key: e for e in summarise(model, dates).events}
        flat = dates.reshape(-1, dates.shape[-1])
        truth = dict(zip(boundary_names, site["boundaries"]))
        for j, m in enumerate(site["members"]):
            for i, t in enumerate(m):
                truth[f"ctx:{j}-{i}"] = t
        half = 0.5 * model.grid.step
        for k, t in truth.items():
            col = flat[:, model.event_keys.index(k)]
            hit = _covers(summary[k].hpd[0.954], t, half)
            lo_q, hi_q = np.quantile(col, [0.025, 0.975])
            central = bool(lo_q <= t <= hi_q)
            if k in hpd_hits:
                hpd_hits[k] += hit
                central_hits[k] += central
                if not hit:
                    side[k]["truth_earlier" if t < summary[k].hpd[0.954][0].start else "truth_later"] += 1
            else:
                ev_n += 1
                ev_hpd += hit
                ev_central += central
    n_b = sites * len(boundary_names)
    return {
        "variant": name,
        "sites": sites,
        "seconds": round(time.perf_counter() - t0, 1),
        "converged_runs": converged,
        "boundaries_hpd_95_4": _proportion(sum(hpd_hits.values()), n_b),
        "boundaries_central_95": _proportion(sum(central_hits.values()), n_b),
        "events_hpd_95_4": _proportion(ev_hpd, ev_n),
        "events_central_95": _proportion(ev_central, ev_n),
        "per_boundary": [{"name": k, "hpd_95_4": _proportion(hpd_hits[k], sites),
                          "central_95": _proportion(central_hits[k], sites), "misses": side[k]}
                         for k in boundary_names],
    }


def run(*, sites: int = 40, entropy: int = 1934, iterations: int = 5000, warmup: int = 1000, chains: int = 4,
        variants: tuple[str, ...] = VARIANTS) -> dict:
    """``{"suite": "coverage", "seconds", "compile_seconds", "variants": [...]}`` (see the module notes)."""
    compile_seconds = warm_up()
    curve = synthetic_curve()
    t0 = time.perf_counter()
    out = [_variant(v, sites, entropy, curve, iterations, warmup, chains) for v in variants]
    return {"suite": "coverage", "seconds": round(time.perf_counter() - t0, 1),
            "compile_seconds": round(compile_seconds, 2), "variants": out,
            "note": "SYNTHETIC curve: for testing only, not for dating real samples"}
