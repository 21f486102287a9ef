"""Simulation-based calibration of the whole fit (Talts, Betancourt, Simpson, Vehtari & Gelman 2018).

Repeat: draw the boundaries and events ``theta*`` from the model's own prior,
draw radiocarbon ages from them through the calibration curve (the synthetic
curve in tests), fit the model with the service's own sampler, and record the
rank of each ``theta*_i`` among ``L`` thinned posterior draws.  If prior,
likelihood and sampler are all right, each rank is uniform on ``0..L``
(Talts et al. 2018, Theorem 1); a chi-square test of the binned ranks checks
it per parameter.  A U-shaped histogram means posteriors too narrow, a hump
too wide, a slope a bias.

The prior draws follow the generative constructions of
:mod:`chronology.engine.priors` exactly:

* phases linked in sequence or contiguously form one chain of ``k``
  boundaries: total span ``S ~ U(0, R)``, first boundary ``~ U(L, U - S)``,
  the ``k - 2`` inner boundaries ordered uniform inside the span (Nicholls &
  Jones 2001);
* overlapping phases with ordered beginnings: spans ``s_j ~ U(0, R)``
  independently, beginnings uniform on the set of ordered beginnings that
  keep every phase inside the range (by rejection, which is exact);
* members ``iid U(beginning, close)`` of their phase;
* a terminus is part of the model's prior (a hard bound on its event), so
  whole draws are rejected until every terminus holds at its exact year, as
  the model holds it (``Evidence.bound``; exact truncation);
* duration and gap priors multiply the span-uniform prior by ``prod f(d)``:
  a draw of the boundaries is kept with probability ``prod f(d) / prod
  max f`` (each maximum over lengths in ``[0, R]``), rejection sampling
  from the span-uniform draws, which is exact for the product.

Radiocarbon ages are ``N(mu(t), sigma^2 + sigma_c(t)^2)`` at the grid cell of
the true date (the model's likelihood is constant inside a cell); under the
outlier model a determination is, with its prior probability, an outlier
whose error is :data:`OUTLIER_SIGMA_FACTOR` times its own, the same mixture
the model integrates over (Christen 1994).

Everything here is pure computation; the tests and ``bench
calibration-check`` drive it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import stats

from chronology.engine.calibration import CurveOnGrid, curve_on_grid, log_likelihood
from chronology.engine.curves import Curve
from chronology.engine.evidence_likelihoods import terminus_ante_quem, terminus_post_quem
from chronology.engine.grid import CalendarGrid
from chronology.engine.interval_priors import (
    DISTRIBUTIONS,
    distribution_code,
    interval_log_density,
    log_density_ceiling,
)
from chronology.engine.model import Model
from chronology.engine.model_compiler import (
    EvidenceInput,
    IntervalPriorInput,
    PhaseInput,
    beginning_key,
    changeover_key,
    close_key,
    compile_model,
)
from chronology.engine.sampler import flatten, run_chain

__all__ = [
    "OUTLIER_SIGMA_FACTOR",
    "Terminus",
    "SiteDesign",
    "CalibrationResult",
    "draw_from_prior",
    "simulate_ages",
    "design_model",
    "rank_of_truth",
    "uniformity_p_value",
    "rank_histogram",
    "calibration_check",
]

#: Error inflation of the outlier component, as the service compiles it (Christen 1994 mixture).
OUTLIER_SIGMA_FACTOR = 10.0


@dataclass(frozen=True)
class Terminus:
    """A terminus on member ``member`` of phase ``phase`` (0-based): ``tpq`` or ``taq`` at ``year``."""

    phase: int
    member: int
    kind: str
    year: float


@dataclass(frozen=True)
class SiteDesign:
    """The shape of the simulated models: phases, arrangement, range and evidence.

    ``arrangement`` links every phase with the next (``sequential``,
    ``contiguous`` or ``overlapping`` with ordered beginnings).  Every member
    has one radiocarbon determination of error ``sigma``; ``outlier_prior``
    > 0 puts each under the outlier model.  ``durations`` gives per phase
    ``(distribution, p1, p2)`` or ``None`` (e.g. ``("uniform", 50, 250)``);
    ``gaps`` the same for the gap after each phase but the last (sequential
    only).
    """

    phase_sizes: tuple[int, ...]
    arrangement: str = "sequential"
    range_lo: float = -1500.0
    range_hi: float = -500.0
    step: float = 1.0
    sigma: float = 25.0
    outlier_prior: float = 0.0
    termini: tuple[Terminus, ...] = ()
    durations: tuple = ()
    gaps: tuple = ()

    def interval_priors(self) -> list[IntervalPriorInput]:
        """The duration and gap priors as the compiler takes them."""
        out = []
        for kind, priors in (("duration", self.durations), ("gap", self.gaps)):
            for key, prior in zip(self.phase_keys(), priors):
                if prior is not None:
                    name, a, b = prior
                    out.append(IntervalPriorInput(key, kind, name, dict(zip(DISTRIBUTIONS[name], (a, b)))))
        return out

    def interval_lengths(self, b: np.ndarray) -> list[tuple[tuple, float]]:
        """(prior, length) of every duration and gap prior at boundaries ``b`` (in :meth:`boundary_keys` order)."""
        out = []
        for j, prior in enumerate(self.durations):
            if prior is not None:
                a, z = (b[j], b[j + 1]) if self.arrangement == "contiguous" else (b[2 * j], b[2 * j + 1])
                out.append((prior, float(z - a)))
        for j, prior in enumerate(self.gaps):
            if prior is not None:
                out.append((prior, float(b[2 * j + 2] - b[2 * j + 1])))
        return out

    @property
    def width(self) -> float:
        return self.range_hi - self.range_lo

    def grid(self) -> CalendarGrid:
        # cells exactly cover [L, U]: the first cell runs from L
        n = int(round(self.width / self.step))
        return CalendarGrid(self.range_lo + self.step / 2, self.step, n)

    def phase_keys(self) -> list[str]:
        return [f"P{j + 1}" for j in range(len(self.phase_sizes))]

    def member_key(self, j: int, i: int) -> str:
        return f"P{j + 1}-{i + 1}"

    def boundary_keys(self) -> list[str]:
        """The model's boundary keys in time order (for overlapping phases: beginning then close per phase)."""
        keys = self.phase_keys()
        if self.arrangement == "contiguous":
            inner = [changeover_key(a, b) for a, b in zip(keys, keys[1:])]
            return [beginning_key(keys[0]), *inner, close_key(keys[-1])]
        return [k for p in keys for k in (beginning_key(p), close_key(p))]


@dataclass(frozen=True, eq=False)
class CalibrationResult:
    """Ranks of the true values and their uniformity test, per parameter.

    ``ranks[r, i]`` is the rank of the truth of ``names[i]`` in replicate
    ``r`` among ``n_draws`` posterior draws (0..n_draws); ``p_values`` are
    chi-square tests over ``bins`` equal bins.
    """

    names: tuple[str, ...]
    ranks: np.ndarray
    n_draws: int
    bins: int
    p_values: dict = field(default_factory=dict)
    seconds: float = 0.0

    @property
    def replicates(self) -> int:
        return int(self.ranks.shape[0])

    def smallest_p(self) -> float:
        return min(self.p_values.values())

    def as_dict(self) -> dict:
        return {"replicates": self.replicates, "n_draws": self.n_draws, "bins": self.bins,
                "seconds": round(self.seconds, 2),
                "parameters": [{"name": k, "p_value": round(float(p), 4)} for k, p in self.p_values.items()]}


# ---------------------------------------------------------------------------
# the prior
# ---------------------------------------------------------------------------
def _chain_boundaries(k: int, lo: float, width: float, rng: np.random.Generator) -> np.ndarray:
    s = rng.uniform(0.0, width)
    first = lo + rng.uniform(0.0, width - s)
    return np.concatenate(([first], np.sort(first + rng.uniform(0.0, s, k - 2)), [first + s]))


def _overlapping_boundaries(m: int, lo: float, width: float, rng: np.random.Generator) -> np.ndarray:
    spans = rng.uniform(0.0, width, m)
    while True:
        starts = rng.uniform(0.0, 1.0, m) * (width - spans)
        if np.all(np.diff(starts) >= 0):
            break
    out = np.empty(2 * m)
    out[0::2] = lo + starts
    out[1::2] = lo + starts + spans
    return out


def _termini_hold(design: SiteDesign, truth: dict) -> bool:
    for t in design.termini:
        value = truth[design.member_key(t.phase, t.member)]
        if (t.kind == "tpq" and value < t.year) or (t.kind == "taq" and value > t.year):
            return False
    return True


def _intervals_accept(design: SiteDesign, b: np.ndarray, rng: np.random.Generator) -> bool:
    """Keep boundaries ``b`` with probability ``prod f(d) / prod max f`` (rejection from the span-uniform draws)."""
    log_w = 0.0
    for (name, p1, p2), d in design.interval_lengths(b):
        code = distribution_code(name)
        log_w += interval_log_density(d, code, float(p1), float(p2)) - log_density_ceiling(code, p1, p2, design.width)
    return bool(np.log(rng.uniform()) < log_w)


def draw_from_prior(design: SiteDesign, rng: np.random.Generator) -> dict[str, float]:
    """One draw of every boundary and member from the model's prior (see the module notes)."""
    m = len(design.phase_sizes)
    keys = design.boundary_keys()
    for _ in range(1_000_000):
        if design.arrangement == "overlapping":
            b = _overlapping_boundaries(m, design.range_lo, design.width, rng)
        else:
            b = _chain_boundaries(len(keys), design.range_lo, design.width, rng)
        if (design.durations or design.gaps) and not _intervals_accept(design, b, rng):
            continue
        truth = dict(zip(keys, b.tolist()))
        for j, n in enumerate(design.phase_sizes):
            if design.arrangement == "contiguous":
                a, z = b[j], b[j + 1]
            else:
                a, z = b[2 * j], b[2 * j + 1]
            for i, t in enumerate(rng.uniform(a, z, n)):
                truth[f"ctx:{design.member_key(j, i)}"] = float(t)
        if _termini_hold(design, {k[4:]: v for k, v in truth.items() if k.startswith("ctx:")}):
            return truth
    raise RuntimeError("the termini or the interval priors leave almost no prior mass; choose others")


# ---------------------------------------------------------------------------
# data and model
# ---------------------------------------------------------------------------
def simulate_ages(design: SiteDesign, truth: dict, curve: CurveOnGrid,
                  rng: np.random.Generator) -> list[tuple[str, float, bool]]:
    """(context, radiocarbon age, outlier?) of one determination per member."""
    out = []
    for j, n in enumerate(design.phase_sizes):
        for i in range(n):
            ctx = design.member_key(j, i)
            k = min(max(int((truth[f"ctx:{ctx}"] - design.range_lo) // design.step), 0), curve.grid.n - 1)
            outlier = bool(rng.uniform() < design.outlier_prior)
            s = design.sigma * (OUTLIER_SIGMA_FACTOR if outlier else 1.0)
            out.append((ctx, float(rng.normal(curve.mu[k], math.sqrt(s * s + curve.variance[k]))), outlier))
    return out


def design_model(design: SiteDesign, ages: list[tuple[str, float, bool]], curve: CurveOnGrid) -> Model:
    """The model the service would fit to ``ages`` under ``design``."""
    grid = curve.grid
    keys = design.phase_keys()
    phases = [PhaseInput(p, tuple(design.member_key(j, i) for i in range(n)),
                         design.arrangement if j + 1 < len(keys) else None)
              for j, (p, n) in enumerate(zip(keys, design.phase_sizes))]
    evidence = []
    for ctx, y, _ in ages:
        ll = log_likelihood(y, design.sigma, curve)
        if design.outlier_prior > 0:
            evidence.append(EvidenceInput(f"rc:{ctx}", ctx, ll, outlier_prior=design.outlier_prior,
                                          outlier_loglik=log_likelihood(y, design.sigma * OUTLIER_SIGMA_FACTOR, curve)))
        else:
            evidence.append(EvidenceInput(f"rc:{ctx}", ctx, ll))
    for n, t in enumerate(design.termini):
        fn = terminus_post_quem if t.kind == "tpq" else terminus_ante_quem
        evidence.append(EvidenceInput(f"terminus:{n}", design.member_key(t.phase, t.member),
                                      fn(grid, t.year).log_values, kind=t.kind, bound=t.year))
    order = ()
    if design.arrangement == "overlapping":
        order = tuple((beginning_key(a), beginning_key(b), False) for a, b in zip(keys, keys[1:]))
    return compile_model(grid, phases=phases, order=[], evidence=evidence, range_lo=design.range_lo,
                         range_hi=design.range_hi, boundary_order=order,
                         interval_priors=design.interval_priors())


# ---------------------------------------------------------------------------
# ranks and their test
# ---------------------------------------------------------------------------
def rank_of_truth(draws: np.ndarray, truth: np.ndarray) -> np.ndarray:
    """Per column, the number of draws below the true value (0..n_draws)."""
    return np.sum(draws < truth[None, :], axis=0)


def rank_histogram(ranks: np.ndarray, n_draws: int, bins: int) -> np.ndarray:
    """Counts of ranks in ``bins`` equal bins of ``0..n_draws`` (``n_draws + 1`` divisible by ``bins``)."""
    if (n_draws + 1) % bins:
        raise ValueError("n_draws + 1 must be a multiple of bins so each bin is equally likely")
    return np.bincount(np.asarray(ranks) * bins // (n_draws + 1), minlength=bins)


def uniformity_p_value(ranks: np.ndarray, n_draws: int, bins: int) -> float:
    """Chi-square test (Pearson 1900) that binned ranks are uniform (Talts et al. 2018, §4)."""
    return float(stats.chisquare(rank_histogram(ranks, n_draws, bins)).pvalue)


def calibration_check(design: SiteDesign, *, replicates: int, curve: Curve, entropy: int = 2018,
                      n_draws: int = 99, thin: int = 10, warmup: int = 500, bins: int = 5,
                      parameters: tuple[str, ...] | None = None) -> CalibrationResult:
    """Run simulation-based calibration of ``design``.

    Parameters
    ----------
    design : SiteDesign
    replicates : int
        Simulated data sets (one fit each).
    curve : Curve
        The calibration curve the data are drawn through and fitted with.
    entropy : int
        Seeds ``numpy.random.SeedSequence``: the whole check is reproducible.
    n_draws, thin, warmup : int
        Each fit is one chain keeping ``n_draws`` draws, every ``thin``-th
        sweep after ``warmup`` sweeps; thinning keeps the draws nearly
        independent, as the method needs (Talts et al. 2018, §5.1).
    bins : int
        Bins of the chi-square test; ``n_draws + 1`` must be a multiple.
    parameters : tuple of str, optional
        Event keys to rank; default every boundary and member.

    Returns
    -------
    CalibrationResult
    """
    import time

    t0 = time.perf_counter()
    on_grid = curve_on_grid(curve, design.grid())
    root = np.random.SeedSequence(entropy)
    names = None
    rows = []
    for child in root.spawn(replicates):
        data_seed, chain_seed = child.spawn(2)
        rng = np.random.default_rng(data_seed)
        truth = draw_from_prior(design, rng)
        model = design_model(design, simulate_ages(design, truth, on_grid, rng), on_grid)
        if names is None:
            names = parameters or tuple(k for k in model.event_keys if k in truth)
        res = run_chain(flatten(model), chain_seed, iterations=n_draws * thin, warmup=warmup, thin=thin)
        cols = [model.event_keys.index(k) for k in names]
        rows.append(rank_of_truth(res.draws[:, cols], np.array([truth[k] for k in names])))
    ranks = np.array(rows)
    p = {k: uniformity_p_value(ranks[:, i], n_draws, bins) for i, k in enumerate(names)}
    return CalibrationResult(tuple(names), ranks, n_draws, bins, p, time.perf_counter() - t0)

