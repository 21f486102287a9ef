"""The summary table of a finished run as Markdown, for terminals, reports and the demo."""

from __future__ import annotations

__all__ = ["markdown_summary"]


def _ranges(event: dict, level: str, field: str = "text") -> str:
    return "; ".join(f"{r[field]} ({100 * r['probability']:.1f}%)" for r in event["hpd"][level]) or "-"


def markdown_summary(run, summary: dict) -> str:
    """Per-event medians and HPD ranges, questions with MCSE, outliers beside priors, and the provenance."""
    lines = [
        f"# Model run {run.pk}",
        "",
        f"Interpretation: {run.version_label} (version id {run.version_id}), record revision {run.record_revision}",
        f"Curve(s): {', '.join(summary.get('curve_names') or [c.get('name', '') for c in run.curves]) or 'none'}",
        f"Prior: {summary.get('prior_text') or run.prior}",
        f"Overall range: {run.range.get('lo')} to {run.range.get('hi')} (astronomical years); "
        f"grid step {run.grid.get('step')} years",
        f"Chains {run.chains}, iterations {run.iterations}, warm-up {run.warmup}, thinning {run.thin}, "
        f"seed entropy {run.seed_entropy}",
        f"Model hash: {run.model_hash}",
        "",
    ]
    conv = summary.get("convergence") or {}
    if conv.get("converged"):
        lines.append(f"Convergence: every reported quantity has R-hat <= {conv['thresholds']['r_hat_max']} and "
                     f"bulk ESS >= {conv['thresholds']['ess_bulk_min']:g} (max R-hat {conv.get('max_r_hat') or 0:.4f}, "
                     f"min bulk ESS {conv.get('min_ess_bulk') or 0:.0f}).")
    else:
        lines.append(f"**{conv.get('warning') or 'NOT CONVERGED'}** Failing: {', '.join(conv.get('failing', []))}")
    lines += ["", "## Events", "",
              "| Event | Kind | Median | 68.3% HPD | 95.4% HPD | 95.4% HPD (cal BP) |",
              "|---|---|---|---|---|---|"]
    for e in summary.get("events", []):
        label = e["label"] + (" (estimated from order only)" if e["estimated_from_order_only"] else "")
        lines.append(f"| {label} | {e['kind']} | {e['median_text']} | {_ranges(e, '68.3')} | {_ranges(e, '95.4')} | "
                     f"{_ranges(e, '95.4', 'text_cal_bp')} |")
    if summary.get("questions"):
        lines += ["", "## Questions", "", "| Question | Estimate | MCSE |", "|---|---|---|"]
        for q in summary["questions"]:
            if q["kind"] == "precedence":
                value = f"probability {q.get('probability_text') or q['probability']}"
            else:
                hpd = "; ".join(f"{r['from']:.0f} to {r['to']:.0f}" for r in q["hpd"].get("95.4", []))
                value = f"median {q['median']:.0f} years (95.4%: {hpd})"
            mcse = "-" if q["mcse"] is None else f"{q['mcse']:.3g}"
            lines.append(f"| {q['label']} | {value} | {mcse} |")
    if summary.get("outliers"):
        lines += ["", "## Outliers (Christen 1994)", "",
                  "| Determination | Context | Chance of being an outlier, assumed | "
                  "Chance of being an outlier, estimated | MCSE |", "|---|---|---|---|---|"]
        for o in summary["outliers"]:
            mcse = "-" if o["mcse"] is None else f"{o['mcse']:.3f}"
            lines.append(f"| {o.get('name', '')} | {o.get('event_label', '')} | {o['chance_assumed']:.2f} | "
                         f"{o.get('chance_estimated_text') or o['chance_estimated']} | {mcse} |")
    if run.compile_notes:
        lines += ["", "## Notes", ""] + [f"- {n}" for n in run.compile_notes]
    lines += ["", f"_{summary.get('caution', '')}_", ""]
    return "\n".join(lines)
