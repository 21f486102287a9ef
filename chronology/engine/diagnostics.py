"""Convergence diagnostics of sampler output, computed with ArviZ.

Rank-normalised split R-hat, bulk and tail effective sample size (Vehtari et
al. 2021) and Monte Carlo standard errors: ``sd/sqrt(ESS)`` for means (ArviZ
``mcse(method="mean")``) and ``sqrt(p(1-p)/ESS_bulk)`` for probabilities.
Verdict: not converged when any reported quantity has R-hat above 1.01 or a
bulk ESS below 400 (Vehtari et al. 2021).  Quantities constant over every
draw (R-hat undefined) are reported with NaN and do not fail the verdict.

Draws are held in an :class:`arviz.InferenceData` whose ``posterior`` group
has ``date`` (chain, draw, event), ``outlier`` (chain, draw, determination)
and ``derived`` (chain, draw, question) variables, stored as NetCDF with the
h5netcdf engine.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

import arviz as az
import numpy as np
import xarray as xr

__all__ = [
    "R_HAT_MAX",
    "ESS_BULK_MIN",
    "DIAGNOSTICS_METHOD",
    "QuantityDiagnostics",
    "ConvergenceReport",
    "stack_chains",
    "to_inference_data",
    "write_netcdf",
    "read_netcdf",
    "diagnose",
    "mcse_probability",
]

R_HAT_MAX = 1.01
ESS_BULK_MIN = 400.0
ESS_TAIL_MIN = 400.0
DIAGNOSTICS_METHOD = (
    "rank-normalised split R-hat, bulk and tail ESS (Vehtari et al. 2021), computed with ArviZ "
    f"{az.__version__}"
)


@dataclass(frozen=True)
class QuantityDiagnostics:
    """Diagnostics of one reported quantity (``group`` is date, outlier or derived)."""

    group: str
    name: str
    mean: float
    sd: float
    r_hat: float
    ess_bulk: float
    ess_tail: float
    mcse: float

    @property
    def ok(self) -> bool:
        if np.isnan(self.r_hat):
            return True
        return self.r_hat <= R_HAT_MAX and self.ess_bulk >= ESS_BULK_MIN and self.ess_tail >= ESS_TAIL_MIN


@dataclass(frozen=True)
class ConvergenceReport:
    """Per-quantity diagnostics and the overall verdict."""

    quantities: tuple[QuantityDiagnostics, ...]
    converged: bool
    max_r_hat: float
    min_ess_bulk: float
    failing: tuple[str, ...] = field(default=())
    thresholds: dict = field(default_factory=lambda: {"r_hat_max": R_HAT_MAX, "ess_bulk_min": ESS_BULK_MIN,
                                                             "ess_tail_min": ESS_TAIL_MIN})
    method: str = DIAGNOSTICS_METHOD

    def get(self, name: str) -> QuantityDiagnostics:
        for q in self.quantities:
            if q.name == name:
                return q
        raise KeyError(name)


def stack_chains(chains: Sequence) -> tuple[np.ndarray, np.ndarray]:
    """Stack :class:`~chronology.engine.sampler.ChainResult` draws to (chain, draw, ...) arrays.

    Chains are cut to the shortest one.
    """
    n = min(c.draws.shape[0] for c in chains)
    dates = np.stack([c.draws[:n] for c in chains])
    outl = np.stack([c.outliers[:n] for c in chains])
    return dates, outl


def to_inference_data(
    dates: np.ndarray,
    event_keys: Sequence[str],
    outliers: np.ndarray | None = None,
    evidence_keys: Sequence[str] = (),
    questions: np.ndarray | None = None,
    question_keys: Sequence[str] = (),
    attrs: dict | None = None,
) -> az.InferenceData:
    """Build an :class:`arviz.InferenceData` from (chain, draw, ...) arrays."""
    dates = np.asarray(dates, dtype=float)
    if dates.ndim != 3 or dates.shape[2] != len(event_keys):
        raise ValueError("dates must have shape (chain, draw, len(event_keys))")
    c, d, _ = dates.shape
    coords = {"chain": np.arange(c), "draw": np.arange(d), "event": list(event_keys)}
    data = {"date": (("chain", "draw", "event"), dates)}
    if outliers is not None and len(evidence_keys):
        coords["determination"] = list(evidence_keys)
        data["outlier"] = (("chain", "draw", "determination"), np.asarray(outliers, dtype=np.int8))
    if questions is not None and len(question_keys):
        coords["question"] = list(question_keys)
        data["derived"] = (("chain", "draw", "question"), np.asarray(questions, dtype=float))
    ds = xr.Dataset(data, coords=coords, attrs={k: str(v) for k, v in (attrs or {}).items()})
    return az.InferenceData(posterior=ds)


def write_netcdf(idata: az.InferenceData, path: str) -> str:
    """Write ``idata`` to ``path`` as NetCDF (h5netcdf engine); returns the path."""
    idata.to_netcdf(str(path), engine="h5netcdf")
    return str(path)


def read_netcdf(path: str) -> az.InferenceData:
    """Read an InferenceData written by :func:`write_netcdf`."""
    return az.from_netcdf(str(path), engine="h5netcdf")


def mcse_probability(p: float, ess: float) -> float:
    """Monte Carlo standard error ``sqrt(p(1-p)/ESS)`` of a probability estimate."""
    if not ess > 0:
        return float("nan")
    return float(np.sqrt(max(p * (1.0 - p), 0.0) / ess))


def _values(ds: xr.Dataset, var: str, dim: str, fn, **kw) -> np.ndarray:
    out = fn(ds[[var]], **kw)[var]
    return np.asarray(out.transpose(dim).values, dtype=float)


def diagnose(idata: az.InferenceData, probability_questions: Sequence[str] = ()) -> ConvergenceReport:
    """Diagnostics of every quantity in ``idata.posterior`` and the verdict.

    Parameters
    ----------
    idata : arviz.InferenceData
        As built by :func:`to_inference_data`.
    probability_questions : sequence of str
        Question names whose draws are 0/1 indicators (order questions): their
        MCSE is that of a probability.

    Returns
    -------
    ConvergenceReport

    References
    ----------
    Vehtari, A., Gelman, A., Simpson, D., Carpenter, B. & Bürkner, P.-C. 2021.
        Rank-normalization, folding, and localization: an improved R-hat for
        assessing convergence of MCMC. Bayesian Analysis 16(2): 667-718.
    """
    ds = idata.posterior
    items: list[QuantityDiagnostics] = []
    probs = set(probability_questions)
    for var, dim in (("date", "event"), ("outlier", "determination"), ("derived", "question")):
        if var not in ds:
            continue
        arr = ds[var].astype(float)
        sub = xr.Dataset({var: arr})
        with np.errstate(invalid="ignore", divide="ignore"):
            rhat = _values(sub, var, dim, az.rhat, method="rank")
            bulk = _values(sub, var, dim, az.ess, method="bulk")
            tail = _values(sub, var, dim, az.ess, method="tail")
            mcse = _values(sub, var, dim, az.mcse, method="mean")
        vals = arr.transpose(dim, "chain", "draw").values.reshape(arr.sizes[dim], -1)
        means, sds = vals.mean(axis=1), vals.std(axis=1, ddof=1) if vals.shape[1] > 1 else np.zeros(len(vals))
        for i, name in enumerate(ds[dim].values.tolist()):
            constant = sds[i] == 0
            m = mcse[i]
            if var == "outlier" or name in probs:
                m = mcse_probability(means[i], bulk[i]) if not constant else 0.0
            items.append(QuantityDiagnostics(
                group=var, name=str(name), mean=float(means[i]), sd=float(sds[i]),
                r_hat=float("nan") if constant else float(rhat[i]),
                ess_bulk=float("nan") if constant else float(bulk[i]),
                ess_tail=float("nan") if constant else float(tail[i]),
                mcse=float(m),
            ))
    failing = tuple(q.name for q in items if not q.ok)
    rh = [q.r_hat for q in items if not np.isnan(q.r_hat)]
    es = [q.ess_bulk for q in items if not np.isnan(q.ess_bulk)]
    return ConvergenceReport(
        quantities=tuple(items),
        converged=not failing,
        max_r_hat=float(max(rh)) if rh else float("nan"),
        min_ess_bulk=float(min(es)) if es else float("nan"),
        failing=failing,
    )
