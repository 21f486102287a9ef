"""Simulation-based calibration of the whole fit (Talts, Betancourt, Simpson, Vehtari & Gelman 2018).

Each arrangement test draws 100 replicates from the model's own prior (three phases of
three members, range 1000 years, synthetic curve, 25-year errors), fits each
with one chain keeping 99 draws thinned by 10, and tests the ranks of every
boundary and member for uniformity by a chi-square test over 5 bins (20
expected per bin).  With 15 parameters per model a test fails when any
p-value is below 0.01/15 (Bonferroni at 1 %).  The rank histograms are saved
in the test's temporary directory.
"""

import json

import numpy as np
import pytest
from scipy import stats

from chronology.engine.calibration_check import (
    SiteDesign,
    Terminus,
    calibration_check,
    rank_histogram,
    uniformity_p_value,
)
from chronology.engine.synthetic_curve import synthetic_curve

REPLICATES = 100


@pytest.fixture(scope="module")
def curve():
    return synthetic_curve()


def _check(design, curve, tmp_path, entropy):
    result = calibration_check(design, replicates=REPLICATES, curve=curve, entropy=entropy)
    hist = {k: rank_histogram(result.ranks[:, i], result.n_draws, result.bins).tolist()
            for i, k in enumerate(result.names)}
    (tmp_path / "rank_histograms.json").write_text(json.dumps({"histograms": hist, **result.as_dict()}, indent=1))
    _save_figure(result, hist, tmp_path / "rank_histograms.png")
    threshold = 0.01 / len(result.names)
    failing = {k: p for k, p in result.p_values.items() if p < threshold}
    assert not failing, f"ranks not uniform: {failing}; histograms {hist}"


def _save_figure(result, hist, path):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    cols = 5
    rows = -(-len(hist) // cols)
    fig, axes = plt.subplots(rows, cols, figsize=(2.0 * cols, 1.7 * rows), sharey=True, squeeze=False)
    for ax in axes.flat[len(hist):]:
        ax.set_axis_off()
    for ax, (k, counts) in zip(axes.flat, hist.items()):
        ax.bar(range(1, len(counts) + 1), counts)
        ax.axhline(result.replicates / result.bins, color="0.4", lw=0.8)
        ax.set_title(k, fontsize=8)
        ax.set_xticks(range(1, len(counts) + 1))
    fig.suptitle(f"rank histograms, {result.replicates} replicates, {result.n_draws} draws each; "
                 "line: expected count", fontsize=8)
    fig.tight_layout()
    fig.savefig(path, dpi=80)
    plt.close(fig)


def test_rank_histogram_bins_ranks_into_equally_likely_bins():
    assert rank_histogram(np.array([0, 19, 20, 99]), 99, 5).tolist() == [2, 1, 0, 0, 1]


def test_uniformity_p_value_is_the_scipy_chi_square_test():
    # Pearson (1900) chi-square goodness of fit, as scipy.stats.chisquare computes it
    ranks = np.random.default_rng(1).integers(0, 100, 200)
    expected = stats.chisquare(np.bincount(ranks // 20, minlength=5)).pvalue
    assert uniformity_p_value(ranks, 99, 5) == pytest.approx(expected)


def test_uniformity_p_value_rejects_ranks_piled_at_the_ends():
    ranks = np.r_[np.zeros(50, int), np.full(50, 99)]
    assert uniformity_p_value(ranks, 99, 5) < 1e-6


@pytest.mark.slow
def test_ranks_are_uniform_for_phases_in_sequence(curve, tmp_path):
    _check(SiteDesign((3, 3, 3), "sequential"), curve, tmp_path, entropy=101)


@pytest.mark.slow
def test_ranks_are_uniform_for_contiguous_phases(curve, tmp_path):
    _check(SiteDesign((3, 3, 3), "contiguous"), curve, tmp_path, entropy=102)


@pytest.mark.slow
def test_ranks_are_uniform_with_outliers_in_the_model(curve, tmp_path):
    _check(SiteDesign((3, 3, 3), "sequential", outlier_prior=0.1), curve, tmp_path, entropy=103)


@pytest.mark.slow
def test_ranks_are_uniform_with_termini(curve, tmp_path):
    termini = (Terminus(2, 0, "tpq", -900.0), Terminus(0, 0, "taq", -1000.0))
    _check(SiteDesign((3, 3, 3), "contiguous", termini=termini), curve, tmp_path, entropy=104)


@pytest.mark.slow
def test_ranks_are_uniform_for_overlapping_phases(curve, tmp_path):
    _check(SiteDesign((3, 3, 3), "overlapping"), curve, tmp_path, entropy=105)


@pytest.mark.slow
def test_ranks_are_uniform_with_termini_inside_grid_cells(curve, tmp_path):
    # years that fall inside a grid cell: the model holds each exact year as a hard bound
    termini = (Terminus(2, 0, "tpq", -900.4), Terminus(0, 0, "taq", -999.7))
    _check(SiteDesign((3, 3, 3), "contiguous", termini=termini), curve, tmp_path, entropy=106)


def test_prior_draws_with_a_duration_prior_follow_the_truncated_density():
    # rejection from the span-uniform draws: one phase's span is U(0, R), so the kept durations follow
    # f truncated to [0, R]; scipy.stats.kstest against truncnorm
    from chronology.engine.calibration_check import draw_from_prior

    design = SiteDesign((2,), "sequential", durations=(("normal", 300.0, 150.0),))
    rng = np.random.default_rng(5)
    d = [t["close:P1"] - t["beginning:P1"] for t in (draw_from_prior(design, rng) for _ in range(2000))]
    truth = stats.truncnorm(-300.0 / 150.0, 700.0 / 150.0, loc=300.0, scale=150.0)
    assert stats.kstest(d, truth.cdf).pvalue > 1e-3


@pytest.mark.slow
def test_ranks_are_uniform_for_phases_in_sequence_with_duration_and_gap_priors(curve, tmp_path):
    # one family of each kind, and a gap prior, so every branch of the density is in the fit
    design = SiteDesign((3, 3, 3), "sequential",
                        durations=(("uniform", 50.0, 250.0), ("normal", 150.0, 60.0), ("lognormal", 150.0, 0.5)),
                        gaps=(("uniform", 0.0, 100.0), None))
    _check(design, curve, tmp_path, entropy=107)
