"""The order of a project: the diagram (pan/zoom, clickable contexts, phases of a version) and the check report."""

from __future__ import annotations

from django.http import HttpResponse, HttpResponseRedirect
from django.urls import reverse
from django.views.decorators.http import require_POST

from chronology import jobs, order_service
from chronology.engine.errors import OrderError
from chronology.interpretations.models import Version
from chronology.models import CheckReport, Job
from chronology.tasks import run_order_check
from projects.models import Role
from projects.record import reads

from ..access import require
from .common import frame, project_page, render_page, revision_of


def version_svg(version, area: str | None = None) -> str:
    """The phased diagram of one interpretation version (the API's diagram with ``?version=``), or one area of it."""
    order, phases, phase_of = order_service.version_order(version)
    title = f"{version.project.name} — {version.interpretation.name} v{version.number}"
    if area:
        title += f", area {area}"
    return order_service.diagram_svg(order, area=area, phases=phases, phase_of=phase_of, title=title)


def _svg_or_error(draw) -> tuple[str | None, dict | None]:
    try:
        return draw(), None
    except OrderError as exc:
        return None, {"code": exc.code, "message": exc.message, **(exc.details or {})}


@project_page
def diagram(request, project):
    at = revision_of(request, project)
    revision = project.revision if at is None else at
    area = request.GET.get("area") or None
    versions = list(Version.objects.filter(project=project).select_related("interpretation").order_by("-id")[:100])
    chosen = next((v for v in versions if str(v.pk) == request.GET.get("version", "")), None)
    if chosen is not None:
        svg, problem = _svg_or_error(lambda: version_svg(chosen, area))
    else:
        svg, problem = _svg_or_error(lambda: order_service.diagram_svg(order_service.record_order(project, revision),
                                                                       area=area))
    return render_page(request, "web/diagram.html", frame(
        request, project, "diagram", revision=revision, svg=svg, problem=problem, versions=versions, chosen=chosen,
        area=area or "",
    ))


@project_page
def check(request, project):
    at = request.GET.get("rev", "")
    qs = CheckReport.objects.filter(project=project)
    stored = qs.filter(revision=int(at)).first() if at.isdigit() else qs.order_by("-revision").first()
    history = list(qs.defer("report").order_by("-revision")[:20])
    job = Job.objects.filter(project=project, kind="order-check").order_by("-created_at").first()
    issues = []
    if stored is not None:
        for issue in stored.report.get("issues", []):
            issues.append({**issue, "ids": ",".join(str(i) for i in issue.get("relationships", []))})
    return render_page(request, "web/check.html", frame(
        request, project, "check", stored=stored, issues=issues, history=history, job=job,
        redundant=(stored.report.get("redundant_relationships", [])[:200] if stored else []),
    ))


@project_page
@require_POST
def check_start(request, project):
    """Start a full check of the current record (the API's POST checks/: recorders and up)."""
    require(project, Role.RECORDER)
    revision = reads.resolve_revision(project, None)
    if not CheckReport.objects.filter(project=project, revision=revision).exists():
        jobs.submit(project, request.user, "order-check", {"revision": revision}, run_order_check)
    return HttpResponseRedirect(reverse("web:check", args=[project.organisation.slug, project.code]))


@project_page
def job_status(request, project, job_id):
    """A job's state and progress as JSON, for the page's polling script."""
    job = Job.objects.filter(project=project, pk=job_id).first()
    if job is None:
        from django.http import Http404

        raise Http404("no such job")
    import json

    body = {"state": job.state, "progress": job.progress, "terminal": job.is_terminal}
    return HttpResponse(json.dumps(body), content_type="application/json")
