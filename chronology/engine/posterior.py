"""Posterior summaries of a sampled chronological model.

Per event: its marginal density on the grid (a histogram of the draws over
the grid's cells, smoothed by a Gaussian kernel of Silverman's 1986 bandwidth), the 68.3% and 95.4% highest-density ranges (Hyndman 1996)
and the median, in astronomical years, cal BC/AD and cal BP.  Per question:
durations of phases, signed gaps between events and precedence
probabilities with their Monte Carlo standard errors.  Per determination
under the outlier model: the chance of being an outlier, estimated, beside
the chance assumed (Christen 1994).

Every summary carries the methods used, the curve name(s) given by the
caller, the prior, the run id and :data:`CAUTION`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

from chronology.engine.calendar_scales import format_range, format_year, to_cal_bp
from chronology.engine.diagnostics import ConvergenceReport, mcse_probability
from chronology.engine.hpd import HPDRange, hpd_regions
from chronology.engine.interval_priors import describe
from chronology.engine.model import Model
from chronology.engine.sampler import SAMPLER_METHOD

__all__ = [
    "CAUTION",
    "HPD_MASSES",
    "EventSummary",
    "QuestionSummary",
    "OutlierSummary",
    "PosteriorSummary",
    "question_draws",
    "summarise",
]

CAUTION = (
    "These modelled dates depend on the model's assumptions (the stratigraphic order, the phasing "
    "and its arrangement, the boundary prior, the overall range, outlier priors and sample-event "
    "links) and on the calibration curve used. They need review by a qualified specialist before "
    "they are published or relied on."
)
HPD_MASSES = (0.683, 0.954)
_PRIOR_TEXT = {
    "span-uniform": "uniform-span boundary prior (Nicholls & Jones 2001) within the overall range",
    "uniform": "uniform order prior (Buck, Litton & Smith 1992) within the overall range",
}


def _prior_text(model: Model) -> str:
    """The boundary prior in words, with any duration and gap priors that multiply it."""
    text = _PRIOR_TEXT[model.prior]
    if not model.interval_priors:
        return text
    parts = []
    for p in model.interval_priors:
        where = f"duration of {model.phase(p.phase).label}" if p.kind == "duration" else \
            f"gap after {model.phase(p.phase).label}"
        parts.append(f"{where} {describe(p.distribution, *p.parameters)}")
    return f"{text}, times the priors on the {'; '.join(parts)}"


@dataclass(frozen=True, eq=False)
class EventSummary:
    """Marginal posterior of one event.

    ``density`` is per grid cell (sums to 1; a kernel-smoothed histogram); ``likelihood`` is the
    unmodelled (normalised) product of the event's likelihoods on the grid, or
    None for undated events and boundaries.  ``hpd`` maps each mass to its
    ranges in astronomical years; ``hpd_text``/``hpd_text_bp`` give them as
    cal BC/AD and cal BP text.
    """

    key: str
    label: str
    kind: str
    phase: str | None
    estimated_from_order_only: bool
    density: np.ndarray
    likelihood: np.ndarray | None
    mean: float
    median: float
    median_cal_bp: float
    median_text: str
    hpd: dict
    hpd_text: dict
    hpd_text_bp: dict
    mcse_mean: float | None = None


@dataclass(frozen=True)
class QuestionSummary:
    """A duration, gap (years, signed ``b - a``) or precedence probability ``P(a before b)``."""

    key: str
    kind: str
    a: str
    b: str | None
    mean: float
    mcse: float
    median: float | None = None
    hpd: dict = field(default_factory=dict)


@dataclass(frozen=True)
class OutlierSummary:
    """The chance that one determination is an outlier: assumed (``prior``) and estimated (``posterior``)."""

    evidence_key: str
    event_key: str
    prior: float
    posterior: float
    mcse: float


@dataclass(frozen=True, eq=False)
class PosteriorSummary:
    """Everything reported for one run."""

    run_id: str | None
    curves: tuple[str, ...]
    prior: str
    prior_text: str
    methods: tuple[str, ...]
    caution: str
    events: tuple[EventSummary, ...]
    questions: tuple[QuestionSummary, ...]
    outliers: tuple[OutlierSummary, ...]
    n_draws: int
    converged: bool | None = None


def question_draws(model: Model, dates: np.ndarray) -> np.ndarray:
    """Per-draw values of every question: shape ``dates.shape[:-1] + (n_questions,)``.

    Durations are close minus beginning of the phase, gaps ``theta_b - theta_a``
    and precedence questions the indicator ``theta_a < theta_b``.
    """
    index = {k: i for i, k in enumerate(model.event_keys)}
    cols = []
    for q in model.questions:
        if q.kind == "duration":
            p = model.phase(q.a)
            cols.append(dates[..., index[p.end]] - dates[..., index[p.start]])
        elif q.kind == "gap":
            cols.append(dates[..., index[q.b]] - dates[..., index[q.a]])
        else:
            cols.append((dates[..., index[q.a]] < dates[..., index[q.b]]).astype(float))
    if not cols:
        return np.zeros(dates.shape[:-1] + (0,))
    return np.stack(cols, axis=-1)


def _smooth(hist: np.ndarray, values: np.ndarray, step: float) -> np.ndarray:
    """Gaussian-kernel smoothing of a histogram, bandwidth by Silverman's (1986) rule.

    Without it the Monte Carlo noise of a histogram splits HPD ranges into
    spurious fragments at their edges.
    """
    n = values.size
    sd = values.std()
    iqr = np.subtract(*np.percentile(values, [75, 25]))
    spread = min(sd, iqr / 1.34) if iqr > 0 else sd
    h = 0.9 * spread * n ** (-0.2) / step
    if not h > 0.5:
        return hist
    half = int(np.ceil(4 * h))
    k = np.exp(-0.5 * (np.arange(-half, half + 1) / h) ** 2)
    out = np.convolve(hist, k / k.sum(), mode="same")
    return out / out.sum()


def _within_draws(ranges: list[HPDRange], values: np.ndarray) -> list[HPDRange]:
    """Clip smoothed-density ranges to the extent of the draws.

    Smoothing spreads mass past a hard bound of the model (a terminus, an
    outlier-free order constraint); every draw respects those bounds, so no
    reported range may run past the earliest or latest draw.
    """
    lo, hi = float(values.min()), float(values.max())
    out = []
    for r in ranges:
        a, b = max(r.start, lo), min(r.end, hi)
        if a <= b:
            out.append(HPDRange(a, b, r.probability))
    return out or [HPDRange(lo, hi, 1.0)]


def _hpd_from_samples(values: np.ndarray, step: float) -> dict:
    lo, hi = float(values.min()), float(values.max())
    if hi - lo < step:
        return {m: [HPDRange(lo, hi, 1.0)] for m in HPD_MASSES}
    first = np.floor(lo / step) * step
    edges = np.arange(first, hi + step, step)
    if edges[-1] <= hi:
        edges = np.append(edges, edges[-1] + step)
    counts, _ = np.histogram(values, bins=edges)
    centres = 0.5 * (edges[1:] + edges[:-1])
    if centres.size < 2:
        return {m: [HPDRange(lo, hi, 1.0)] for m in HPD_MASSES}
    dens = _smooth(counts / counts.sum(), values, step)
    return {m: _within_draws(hpd_regions(centres, dens, m), values) for m in HPD_MASSES}


def summarise(
    model: Model,
    dates: np.ndarray,
    outliers: np.ndarray | None = None,
    *,
    evidence_keys: Sequence[str] = (),
    curves: Sequence[str] = (),
    run_id: str | None = None,
    diagnostics: ConvergenceReport | None = None,
    extra_methods: Sequence[str] = (),
) -> PosteriorSummary:
    """Summarise posterior draws of ``model``.

    Parameters
    ----------
    model : Model
    dates : numpy.ndarray
        Draws, shape (chain, draw, event) or (draw, event), events in model order.
    outliers : numpy.ndarray, optional
        Outlier indicators, shape (chain, draw, determination) or (draw, determination).
    evidence_keys : sequence of str
        Keys of the determinations in ``outliers``.
    curves : sequence of str
        Names (and versions) of the calibration curves the likelihoods used.
    run_id : str, optional
    diagnostics : ConvergenceReport, optional
        Supplies ESS-based MCSEs; without it MCSEs assume independent draws.

    Returns
    -------
    PosteriorSummary
    """
    dates = np.asarray(dates, dtype=float)
    if dates.ndim == 2:
        dates = dates[None]
    if dates.shape[-1] != len(model.events):
        raise ValueError("dates must have one column per model event")
    flat = dates.reshape(-1, dates.shape[-1])
    n = flat.shape[0]
    g = model.grid
    edges = g.start - g.step / 2 + g.step * np.arange(g.n + 1)
    years = g.years
    diag = {q.name: q for q in diagnostics.quantities} if diagnostics is not None else {}

    def ess(name, default):
        q = diag.get(name)
        return q.ess_bulk if q is not None and np.isfinite(q.ess_bulk) else default

    events = []
    for i, e in enumerate(model.events):
        v = flat[:, i]
        counts, _ = np.histogram(np.clip(v, edges[0], edges[-1]), bins=edges)
        density = _smooth(counts / counts.sum(), v, g.step)
        lik = None
        if e.evidence:
            ll = np.sum([t.loglik for t in e.evidence], axis=0)
            if np.isfinite(ll.max()):
                lik = np.exp(ll - ll.max())
                lik /= lik.sum()
        hpd = {m: _within_draws(hpd_regions(years, density, m), v) for m in HPD_MASSES}
        med = float(np.median(v))
        sd = float(v.std(ddof=1)) if n > 1 else 0.0
        events.append(EventSummary(
            key=e.key, label=e.label, kind=e.kind, phase=e.phase,
            estimated_from_order_only=(e.kind == "undated"),
            density=density, likelihood=lik, mean=float(v.mean()), median=med,
            median_cal_bp=float(to_cal_bp(med)), median_text=format_year(med),
            hpd=hpd,
            hpd_text={m: [format_range(r.start, r.end) for r in rs] for m, rs in hpd.items()},
            hpd_text_bp={m: [format_range(r.start, r.end, "bp") for r in rs] for m, rs in hpd.items()},
            mcse_mean=sd / np.sqrt(ess(e.key, n)),
        ))

    qd = question_draws(model, flat)
    questions = []
    for j, q in enumerate(model.questions):
        v = qd[:, j]
        m = float(v.mean())
        if q.kind == "precedence":
            questions.append(QuestionSummary(q.key, q.kind, q.a, q.b, m, mcse_probability(m, ess(q.key, n))))
        else:
            sd = float(v.std(ddof=1)) if n > 1 else 0.0
            questions.append(QuestionSummary(q.key, q.kind, q.a, q.b, m, sd / np.sqrt(ess(q.key, n)),
                                             float(np.median(v)), _hpd_from_samples(v, g.step)))

    outl = []
    if outliers is not None and len(evidence_keys):
        o = np.asarray(outliers).reshape(-1, len(evidence_keys))
        owner = {t.key: (ek, t) for ek, t in model.evidence}
        for j, k in enumerate(evidence_keys):
            ek, t = owner[k]
            p = float(o[:, j].mean())
            outl.append(OutlierSummary(k, ek, float(t.outlier_prior), p, mcse_probability(p, ess(k, n))))

    methods = (SAMPLER_METHOD, "highest-density regions (Hyndman 1996)")
    if diagnostics is not None:
        methods += (diagnostics.method,)
    return PosteriorSummary(
        run_id=run_id, curves=tuple(curves), prior=model.prior, prior_text=_prior_text(model),
        methods=methods + tuple(extra_methods), caution=CAUTION, events=tuple(events),
        questions=tuple(questions), outliers=tuple(outl), n_draws=n,
        converged=None if diagnostics is None else diagnostics.converged,
    )
