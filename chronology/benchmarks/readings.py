"""Benchmark of weighing many readings jointly from one encompassing model (Klugkist, Kato & Hoijtink 2005).

A simulated site of three phases in sequence with six radiocarbon-dated
members each (24 events with the boundaries), drawn from the model's own
prior through the synthetic curve, with eight undecided orderings between
members of the same phase: 2^8 = 256 readings.  The suite times
:func:`chronology.engine.encompassing.encompassing_weights` at its default
settings and, as the reference measured in the same run, stepping-stone
sampling (Xie et al. 2011) of the encompassing model and of the reading that
accepts every ordering, whose difference is the same Bayes factor; weighing
the readings one by one would take one stepping-stone run each.

Prints ``{"suite": "readings", "events", "relationships", "readings",
"estimable", "seconds", "log_bf_mcse_median", "log_bf_mcse_max",
"all_accepted": {"joint", "stepping_stone"}, "stepping_stone_seconds",
"one_by_one_seconds_estimate", "speedup"}``.  Correctness is asserted by
``tests/engine/test_encompassing.py``; this reports time and precision.
"""

from __future__ import annotations

import dataclasses
import time

import numpy as np

from chronology.engine.calibration_check import SiteDesign, design_model, draw_from_prior, simulate_ages
from chronology.engine.encompassing import JointSettings, Restriction, encompassing_weights
from chronology.engine.marginal_likelihood import SteppingStoneSettings, stepping_stone
from chronology.engine.model import Constraint
from chronology.engine.calibration import curve_on_grid
from chronology.engine.sampler import warm_up
from chronology.engine.synthetic_curve import synthetic_curve

__all__ = ["run", "QUICK"]

QUICK = {"relationships": 4, "iterations": 4000, "stones": 8, "repeats": 2}


def _site(entropy: int):
    design = SiteDesign((6, 6, 6), "sequential")
    rng = np.random.default_rng(entropy)
    on_grid = curve_on_grid(synthetic_curve(), design.grid())
    truth = draw_from_prior(design, rng)
    return design, design_model(design, simulate_ages(design, truth, on_grid, rng), on_grid)


def _orderings(design: SiteDesign, k: int, rng: np.random.Generator) -> list[Restriction]:
    pairs = []
    while len(pairs) < k:
        j = int(rng.integers(len(design.phase_sizes)))
        a, b = rng.choice(design.phase_sizes[j], 2, replace=False)
        pair = (f"ctx:{design.member_key(j, int(a))}", f"ctx:{design.member_key(j, int(b))}")
        if pair not in pairs and pair[::-1] not in pairs:
            pairs.append(pair)
    return [Restriction(f"{a[4:]} before {b[4:]}", ((a, b),)) for a, b in pairs]


def run(*, relationships: int = 8, iterations: int = 20000, stones: int = 24, repeats: int = 8,
        entropy: int = 2005) -> dict:
    warm_up()
    design, model = _site(entropy)
    restrictions = _orderings(design, relationships, np.random.default_rng(entropy + 1))
    t0 = time.perf_counter()
    joint = encompassing_weights(model, restrictions, entropy=entropy,
                                 settings=JointSettings(iterations=iterations))
    seconds = time.perf_counter() - t0
    errors = np.array([r.mcse for r in joint.readings if r.mcse is not None and r.accepted])
    ss = SteppingStoneSettings(stones=stones, draws=300, thin=2, warmup=200, repeats=repeats)
    t1 = time.perf_counter()
    enc = stepping_stone(model, entropy=entropy + 2, settings=ss, workers=1)
    ss_seconds = time.perf_counter() - t1
    constrained = dataclasses.replace(model, constraints=model.constraints + tuple(
        Constraint(a, b, True) for r in restrictions for a, b in r.pairs))
    full = stepping_stone(constrained, entropy=entropy + 3, settings=ss, workers=1)
    last = joint.readings[-1]
    return {
        "suite": "readings",
        "events": len(model.events),
        "relationships": relationships,
        "readings": len(joint.readings),
        "estimable": sum(r.log_bf is not None for r in joint.readings),
        "seconds": round(seconds, 2),
        "log_bf_mcse_median": round(float(np.median(errors)), 4) if errors.size else None,
        "log_bf_mcse_max": round(float(errors.max()), 4) if errors.size else None,
        "all_accepted": {
            "joint": {"log_bf": last.log_bf, "mcse": last.mcse},
            "stepping_stone": {"log_bf": full.log_ml - enc.log_ml, "mcse": float(np.hypot(full.mcse, enc.mcse))},
        },
        "stepping_stone_seconds": round(ss_seconds, 2),
        "one_by_one_seconds_estimate": round(ss_seconds * len(joint.readings), 1),
        "speedup": round(ss_seconds * len(joint.readings) / seconds, 1),
    }
