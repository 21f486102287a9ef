"""The latest weighing by the evidence that included a run's version, as the run report shows it.

Marginal likelihoods by stepping-stone sampling (Xie, Lewis, Fan, Kuo & Chen
2011) are computed by ``chronology.weighing``; the report only reads the
finished result, with its method and the caution that Bayes factors depend
on the priors.
"""

from __future__ import annotations

__all__ = ["weighing_for_report"]


def weighing_for_report(run) -> dict | None:
    """The newest finished weighing of ``run``'s project with ``run``'s version among its candidates."""
    from chronology.models import Job, JobState
    from chronology.weighing.evidence_jobs import top_readings
    from chronology.weighing.evidence_work import WEIGHING_KIND

    finished = Job.objects.filter(project=run.project, kind=WEIGHING_KIND, state=JobState.DONE)
    for job in finished.order_by("-finished_at", "-created_at"):
        names = {c.get("name") for c in job.params.get("candidates") or [] if c.get("version") == run.version_id}
        if not names:
            continue
        result = job.result or {}
        shown, more = top_readings(result)
        rows = [_row(c, c.get("name") in names or _of_family(c, run)) for c in shown]
        relationships = [{"relationship": f"#{r['relationship']} {r.get('text', '')}".strip(),
                          "probability": f"{r['probability_accepted']:.3f} ± {r['probability_accepted_mcse']:.3f}"}
                         for r in result.get("relationships") or []]
        return {"rows": rows, "more": more, "relationships": relationships, "method": result.get("method", ""),
                "caution": result.get("caution", ""), "finished_at": job.finished_at,
                "failed": [f["name"] for f in result.get("failed") or []]}
    return None


def _of_family(c: dict, run) -> bool:
    # a joint weighing's readings are named by their decisions, and the run's version is one of its families
    return c.get("version") == run.version_id


def _row(c: dict, this_run: bool) -> dict:
    bf, log_bf = c.get("bayes_factor_of_best"), c.get("log_bayes_factor_of_best", 0.0)
    shown = f"{bf:.3g}" if bf is not None else "over e^700"
    return {
        "name": c["name"], "this_run": this_run,
        "log_ml": f"{c['log_marginal_likelihood']:.2f} ± {c['mcse']:.2f}",
        "probability": f"{c['posterior_probability']:.3f} ± {c['posterior_probability_mcse']:.3f}",
        "bayes_factor": "best supported" if log_bf == 0.0 else
        f"{shown} (log {log_bf:.2f} ± {c['log_bayes_factor_of_best_mcse']:.2f})",
        "strength": c.get("strength") or "",
    }
