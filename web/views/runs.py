"""Model runs: submit from a committed version, watch each chain, read the results.

Submitting calls ``chronology.runs.service.submit_run`` (the API's path);
progress is the API's own poll view of a run (``run_data``); downloads are
the API's run files, which check the same project access.
"""

from __future__ import annotations

import json

from django.contrib import messages
from django.http import Http404, HttpResponse, HttpResponseRedirect
from django.urls import reverse
from django.views.decorators.http import require_POST

from api.serializers.runs import run_data
from chronology.engine.posterior import CAUTION
from chronology.interpretations.models import Status, Version
from chronology.runs.compile import ModelRefused
from chronology.runs.models import Run
from chronology.runs.results import NOT_CONVERGED
from chronology.runs.service import DEFAULTS, submit_run
from chronology.runs.sources import find_version
from chronology.weighing.evidence_jobs import recent_weighings
from projects.models import Role

from ..access import require
from .common import frame, page, project_page, render_page

LEVELS = ("68.3", "95.4")


def _run(project, run_id) -> Run:
    run = Run.objects.filter(project=project, pk=run_id).prefetch_related("chain_rows").first()
    if run is None:
        raise Http404("no such run")
    return run


def _committed(project):
    return (Version.objects.filter(project=project).exclude(status=Status.DRAFT)
            .select_related("interpretation").order_by("-id"))


@project_page
def runs(request, project):
    rows = page(request, Run.objects.filter(project=project).order_by("-created_at"), 25)
    return render_page(request, "web/runs.html", frame(
        request, project, "runs", rows=rows, versions=_committed(project)[:100],
        defaults={**DEFAULTS, "iterations": 2000, "warmup": 500},
        chosen=request.GET.get("version", ""), weighings=recent_weighings(project),
    ))


def _int(request, name: str, default=None):
    value = request.POST.get(name, "").strip()
    if value == "":
        return default
    try:
        return int(value)
    except ValueError:
        raise ModelRefused("invalid-number", f"{name} must be a whole number", status=400, field=name) from None


@project_page
@require_POST
def run_submit(request, project):
    """Submit a run of a committed version (analysts and managers, as in the API)."""
    require(project, Role.ANALYST)
    back = reverse("web:runs", args=[project.organisation.slug, project.code])
    version = find_version(project, request.POST.get("version"))
    if version is None:
        messages.error(request, "Refused: choose a committed interpretation version of this project.")
        return HttpResponseRedirect(back)
    try:
        values = {name: _int(request, name, DEFAULTS[name]) for name in ("chains", "iterations", "warmup", "thin")}
        # An unticked box is absent from the form: no extension rounds.
        values["converge"] = request.POST.get("converge") == "on"
        run = submit_run(project, version, request.user, seed=_int(request, "seed"), **values)
    except ModelRefused as exc:
        messages.error(request, f"Refused ({exc.code}): {exc.message}")
        return HttpResponseRedirect(back)
    return HttpResponseRedirect(reverse("web:run", args=[project.organisation.slug, project.code, run.pk]))


def _ranges(event: dict, level: str, field: str = "text") -> str:
    return "; ".join(r.get(field) or "" for r in (event.get("hpd") or {}).get(level, []))


def _result_rows(summary: dict) -> list[dict]:
    rows = []
    for e in summary.get("events") or []:
        diag = e.get("diagnostics") or {}
        rows.append({"label": e.get("label"), "kind": e.get("kind"), "phase": e.get("phase"),
                     "median": e.get("median_text"), "r68": _ranges(e, LEVELS[0]), "r95": _ranges(e, LEVELS[1]),
                     "r_hat": diag.get("r_hat"), "ess": diag.get("ess_bulk"), "ok": diag.get("ok"),
                     "order_only": e.get("estimated_from_order_only")})
    return rows


def _question_rows(summary: dict) -> list[dict]:
    rows = []
    for q in summary.get("questions") or []:
        ranges = {lvl: "; ".join(f"{r['from']:.0f} to {r['to']:.0f} years" for r in (q.get("hpd") or {}).get(lvl, []))
                  for lvl in LEVELS}
        rows.append({"label": q.get("label"), "kind": q.get("kind"), "probability": q.get("probability"),
                     "median": q.get("median"), "r68": ranges[LEVELS[0]], "r95": ranges[LEVELS[1]],
                     "r_hat": (q.get("diagnostics") or {}).get("r_hat")})
    return rows


@project_page
def run_detail(request, project, run_id):
    run = _run(project, run_id)
    data = run_data(run)
    summary = run.summary or {}
    api_base = f"/api/v1/projects/{project.organisation.slug}:{project.code}/runs/{run.pk}/"
    return render_page(request, "web/run.html", frame(
        request, project, "runs", run=run, data=data, rows=_result_rows(summary), questions=_question_rows(summary),
        outliers=summary.get("outliers") or [], convergence=summary.get("convergence") or {},
        not_converged=NOT_CONVERGED if run.converged is False else "", caution=CAUTION, api_base=api_base,
        poll_url=reverse("web:run-progress", args=[project.organisation.slug, project.code, run.pk]),
    ))


@project_page
def run_progress(request, project, run_id):
    """The API's poll view of the run, for the page's progress script."""
    data = run_data(_run(project, run_id))
    body = {"state": data["state"], "progress": data["progress"], "converged": data["converged"],
            "terminal": data["state"] in ("done", "failed", "cancelled")}
    return HttpResponse(json.dumps(body, default=str), content_type="application/json")


@project_page
def run_plot(request, project, run_id):
    """The run's posterior plot (SVG), served from the run's folder."""
    run = _run(project, run_id)
    path = run.path("plot.svg")
    if run.state != "done" or not path.exists():
        raise Http404("the run has no plot yet")
    return HttpResponse(path.read_bytes(), content_type="image/svg+xml")
