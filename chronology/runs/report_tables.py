"""The tables of the run report, as plain rows built from the results document.

Nothing here reads the database: :mod:`chronology.runs.report` gathers the
record's facts (determinations, the revision's digest, the version's
reasons, the order diagram) and this module turns them, with the run's
``results.json``, into the rows the template prints.  Everything is named as
its reader knows it: contexts by label, determinations by lab code, phase
boundaries as "Beginning of X", never by internal keys.

Ranges are quoted rounded outwards (Millard 2014): calibrated ranges of a
determination to 5 years when its error is under 25 years, else to 10;
modelled ranges to 5 years (common practice for modelled values, where no
single error applies).  The CSV beside the report keeps the exact numbers.

References
----------
Millard, A.R. 2014. Conventions for reporting radiocarbon determinations.
    Radiocarbon 56(2): 555-559.
"""

from __future__ import annotations

from chronology.engine.calendar_scales import format_range, round_range_outward
from chronology.engine.labels import format_probability, label_list
from chronology.engine.reporting import reported_range, rounding_resolution

__all__ = ["MODELLED_RESOLUTION", "modelled_text", "event_rows", "question_rows", "outlier_rows",
           "diagnostic_summary", "structure_lines", "quantity_names", "determination_row", "combination_notes",
           "outlier_prior_lines"]

#: Years to which modelled ranges are rounded outwards in the report (common practice).
MODELLED_RESOLUTION = 5
LEVELS = ("68.3", "95.4")

_ARRANGEMENT_WORDS = {"sequential": "followed, perhaps after a gap, by", "contiguous": "followed at once by",
                      "overlapping": "overlapping with"}


def modelled_text(r: dict) -> str:
    """A modelled range as the report prints it: rounded outwards to :data:`MODELLED_RESOLUTION` years."""
    lo, hi = round_range_outward(float(r["from"]), float(r["to"]), MODELLED_RESOLUTION)
    return format_range(lo, hi)


def _pieces(ranges) -> str:
    return "; ".join(f"{modelled_text(r)} ({100 * r['probability']:.1f}%)" for r in ranges or ()) or "-"


def _fmt(x, spec: str) -> str:
    return "-" if x is None else format(x, spec)


def event_rows(results: dict) -> list[dict]:
    """One row per event: label, phase, median, both modelled ranges, unmodelled range, R-hat and ESS."""
    phases = {p["key"]: p["label"] for p in results.get("phases") or []}
    out = []
    for e in results.get("events", []):
        d = e.get("diagnostics") or {}
        unmodelled = (e.get("unmodelled") or {}).get("95.4") or ()
        out.append({
            "label": e["label"] + (" (estimated from the order only)" if e.get("estimated_from_order_only") else ""),
            "phase": phases.get(e.get("phase"), ""),
            "kind": e["kind"],
            "median": e["median_text"],
            "hpd68": _pieces(e["hpd"]["68.3"]),
            "hpd95": _pieces(e["hpd"]["95.4"]),
            "unmodelled95": "; ".join(modelled_text(r) for r in unmodelled) or "-",
            "r_hat": _fmt(d.get("r_hat"), ".3f"),
            "ess": _fmt(d.get("ess_bulk"), ".0f"),
        })
    return out


def _is_bound(text: str | None) -> bool:
    return bool(text) and text[0] in "<>"


def question_rows(results: dict) -> list[dict]:
    """Each question in plain words with its answer and Monte Carlo error.

    A probability the draws cannot tell from 0 or 1 is printed as a bound
    ("> 0.999") and its error as not meaningful, never "1.000 ± 0".
    """
    out = []
    for q in results.get("questions", []):
        mcse = _fmt(q.get("mcse"), ".3g")
        if q["kind"] == "precedence":
            text = q.get("probability_text") or format_probability(q.get("probability"))
            value = f"probability {text}"
            if _is_bound(text):
                mcse = "not meaningful: every draw, or all but a few, fell one way"
        else:
            spans = "; ".join(f"{r['from']:.0f} to {r['to']:.0f}" for r in (q.get("hpd") or {}).get("95.4", []))
            median = "-" if q.get("median") is None else f"{q['median']:.0f}"
            value = f"median {median} years; 95.4% range {spans or '-'} years"
        out.append({"label": q["label"], "value": value, "mcse": mcse})
    return out


def outlier_rows(results: dict) -> list[dict]:
    """Each determination's chance of being an outlier, assumed and estimated, named by lab code."""
    return [{"name": o.get("name", ""), "context": o.get("event_label", ""),
             "assumed": f"{o['chance_assumed']:.2f}",
             "estimated": o.get("chance_estimated_text") or format_probability(o.get("chance_estimated"))}
            for o in results.get("outliers", [])]


def quantity_names(results: dict) -> dict:
    """Internal key of every reported quantity -> how the report names it."""
    names = {e["key"]: e["label"] for e in results.get("events", [])}
    names.update({q["key"]: q["label"] for q in results.get("questions", [])})
    for row in results.get("evidence", []):
        codes = row.get("lab_codes") or []
        names[row["key"]] = label_list(codes, sort=False) if codes else (row.get("label") or row["key"])
    names.update({o["evidence"]: o.get("name") or o["evidence"] for o in results.get("outliers", [])})
    return names


def diagnostic_summary(results: dict, *, limit: int = 20) -> dict:
    """The convergence verdict with its figures and the failing quantities named in words."""
    conv = results.get("convergence") or {}
    names = quantity_names(results)
    failing = [names.get(k, k) for k in conv.get("failing", [])]
    thresholds = conv.get("thresholds") or {}
    return {
        "converged": bool(results.get("converged")),
        "warning": conv.get("warning") or "",
        "max_r_hat": _fmt(conv.get("max_r_hat"), ".4f"),
        "min_ess_bulk": _fmt(conv.get("min_ess_bulk"), ".0f"),
        "r_hat_max": thresholds.get("r_hat_max", ""),
        "ess_bulk_min": _fmt(thresholds.get("ess_bulk_min"), ".0f"),
        "method": conv.get("method", ""),
        "failing": label_list(failing, limit=limit, sort=False,
                              rest=" (every quantity's R-hat and ESS are in the modelled ranges table "
                                   "and the results JSON)"),
        "draws": results.get("n_draws"),
    }


def structure_lines(results: dict, *, limit: int = 12) -> list[str]:
    """The model's structure in words: each phase, its members, and how it meets the next."""
    labels = {e["key"]: e["label"] for e in results.get("events", [])}
    phases = results.get("phases") or []
    out = []
    for j, p in enumerate(phases):
        members = [labels.get(k, k) for k in p["members"]]
        text = f"Phase {p['label']}: {len(members)} dated or estimated event{'s' if len(members) != 1 else ''}"
        if members:
            text += f" ({label_list(members, limit=limit, rest=', listed in full under Modelled ranges')})"
        text += f", between its beginning and its close"
        nxt = phases[j + 1]["label"] if j + 1 < len(phases) else None
        if nxt and p.get("arrangement_next") in _ARRANGEMENT_WORDS:
            text += f"; {_ARRANGEMENT_WORDS[p['arrangement_next']]} {nxt}"
        out.append(text + ".")
    placed = {k for p in phases for k in p["members"]} | {p[b] for p in phases for b in ("beginning", "close")}
    rest = [e["label"] for e in results.get("events", []) if e["key"] not in placed]
    if rest:
        out.append(f"In no phase, ordered by the stratigraphic record alone: "
                   f"{label_list(rest, limit=limit, rest=', listed in full under Modelled ranges')}.")
    return out


def determination_row(fact: dict, calibrated: dict | None) -> dict:
    """One determination as the reporting conventions ask (Millard 2014).

    ``fact`` holds the record's facts (lab code, context, sample, material,
    short-lived, δ13C, age, error, curve, use, outlier chance); ``calibrated``
    maps "68.3"/"95.4" to (start, end) pairs in astronomical years, or is
    None when the determination could not be calibrated.
    """
    sigma = float(fact["sigma"])
    ranges = {level: "; ".join(reported_range(a, b, sigma) for a, b in (calibrated or {}).get(level, ()))
              or "-" for level in LEVELS}
    d13c = fact.get("delta13c")
    return {
        **fact,
        "age": f"{float(fact['cra']):.0f} ± {sigma:.0f}",
        "delta13c_text": "not measured" if d13c is None else f"{float(d13c):.1f}",
        "short_lived_text": {True: "yes", False: "no"}.get(fact.get("short_lived"), "not recorded"),
        "cal68": ranges["68.3"], "cal95": ranges["95.4"],
        "resolution": rounding_resolution(sigma),
    }


def outlier_prior_lines(determinations, *, limit: int = 12) -> list[str]:
    """The outlier chances assumed in the version, one line per value, naming the determinations by lab code."""
    by_value: dict = {}
    for d in determinations:
        if d.get("outlier_prior"):
            by_value.setdefault(float(d["outlier_prior"]), []).append(d["lab_code"])
    return [f"Chance of being an outlier, assumed {value:g}: "
            f"{label_list(codes, limit=limit, sort=False, rest=', all listed under Outliers')}"
            for value, codes in sorted(by_value.items())]


def combination_notes(results: dict) -> list[str]:
    """The test of each set of determinations combined before modelling (its verdict in words)."""
    return [row["combination"]["verdict"] for row in results.get("evidence", [])
            if isinstance(row.get("combination"), dict) and row["combination"].get("verdict")]
