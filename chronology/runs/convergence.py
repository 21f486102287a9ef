"""Converged by default: judge a run's draws and plan its next extension.

After every round of sampling the run's draws are diagnosed (rank-normalised
split R-hat, bulk and tail effective sample sizes; Vehtari, Gelman, Simpson,
Carpenter & Bürkner 2021).  A run is converged when every reported quantity
(event dates, outlier indicators, question values) has R-hat <= 1.01 and bulk
and tail ESS >= 400, the thresholds those authors recommend.  Until then it
extends itself: first more iterations per chain, then more chains, within the
run's budget of wall time (``budget_seconds``) and kept sweeps per chain
(``max_iterations``).  When a budget stops it, the run ends as not converged
and :func:`verdict` says which budget ran out.

Each extension samples a new segment of every chain from a fresh dispersed
start with its own warm-up (the sampler cannot resume a stored state), so the
kept draws of a chain are a sequence of independent stretches; split R-hat
over them is, if anything, stricter than over one long stretch.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from chronology.engine.diagnostics import ESS_BULK_MIN, R_HAT_MAX, to_inference_data
from chronology.engine.diagnostics import diagnose as engine_diagnose
from chronology.engine.posterior import question_draws

from .results import combine_draws, load_model

__all__ = ["R_HAT_MAX", "ESS_MIN", "Assessment", "assess", "quantities_ok", "Plan", "plan_extension",
           "verdict", "MAX_CHAINS"]

#: Bulk and tail ESS each quantity must reach (Vehtari et al. 2021 recommend 100 per chain for four chains).
ESS_MIN = ESS_BULK_MIN
#: Chains a run may grow to.
MAX_CHAINS = 16
#: An extension adds at least this share of the iterations a chain already has.
_MIN_GROWTH = 0.5
#: ... and at most this many times them.
_MAX_GROWTH = 3.0
#: Headroom on the ESS shortfall: ESS grows about linearly with draws, a little less in practice.
_HEADROOM = 1.3


@dataclass(frozen=True)
class Assessment:
    """Worst diagnostics over every reported quantity of a run's draws."""

    converged: bool
    max_r_hat: float
    min_ess_bulk: float
    min_ess_tail: float
    failing: tuple[str, ...]
    draws_per_chain: int


def quantities_ok(q) -> bool:
    """One quantity meets all three thresholds (a constant quantity has nothing to check)."""
    if np.isnan(q.r_hat):
        return True
    return q.r_hat <= R_HAT_MAX and q.ess_bulk >= ESS_MIN and q.ess_tail >= ESS_MIN


def _worst(values) -> list[float]:
    return [v for v in values if np.isfinite(v)]


def summarise_report(report, draws_per_chain: int) -> Assessment:
    qs = report.quantities
    rh = _worst(q.r_hat for q in qs)
    bulk = _worst(q.ess_bulk for q in qs)
    tail = _worst(q.ess_tail for q in qs)
    failing = tuple(q.name for q in qs if not quantities_ok(q))
    return Assessment(converged=not failing, max_r_hat=max(rh) if rh else float("nan"),
                      min_ess_bulk=min(bulk) if bulk else float("nan"),
                      min_ess_tail=min(tail) if tail else float("nan"),
                      failing=failing, draws_per_chain=draws_per_chain)


def assess(run) -> Assessment:
    """Diagnose every stored chain of ``run`` (and its parent's draws) without writing anything."""
    model = load_model(run)
    dates, outliers, evidence_keys = combine_draws(run)
    qd = question_draws(model, dates)
    idata = to_inference_data(dates, model.event_keys, outliers, evidence_keys, qd, [q.key for q in model.questions])
    report = engine_diagnose(idata, probability_questions=[q.key for q in model.questions if q.kind == "order"])
    return summarise_report(report, int(dates.shape[1]))


@dataclass(frozen=True)
class Plan:
    """The next extension (``add_iterations`` per existing chain, ``add_chains`` new ones) or why none."""

    add_iterations: int = 0
    add_chains: int = 0
    stop: str | None = None
    reason: str = ""


def _round_up(n: float, thin: int) -> int:
    return int(math.ceil(max(n, 1) / thin)) * thin


def plan_extension(*, assessment: Assessment, iterations: int, chains: int, warmup: int, thin: int,
                   max_iterations: int, elapsed: float, budget: float, seconds_per_sweep: float,
                   more_chains: bool = True) -> Plan:
    """What to sample next for a run that has not converged.

    More iterations first: enough to lift the smallest ESS to the threshold
    (ESS grows about in proportion to the draws), at least half again and at
    most three times what each chain has; with an R-hat over the threshold at
    least as many again.  When the chains have reached ``max_iterations``, more
    chains of the same length (doubling, up to :data:`MAX_CHAINS`).  Each is cut
    to what fits the time left at ``seconds_per_sweep`` (wall seconds per sweep
    of one chain, measured on the run so far).
    """
    a = assessment
    worst = min(v for v in (a.min_ess_bulk, a.min_ess_tail, ESS_MIN) if np.isfinite(v))
    growth = _HEADROOM * ESS_MIN / max(worst, 1.0) - 1.0
    if np.isfinite(a.max_r_hat) and a.max_r_hat > R_HAT_MAX:
        growth = max(growth, 1.0)
    growth = min(max(growth, _MIN_GROWTH), _MAX_GROWTH)
    left = budget - elapsed
    sweep = max(seconds_per_sweep, 1e-9)
    room = max_iterations - iterations
    if room >= thin:
        want = min(_round_up(iterations * growth, thin), (room // thin) * thin)
        affordable = int((left / sweep - warmup) // thin) * thin
        add = min(want, affordable)
        if add >= max(thin, int(_MIN_GROWTH * iterations / 4)):
            return Plan(add_iterations=add, reason=f"more iterations: {iterations} -> {iterations + add} per chain")
        return Plan(stop="time-budget", reason=f"{left:.0f} s of the time budget left, not enough for more "
                                               "iterations")
    if chains >= MAX_CHAINS or not more_chains:
        return Plan(stop="iteration-budget", reason=f"every chain has the most iterations allowed "
                                                    f"({max_iterations}) and there are {chains} chains")
    new = min(chains, MAX_CHAINS - chains)
    # new chains run side by side with nothing else left to do: they cost about one chain's time
    if left < (warmup + iterations) * sweep:
        return Plan(stop="time-budget", reason=f"{left:.0f} s of the time budget left, not enough for more chains")
    return Plan(add_chains=new, reason=f"chains at the iteration limit; more chains: {chains} -> {chains + new}")


def verdict(assessment: Assessment | None, plan: Plan | None, *, converge: bool) -> dict:
    """The user-facing reason the run ended as it did."""
    if assessment is not None and assessment.converged:
        return {"code": "converged", "message": "every reported quantity has R-hat <= "
                f"{R_HAT_MAX} and bulk and tail ESS >= {ESS_MIN:g}"}
    if not converge:
        return {"code": "not-extended", "message": "the run was asked not to extend itself and did not converge "
                "with the iterations it was given"}
    code = plan.stop if plan is not None and plan.stop else "not-converged"
    what = {"time-budget": "the time budget ran out", "iteration-budget": "the iteration budget ran out"}.get(
        code, "the run did not converge")
    detail = ""
    if assessment is not None:
        detail = (f"; worst R-hat {assessment.max_r_hat:.3f}, smallest bulk ESS {assessment.min_ess_bulk:.0f}, "
                  f"smallest tail ESS {assessment.min_ess_tail:.0f}")
    return {"code": code, "message": f"not converged: {what} before every quantity met the thresholds "
            f"({plan.reason if plan else ''}){detail}. Continue the run or raise its budget."}
