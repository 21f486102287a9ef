"""The warning that the posterior presses against the overall range."""

import numpy as np

from chronology.engine.range_pressure import range_pressure


def test_draws_piled_at_the_earliest_end_are_flagged():
    rng = np.random.default_rng(3)
    draws = np.column_stack([np.r_[np.full(50, 0.5), rng.uniform(100, 200, 950)], rng.uniform(400, 600, 1000)])
    assert range_pressure(draws, ["a", "b"], 0.0, 1000.0) == [{"event": "a", "end": "earliest", "share": 0.05}]


def test_draws_well_inside_the_range_raise_no_warning():
    draws = np.random.default_rng(4).normal(500, 50, (2000, 3))
    assert range_pressure(draws, ["a", "b", "c"], 0.0, 1000.0) == []


def test_draws_at_the_latest_end_are_flagged_there():
    draws = np.r_[np.full(30, 999.5), np.full(970, 500.0)][:, None]
    assert range_pressure(draws, ["a"], 0.0, 1000.0)[0]["end"] == "latest"
