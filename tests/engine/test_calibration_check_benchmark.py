"""The calibration-check benchmark prints exactly the agreed structure."""

from __future__ import annotations

from chronology.benchmarks.calibration_check import run


def test_benchmark_prints_suite_replicates_seconds_and_one_p_value_per_parameter():
    out = run(replicates=5)
    assert set(out) == {"suite", "replicates", "seconds", "parameters"}
    assert out["suite"] == "calibration-check" and out["replicates"] == 5
    # three phases of four members in sequence: 6 boundaries and 12 members
    assert len(out["parameters"]) == 18
    assert all(set(p) == {"name", "p_value"} and 0.0 <= p["p_value"] <= 1.0 for p in out["parameters"])
