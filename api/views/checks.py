"""The full order check (a background job), the diagram and the exports of a project."""

from __future__ import annotations

from django.http import HttpResponse
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, extend_schema
from rest_framework import status
from rest_framework.response import Response
from rest_framework.views import APIView

from api.errors import ApiError
from api.views.base import ProjectScopedMixin, truthy
from chronology import jobs, order_service
from chronology.models import CheckReport
from chronology.tasks import run_order_check
from projects.record import history, reads

AT = OpenApiParameter("at", OpenApiTypes.INT, description="Record revision (default: current).")
REDUCED = OpenApiParameter("reduced", OpenApiTypes.BOOL, description="Only the direct relationships.")


def _report_body(stored: CheckReport) -> dict:
    return {
        "revision": stored.revision,
        "created_at": stored.created_at,
        "ok": stored.ok,
        "summary": stored.summary,
        "report": stored.report,
    }


class CheckListView(ProjectScopedMixin, APIView):
    """POST starts a full check of the record (202 with the job); GET lists stored checks."""

    @extend_schema(parameters=[AT], request=None, responses={202: OpenApiTypes.OBJECT})
    def post(self, request, project):
        found = self.get_project()
        if not isinstance(request.data, dict):
            raise ApiError(400, "invalid", "the body, if any, must be a JSON object such as {\"at\": 12}")
        revision = reads.resolve_revision(found, request.query_params.get("at") or request.data.get("at"))
        stored = CheckReport.objects.filter(project=found, revision=revision).first()
        if stored is not None:
            return Response({"state": "done", "revision": revision, "report_url": _report_url(found, revision)})
        job = jobs.submit(found, request.user, "order-check", {"revision": revision}, run_order_check)
        return Response(
            {"job": str(job.pk), "state": job.state, "revision": revision,
             "job_url": f"/api/v1/projects/{found.code}/jobs/{job.pk}/",
             "report_url": _report_url(found, revision)},
            status=status.HTTP_202_ACCEPTED,
        )

    @extend_schema(responses=OpenApiTypes.OBJECT)
    def get(self, request, project):
        found = self.get_project()
        rows = CheckReport.objects.filter(project=found).order_by("-revision")[:200]
        return Response({"results": [{"revision": r.revision, "ok": r.ok, "summary": r.summary,
                                      "created_at": r.created_at} for r in rows]})


def _report_url(project, revision) -> str:
    return f"/api/v1/projects/{project.code}/checks/{revision}/"


class CheckDetailView(ProjectScopedMixin, APIView):
    """The stored check report for a revision (``latest`` for the newest one)."""

    @extend_schema(responses=OpenApiTypes.OBJECT)
    def get(self, request, project, revision):
        found = self.get_project()
        qs = CheckReport.objects.filter(project=found)
        stored = qs.order_by("-revision").first() if revision == "latest" else qs.filter(revision=int(revision)).first()
        if stored is None:
            raise ApiError(404, "not-found", "no stored check for that revision; POST to checks/ to run one")
        return Response(_report_body(stored))


class DiagramView(ProjectScopedMixin, APIView):
    """The layered diagram of the order as SVG (earlier at the bottom)."""

    @extend_schema(
        parameters=[
            AT,
            OpenApiParameter("area", OpenApiTypes.STR, description="Draw one area only."),
            OpenApiParameter("version", OpenApiTypes.INT,
                             description="Draw an interpretation version: its order, with its phases as bands."),
        ],
        responses={(200, "image/svg+xml"): OpenApiTypes.STR},
    )
    def get(self, request, project):
        found = self.get_project()
        area = request.query_params.get("area")
        version_id = request.query_params.get("version")
        if version_id:
            from chronology.interpretations.models import Version

            version = Version.objects.filter(project=found, pk=int(version_id) if version_id.isdigit() else -1).first()
            if version is None:
                raise ApiError(404, "not-found", f"no interpretation version {version_id!r} in this project",
                               field="version")
            order, phases, phase_of = order_service.version_order(version)
            title = f"{found.name} — {version.interpretation.name} v{version.number}"
            svg = order_service.diagram_svg(order, area=area, phases=phases, phase_of=phase_of, title=title)
        else:
            revision = reads.resolve_revision(found, request.query_params.get("at"))
            order = order_service.record_order(found, revision)
            svg = order_service.diagram_svg(order, area=area)
        return HttpResponse(svg, content_type="image/svg+xml")


class ExportView(ProjectScopedMixin, APIView):
    """The order as GraphML, DOT, node-link JSON or CSV of relationships."""

    @extend_schema(parameters=[AT, REDUCED], responses={
        (200, content_type): OpenApiTypes.OBJECT if content_type == "application/json" else OpenApiTypes.STR
        for content_type, _ext in order_service.EXPORTS.values()
    })
    def get(self, request, project, fmt):
        found = self.get_project()
        if fmt not in order_service.EXPORTS:
            raise ApiError(404, "not-found", f"unknown export format {fmt!r}",
                           field="format", formats=sorted(order_service.EXPORTS))
        revision = reads.resolve_revision(found, request.query_params.get("at"))
        reduced = truthy(request.query_params.get("reduced", "false"))
        order = order_service.record_order(found, revision)
        body = order_service.export(order, fmt, reduced=reduced)
        # Whoever keeps this copy can later tell a rewrite of the history (``verify_record``).
        head = {"X-Record-Head-Digest": history.head_digest(found)}
        if fmt == "json":
            return Response(body, headers=head)
        content_type, ext = order_service.EXPORTS[fmt]
        response = HttpResponse(body, content_type=content_type, headers=head)
        suffix = "-reduced" if reduced else ""
        response["Content-Disposition"] = f'attachment; filename="{found.code}-r{revision}{suffix}.{ext}"'
        return response


class ImpliedByView(ProjectScopedMixin, APIView):
    """Whether a relationship is redundant, with the full path of direct relationships implying it.

    The check report gives each redundant relationship a compact witness; this
    spells out the whole path for one of them, later end first.
    """

    @extend_schema(parameters=[AT], responses=OpenApiTypes.OBJECT)
    def get(self, request, project, relationship):
        found = self.get_project()
        revision = reads.resolve_revision(found, request.query_params.get("at"))
        return Response(order_service.implied_by(found, relationship, revision))

