"""Stacked plot of modelled dates: one row per event, in model order.

Each row shows the event's unmodelled likelihood as a light outline behind
its posterior (a filled band), with the 95.4% highest-density ranges as a
bar beneath.  Colours come from the Okabe & Ito (2008) colour-blind safe
palette and differ by event kind; the footer names the curve(s), the prior,
the run and the caution text.  Rendering uses matplotlib's Agg backend and
returns SVG or PNG bytes.
"""

from __future__ import annotations

import io
import textwrap

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from chronology.engine.calendar_scales import format_year  # noqa: E402
from chronology.engine.model import Model  # noqa: E402
from chronology.engine.posterior import PosteriorSummary  # noqa: E402

__all__ = ["posterior_figure", "render_posterior_plot"]

# Okabe & Ito (2008): blue, vermillion, bluish green; grey for the likelihood
_POSTERIOR = {"dated": "#0072B2", "undated": "#009E73", "boundary": "#D55E00"}
_LIKELIHOOD = "#7F7F7F"


def _row_order(model: Model, summary: PosteriorSummary) -> list:
    """Events in the model's order: each phase as start, members, end; offset samples
    beside their context; events outside every phase last."""
    by_key = {e.key: e for e in summary.events}
    offsets: dict = {}
    for e in model.events:
        if e.offset_of:
            offsets.setdefault(e.offset_of, []).append(e.key)
    keys: list = []

    def add(k):
        if k not in keys:
            keys.append(k)
            for o in offsets.get(k, ()):
                add(o)

    for p in model.phases:
        add(p.start)
        for k in p.members:
            add(k)
        add(p.end)
    for e in model.events:
        add(e.key)
    return [by_key[k] for k in keys if k in by_key]


def posterior_figure(model: Model, summary: PosteriorSummary) -> Figure:
    """A matplotlib Figure of the stacked posteriors of ``summary``, earliest phase on top."""
    years = model.grid.years
    rows = _row_order(model, summary)
    n = len(rows)
    top, bottom = 0.25, 1.45
    height = top + 0.42 * n + bottom
    fig = plt.figure(figsize=(8.0, height))
    ax = fig.add_axes([0.24, bottom / height, 0.72, 0.42 * n / height])
    lo, hi = model.range_hi, model.range_lo
    for e in rows:
        for r in e.hpd[0.954]:
            lo, hi = min(lo, r.start), max(hi, r.end)
    pad = max((hi - lo) * 0.08, 5 * model.grid.step)
    lo, hi = max(model.range_lo, lo - pad), min(model.range_hi, hi + pad)
    for i, e in enumerate(rows):
        base = n - 1 - i
        colour = _POSTERIOR.get(e.kind, "#0072B2")
        if e.likelihood is not None and e.likelihood.max() > 0:
            lik = e.likelihood / e.likelihood.max()
            shown = lik > 1e-3  # no line along the baseline where the likelihood is negligible
            ax.plot(years[shown], base + 0.12 + 0.8 * lik[shown], color=_LIKELIHOOD, lw=0.8,
                    ls=(0, (3, 1.5)), zorder=1)
        if e.density.max() > 0:
            d = e.density / e.density.max() * 0.8
            ax.fill_between(years, base + 0.12, base + 0.12 + d, color=colour, alpha=0.55, lw=0, zorder=2)
        for r in e.hpd[0.954]:
            ax.plot([r.start, r.end], [base + 0.05, base + 0.05], color=colour, lw=2.2,
                    solid_capstyle="butt", zorder=3)
        label = e.label or e.key
        if e.estimated_from_order_only:
            label += " (order only)"
        ax.text(lo - (hi - lo) * 0.02, base + 0.4, label, ha="right", va="center", fontsize=8)
    ax.set_xlim(lo, hi)
    ax.set_ylim(-0.1, n)
    ax.set_yticks([])
    for side in ("left", "right", "top"):
        ax.spines[side].set_visible(False)
    ticks = ax.get_xticks()
    ax.set_xticks(ticks)
    ax.set_xticklabels([format_year(t) for t in ticks], fontsize=7, rotation=30, ha="right")
    ax.set_xlim(lo, hi)
    ax.set_xlabel("Modelled date (cal BC/AD)", fontsize=8)
    footer = (
        f"Curve: {', '.join(summary.curves) or 'none given'}.  Prior: {summary.prior_text}.  "
        f"Run: {summary.run_id or 'not stored'}.  Dashed grey: unmodelled likelihood; "
        f"filled: posterior; bar: 95.4% highest-density range.  {summary.caution}"
    )
    fig.text(0.02, 0.02, "\n".join(textwrap.wrap(footer, 150)), fontsize=6, va="bottom", ha="left")
    return fig


def render_posterior_plot(model: Model, summary: PosteriorSummary, fmt: str = "svg", dpi: int = 120) -> bytes:
    """Render :func:`posterior_figure` as ``svg`` or ``png`` bytes."""
    if fmt not in ("svg", "png"):
        raise ValueError("fmt must be 'svg' or 'png'")
    fig = posterior_figure(model, summary)
    buf = io.BytesIO()
    try:
        fig.savefig(buf, format=fmt, dpi=dpi)
    finally:
        plt.close(fig)
    return buf.getvalue()
