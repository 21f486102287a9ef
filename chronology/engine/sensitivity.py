"""How each phase boundary moves between a base model and variations of it.

A sensitivity run samples one model under several variations (another
curve, reservoir offset, outlier prior, overall range or arrangement) and
reports, for every boundary, how its posterior median and its highest-density
ranges move from the base.  Boundaries are matched by phase and side (the
beginning and the close of each phase), not by key, since a contiguous
arrangement shares one boundary between two phases where a sequential one
has two.  Moves are in calendar years, positive toward the present.

The figures are differences of Monte Carlo estimates; a move smaller than
the quoted standard errors of the medians is not a move.  Checking how a
model's results depend on its assumptions is common practice in Bayesian
modelling (a sensitivity analysis).
"""

from __future__ import annotations

from chronology.engine.model import Model
from chronology.engine.posterior import PosteriorSummary

__all__ = ["boundary_sides", "boundary_table", "movements"]


def boundary_sides(model: Model) -> dict[tuple[str, str], str]:
    """(phase key, "beginning" or "close") -> boundary event key."""
    out = {}
    for p in model.phases:
        out[(p.key, "beginning")] = p.start
        out[(p.key, "close")] = p.end
    return out


def _extent(ranges) -> list[float] | None:
    if not ranges:
        return None
    return [float(min(r.start for r in ranges)), float(max(r.end for r in ranges))]


def boundary_table(model: Model, summary: PosteriorSummary) -> dict[str, dict]:
    """``"phase:side"`` -> median, its standard error and the 68.3 % and 95.4 % ranges (with their extents)."""
    by_key = {e.key: e for e in summary.events}
    out = {}
    for (phase, side), key in boundary_sides(model).items():
        e = by_key[key]
        out[f"{phase}:{side}"] = {
            "phase": phase, "side": side, "event": key, "label": e.label, "median": float(e.median),
            "mcse": None if e.mcse_mean is None else float(e.mcse_mean),
            "ranges": {str(m): [[float(r.start), float(r.end)] for r in rs] for m, rs in e.hpd.items()},
            "extent": {str(m): _extent(rs) for m, rs in e.hpd.items()},
        }
    return out


def movements(base: dict[str, dict], other: dict[str, dict]) -> list[dict]:
    """Per boundary of ``base`` also in ``other``: the move of the median and of each range's ends.

    Parameters
    ----------
    base, other : dict
        From :func:`boundary_table`.

    Returns
    -------
    list of dict
        ``boundary``, ``median`` (base, variation, shift) and, per mass,
        the shift of the start and of the end of the range's extent and the
        change of its width; boundaries missing from ``other`` are listed
        with ``missing: True``.
    """
    rows = []
    for name, b in base.items():
        o = other.get(name)
        if o is None:
            rows.append({"boundary": name, "missing": True})
            continue
        row = {"boundary": name, "label": b["label"], "missing": False,
               "median": {"base": b["median"], "variation": o["median"], "shift": o["median"] - b["median"]},
               "ranges": {}}
        if b["mcse"] is not None and o["mcse"] is not None:
            row["median"]["shift_mcse"] = float((b["mcse"] ** 2 + o["mcse"] ** 2) ** 0.5)
        for mass, ext in b["extent"].items():
            oe = o["extent"].get(mass)
            if ext is None or oe is None:
                continue
            row["ranges"][mass] = {"base": ext, "variation": oe, "start_shift": oe[0] - ext[0],
                                   "end_shift": oe[1] - ext[1], "width_change": (oe[1] - oe[0]) - (ext[1] - ext[0])}
        rows.append(row)
    return rows
