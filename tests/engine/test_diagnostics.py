"""Convergence diagnostics and the NetCDF store."""

import numpy as np
import pytest

from chronology.engine.diagnostics import (
    diagnose,
    mcse_probability,
    read_netcdf,
    to_inference_data,
    write_netcdf,
)


def iid(shape, seed=0):
    return np.random.default_rng(seed).normal(size=shape)


def test_independent_chains_are_converged():
    report = diagnose(to_inference_data(iid((4, 1000, 2)), ["a", "b"]))
    assert report.converged
    # for independent draws the bulk ESS is close to the number of draws (Vehtari et al. 2021)
    assert report.get("a").ess_bulk == pytest.approx(4000, rel=0.2)


def test_split_rhat_matches_the_textbook_formula_on_normal_draws():
    # split R-hat by the formula of Vehtari et al. (2021), eq. for var+ and R-hat; rank
    # normalisation changes little on normal draws
    x = iid((4, 1000, 1), seed=3)[:, :, 0]
    x[0] += 0.3
    halves = np.concatenate([x[:, :500], x[:, 500:]])
    n = halves.shape[1]
    W = halves.var(axis=1, ddof=1).mean()
    B = n * halves.mean(axis=1).var(ddof=1)
    rhat = np.sqrt(((n - 1) / n * W + B / n) / W)
    got = diagnose(to_inference_data(x[:, :, None], ["a"])).get("a").r_hat
    assert got == pytest.approx(rhat, abs=0.01)


def test_shifted_chain_is_not_converged():
    x = iid((4, 1000, 1))
    x[0] += 1.0
    report = diagnose(to_inference_data(x, ["a"]))
    assert not report.converged and report.failing == ("a",)


def test_short_run_fails_the_ess_threshold():
    report = diagnose(to_inference_data(iid((2, 100, 1)), ["a"]))
    assert not report.converged


def test_constant_quantity_does_not_fail_the_verdict():
    x = np.concatenate([iid((4, 1000, 1)), np.ones((4, 1000, 1))], axis=2)
    report = diagnose(to_inference_data(x, ["a", "b"]))
    assert report.converged and np.isnan(report.get("b").r_hat)


def test_probability_mcse_is_binomial_over_ess():
    # sqrt(p(1-p)/ESS), domain primer §5.3
    assert mcse_probability(0.2, 400.0) == pytest.approx(0.02)


def test_order_question_uses_the_probability_mcse():
    q = (iid((4, 1000, 1), seed=5) > 0).astype(float)
    report = diagnose(to_inference_data(iid((4, 1000, 1)), ["a"], questions=q, question_keys=["order:a:b"]),
                      probability_questions=["order:a:b"])
    d = report.get("order:a:b")
    assert d.mcse == pytest.approx(np.sqrt(d.mean * (1 - d.mean) / d.ess_bulk))


def test_netcdf_round_trip_keeps_draws_and_coords(tmp_path):
    dates = iid((2, 50, 3))
    outl = (iid((2, 50, 1)) > 1).astype(np.int8)
    idata = to_inference_data(dates, ["x", "y", "z"], outliers=outl, evidence_keys=["VXL-0101"],
                              attrs={"run_id": "run-1"})
    back = read_netcdf(write_netcdf(idata, tmp_path / "run.nc"))
    assert np.array_equal(back.posterior["date"].values, dates)
    assert back.posterior["event"].values.tolist() == ["x", "y", "z"]
    assert back.posterior["outlier"].values.sum() == outl.sum()
    assert back.posterior.attrs["run_id"] == "run-1"
