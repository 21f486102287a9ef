"""The joint-readings benchmark weighs every reading and compares one with stepping-stone sampling."""

from __future__ import annotations

from chronology.benchmarks.readings import QUICK, run


def test_benchmark_weighs_every_reading_of_the_orderings_and_reports_the_reference():
    out = run(**QUICK)
    assert out["suite"] == "readings" and out["events"] == 24
    assert out["readings"] == 2 ** QUICK["relationships"]
    assert set(out["all_accepted"]) == {"joint", "stepping_stone"}
    assert out["seconds"] > 0 and out["one_by_one_seconds_estimate"] > 0
