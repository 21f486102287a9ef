"""The coverage benchmark: its simulated sites and the structure it prints."""

from __future__ import annotations

import numpy as np

from chronology.benchmarks.coverage import run, simulate_site


def test_simulated_sites_have_three_phases_in_sequence_with_their_members_inside():
    site = simulate_site(np.random.default_rng(5))
    b = site["boundaries"]
    assert len(b) == 6 and np.all(np.diff(b) >= 0)
    for j, m in enumerate(site["members"]):
        assert 4 <= len(m) <= 7 and np.all((m >= b[2 * j]) & (m <= b[2 * j + 1]))


def test_the_exchangeable_variant_keeps_the_total_span_of_the_realistic_one():
    realistic = simulate_site(np.random.default_rng(9))["boundaries"]
    exchangeable = simulate_site(np.random.default_rng(9), exchangeable=True)["boundaries"]
    assert abs((exchangeable[-1] - exchangeable[0]) - (realistic[-1] - realistic[0])) < 1e-6


def test_the_benchmark_reports_coverage_per_boundary_with_clopper_pearson_intervals():
    out = run(sites=1, iterations=200, warmup=100, chains=2, variants=("realistic",))
    v = out["variants"][0]
    assert out["suite"] == "coverage" and v["variant"] == "realistic"
    assert v["boundaries_hpd_95_4"]["of"] == 6
    assert [b["name"] for b in v["per_boundary"]][:2] == ["beginning:P1", "close:P1"]
    low, high = v["boundaries_hpd_95_4"]["clopper_pearson_95"]
    assert 0.0 <= low <= v["boundaries_hpd_95_4"]["rate"] <= high <= 1.0


def test_the_duration_prior_variant_refits_the_realistic_sites_with_the_simulated_prior():
    out = run(sites=1, iterations=200, warmup=100, chains=2, variants=("realistic", "duration-prior"))
    realistic, tilted = out["variants"]
    assert tilted["variant"] == "duration-prior"
    # the same site (paired comparison): the same number of events to cover
    assert tilted["events_hpd_95_4"]["of"] == realistic["events_hpd_95_4"]["of"]
