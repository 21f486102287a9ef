"""What a finished run puts out: its report, the CSV of modelled ranges, figures and comparisons.

* ``GET runs/{id}/report.html`` — the self-contained report (figures embedded);
* ``GET runs/{id}/report.pdf`` — the same report printed to PDF;
* ``GET runs/{id}/ranges.csv`` — every modelled range, exact numbers, with provenance;
* ``GET runs/{id}/plot.svg|png`` — the interval chart (in :mod:`api.views.runs`);
* ``GET runs/{id}/densities.svg|png?events=KEY,KEY`` — density panels of chosen events
  (by key or label; every event up to 24 without ``events``);
* ``GET runs/{id}/compare/?with=RUN`` — the events two runs share with the differences
  of their medians, as JSON; ``compare.svg|png?with=RUN`` draws them in one chart.

The same roles as the run's other reads (a viewer may read); a run of another
project, or of another organisation, is not found.  Bad parameters get the
project's JSON error body naming the parameter.
"""

from __future__ import annotations

import uuid

from django.http import HttpResponse
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, extend_schema
from rest_framework.decorators import action
from rest_framework.response import Response

from api.errors import ApiError
from chronology.runs.figures import compare_runs, comparison_figure, density_figure
from chronology.runs.report import load_results, stored_report_file

__all__ = ["RunOutputsMixin", "MAX_DENSITY_PANELS"]

#: At most this many density panels in one figure.
MAX_DENSITY_PANELS = 24
_IMAGE = {"svg": "image/svg+xml", "png": "image/png"}
_WITH = OpenApiParameter("with", str, description="Id of the other run of this project")
_EVENTS = OpenApiParameter("events", str, required=False,
                           description="Comma-separated event keys or labels (at most 24)")


def _image(data: bytes, fmt: str, filename: str, run) -> HttpResponse:
    response = HttpResponse(data, content_type=_IMAGE[fmt])
    response["Content-Disposition"] = f'inline; filename="{filename}"'
    response["X-Model-Hash"] = run.model_hash
    return response


class RunOutputsMixin:
    """Report, CSV, figures and comparisons of a finished run (mixed into the run viewset)."""

    def _finished(self, pk):
        run = self._run(pk)
        self._done(run)
        return run

    def _report_file(self, run, name: str, content_type: str, disposition: str):
        from django.http import FileResponse

        path = stored_report_file(run, name)
        response = FileResponse(path.open("rb"), content_type=content_type)
        response["Content-Disposition"] = f'{disposition}; filename="run-{run.pk}-{name}"'
        response["X-Model-Hash"] = run.model_hash
        return response

    @extend_schema(responses={(200, "text/html"): OpenApiTypes.STR})
    @action(detail=True, methods=["get"], url_path=r"report\.html", url_name="report-html")
    def report_html(self, request, project=None, pk=None):
        run = self._finished(pk)
        return self._report_file(run, "report.html", "text/html; charset=utf-8", "inline")

    @extend_schema(responses={(200, "application/pdf"): OpenApiTypes.BINARY})
    @action(detail=True, methods=["get"], url_path=r"report\.pdf", url_name="report-pdf")
    def report_pdf(self, request, project=None, pk=None):
        run = self._finished(pk)
        return self._report_file(run, "report.pdf", "application/pdf", "inline")

    @extend_schema(responses={(200, "text/csv"): OpenApiTypes.STR})
    @action(detail=True, methods=["get"], url_path=r"ranges\.csv", url_name="ranges-csv")
    def ranges_csv(self, request, project=None, pk=None):
        run = self._finished(pk)
        return self._report_file(run, "ranges.csv", "text/csv; charset=utf-8", "attachment")

    @extend_schema(parameters=[_EVENTS], responses={(200, "image/svg+xml"): OpenApiTypes.BINARY})
    @action(detail=True, methods=["get"], url_path=r"densities\.(?P<fmt>svg|png)", url_name="densities")
    def densities(self, request, project=None, pk=None, fmt="svg"):
        run = self._finished(pk)
        raw = request.query_params.get("events", "")
        keys = [k.strip() for k in raw.split(",") if k.strip()]
        if len(keys) > MAX_DENSITY_PANELS:
            raise ApiError(400, "too-many", f"at most {MAX_DENSITY_PANELS} events in one figure, not {len(keys)}",
                           field="events")
        try:
            data = density_figure(load_results(run), keys or None, fmt, limit=MAX_DENSITY_PANELS)
        except KeyError as exc:
            raise ApiError(400, "unknown-event", f"the run has no event {exc.args[0]}", field="events") from None
        except ValueError as exc:
            raise ApiError(400, "nothing-to-draw", str(exc), field="events") from None
        return _image(data, fmt, f"run-{run.pk}-densities.{fmt}", run)

    def _other(self, request):
        ref = request.query_params.get("with")
        if not ref:
            raise ApiError(400, "required", "name the run to compare with: ?with=RUN", field="with")
        try:
            other = uuid.UUID(ref)
        except ValueError:
            raise ApiError(400, "invalid", f"{ref!r} is not a run id", field="with") from None
        run = self._run(other)
        if run.state != "done":
            raise ApiError(409, "run-not-done", f"the run to compare with is {run.state}; it must be done",
                           field="with", state=run.state)
        return run

    @extend_schema(parameters=[_WITH], responses={200: OpenApiTypes.OBJECT})
    @action(detail=True, methods=["get"], url_path="compare", url_name="compare")
    def compare(self, request, project=None, pk=None):
        run = self._finished(pk)
        other = self._other(request)
        body = compare_runs(load_results(run), load_results(other))
        from api.serializers.runs import run_output_url

        body["figure_svg"] = run_output_url(request, run, "run-compare-figure", fmt="svg") + f"?with={other.pk}"
        body["figure_png"] = run_output_url(request, run, "run-compare-figure", fmt="png") + f"?with={other.pk}"
        return Response(body)

    @extend_schema(parameters=[_WITH], responses={(200, "image/svg+xml"): OpenApiTypes.BINARY})
    @action(detail=True, methods=["get"], url_path=r"compare\.(?P<fmt>svg|png)", url_name="compare-figure")
    def compare_figure(self, request, project=None, pk=None, fmt="svg"):
        run = self._finished(pk)
        other = self._other(request)
        try:
            data = comparison_figure(load_results(run), load_results(other), fmt)
        except ValueError as exc:
            raise ApiError(409, "nothing-shared", f"the two runs share no event to compare: {exc}",
                           field="with") from None
        return _image(data, fmt, f"run-{run.pk}-compared-with-{other.pk}.{fmt}", run)
