"""Model runs of a project: submit, list, poll, cancel, continue, and their results.

Submitting compiles the version at once, so a model that cannot be built is
refused with its reason (409 for an order conflict, 422 for unusable
evidence) and no run is made; otherwise the answer is 202 with the run's URL
to poll.  Results, the compiled model, the samples (NetCDF) and the plots are
served from the run's folder; every JSON answer carries the caution that
the dates depend on the model's assumptions.  The report, the CSV of
modelled ranges, density panels and comparisons are in
:mod:`api.views.run_outputs`.

Without a broker (the embedded set-up) there is no Celery beat, so reading or
listing runs sweeps the project's runs first (:mod:`chronology.runs.sweeper`):
a run whose process stopped ends ``failed`` (``interrupted``) instead of
showing "running" for ever.
"""

from __future__ import annotations

from django.http import FileResponse
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import extend_schema
from rest_framework import status
from rest_framework.decorators import action
from rest_framework.response import Response

from api.errors import ApiError
from api.idempotency import idempotent
from api.serializers.runs import ContinueInput, RunInput, run_data
from api.views.base import ProjectScopedViewSet
from api.views.run_outputs import RunOutputsMixin
from chronology.runs.compile import ModelRefused
from chronology.runs.models import Run, RunState
from chronology.runs.service import cancel_run, continue_run, submit_run
from chronology.runs.sources import find_version
from chronology.runs.sweeper import sweep_if_in_process
from projects.models import Role


def _refused(exc: ModelRefused) -> ApiError:
    return ApiError(exc.status, exc.code, exc.message, field=exc.details.pop("field", None), **exc.details)


class RunViewSet(RunOutputsMixin, ProjectScopedViewSet):
    """Model runs of committed interpretation versions."""

    lookup_value_regex = r"[0-9a-fA-F-]{36}"
    read_role = Role.VIEWER
    write_role = Role.ANALYST
    action_roles = {"cancel": Role.ANALYST, "continue_": Role.ANALYST}
    input_serializers = {"create": RunInput, "continue_": ContinueInput}

    def _sweep(self) -> None:
        sweep_if_in_process(self.get_project())

    def get_queryset(self):
        return Run.objects.filter(project=self.get_project()).select_related("project").prefetch_related("chain_rows")

    def _run(self, pk) -> Run:
        run = self.get_queryset().filter(pk=pk).first()
        if run is None:
            raise ApiError(404, "not-found", f"no run {pk} in this project")
        return run

    def _done(self, run: Run) -> None:
        if run.state != RunState.DONE:
            raise ApiError(409, "run-not-done", f"the run is {run.state}; results exist once it is done",
                           state=run.state)

    def _file(self, run: Run, name: str, content_type: str, filename: str) -> FileResponse:
        path = run.path(name)
        if not path.exists():
            raise ApiError(404, "not-found", f"the run has no {name}")
        response = FileResponse(path.open("rb"), content_type=content_type)
        response["Content-Disposition"] = f'attachment; filename="{filename}"'
        response["X-Model-Hash"] = run.model_hash
        return response

    @extend_schema(responses={200: OpenApiTypes.OBJECT})
    def list(self, request, project=None):
        self._sweep()
        qs = self.get_queryset()
        state = request.query_params.get("state")
        if state:
            qs = qs.filter(state=state)
        version = request.query_params.get("version")
        if version and version.isdigit():
            qs = qs.filter(version_id=int(version))
        page = self.paginate_queryset(qs)
        return self.get_paginated_response([run_data(r, request) for r in page])

    @extend_schema(responses={200: OpenApiTypes.OBJECT})
    def retrieve(self, request, project=None, pk=None):
        self._sweep()
        return Response(run_data(self._run(pk), request))

    @extend_schema(request=RunInput, responses={202: OpenApiTypes.OBJECT})
    @idempotent
    def create(self, request, project=None):
        body = RunInput(data=request.data)
        body.is_valid(raise_exception=True)
        values = dict(body.validated_data)
        version = find_version(self.get_project(), values.pop("version"))
        if version is None:
            raise ApiError(404, "unknown-version", "no such interpretation version in this project", field="version")
        try:
            run = submit_run(self.get_project(), version, request.user, **values)
        except ModelRefused as exc:
            raise _refused(exc) from None
        run.refresh_from_db()
        data = run_data(run, request)
        return Response(data, status=status.HTTP_202_ACCEPTED, headers={"Location": data["url"]})

    @extend_schema(request=None, responses={202: OpenApiTypes.OBJECT})
    @action(detail=True, methods=["post"])
    def cancel(self, request, project=None, pk=None):
        run = cancel_run(self._run(pk))
        return Response(run_data(run, request), status=status.HTTP_202_ACCEPTED)

    @extend_schema(request=ContinueInput, responses={202: OpenApiTypes.OBJECT})
    @action(detail=True, methods=["post"], url_path="continue", url_name="continue")
    def continue_(self, request, project=None, pk=None):
        body = ContinueInput(data=request.data)
        body.is_valid(raise_exception=True)
        try:
            new = continue_run(self._run(pk), request.user, **body.validated_data)
        except ModelRefused as exc:
            raise _refused(exc) from None
        new.refresh_from_db()
        data = run_data(new, request)
        return Response(data, status=status.HTTP_202_ACCEPTED, headers={"Location": data["url"]})

    @extend_schema(responses={200: OpenApiTypes.OBJECT})
    @action(detail=True, methods=["get"])
    def results(self, request, project=None, pk=None):
        run = self._run(pk)
        self._done(run)
        return self._file(run, "results.json", "application/json", f"run-{run.pk}-results.json")

    @extend_schema(responses={200: OpenApiTypes.OBJECT})
    @action(detail=True, methods=["get"])
    def model(self, request, project=None, pk=None):
        run = self._run(pk)
        return self._file(run, "model.json", "application/json", f"model-{run.model_hash[:12]}.json")

    @extend_schema(responses={200: OpenApiTypes.BINARY})
    @action(detail=True, methods=["get"])
    def samples(self, request, project=None, pk=None):
        run = self._run(pk)
        self._done(run)
        return self._file(run, "samples.nc", "application/x-netcdf", f"run-{run.pk}-samples.nc")

    @extend_schema(responses={200: OpenApiTypes.BINARY})
    @action(detail=True, methods=["get"], url_path=r"plot\.(?P<fmt>svg|png)", url_name="plot")
    def plot(self, request, project=None, pk=None, fmt="svg"):
        run = self._run(pk)
        self._done(run)
        kind = "image/svg+xml" if fmt == "svg" else "image/png"
        return self._file(run, f"plot.{fmt}", kind, f"run-{run.pk}.{fmt}")
