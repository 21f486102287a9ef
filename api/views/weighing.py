"""Weighing readings by the evidence, and sensitivity runs.

``weighings/``: POST ``{"versions": [ids]}`` (committed versions that use the
same evidence) or ``{"version": id, "alternatives": true}`` (the 2^k ways of
deciding what the version leaves undecided; ``"method": "joint"`` weighs the
uncertain relationships together from one encompassing model, as happens
anyway beyond four items) answers 202 with the weighing's
URL; GET gives each candidate's state and, when all are done, marginal
likelihoods, Bayes factors and posterior probabilities under equal prior
weights with Monte Carlo errors, and the caution that Bayes factors depend
on the priors.  ``sensitivity/``: POST ``{"version": id, "variations": [...]}``
answers 202 with a job whose result says how each boundary moves.
"""

from __future__ import annotations

from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import extend_schema
from rest_framework import status
from rest_framework.decorators import action
from rest_framework.response import Response

from api.actor import actor_for
from api.errors import ApiError
from api.idempotency import idempotent
from api.serializers.weighing import SensitivityInput, WeighingInput
from api.views.base import ProjectScopedViewSet
from chronology.models import Job
from chronology.runs.compile import ModelRefused
from chronology.weighing import evidence_jobs, sensitivity
from projects.models import Role


def _refused(exc: ModelRefused) -> ApiError:
    details = dict(exc.details)
    return ApiError(exc.status, exc.code, exc.message, field=details.pop("field", None), **details)


class _Jobs(ProjectScopedViewSet):
    lookup_value_regex = r"[0-9a-fA-F-]{36}"
    read_role = Role.VIEWER
    write_role = Role.ANALYST
    action_roles = {"cancel": Role.ANALYST}
    kind = ""

    def get_queryset(self):
        if getattr(self, "swagger_fake_view", False):
            return Job.objects.none()
        return Job.objects.filter(project=self.get_project(), kind=self.kind).order_by("-created_at", "id")

    def _job(self, pk) -> Job:
        job = self.get_queryset().filter(pk=pk).first()
        if job is None:
            raise ApiError(404, "not-found", f"no {self.kind} {pk} in this project")
        return job

    def _url(self, job: Job) -> str:
        return self.request.build_absolute_uri(f"/api/v1/projects/{self.kwargs['project']}/{self.prefix}/{job.pk}/")

    def _body(self, job: Job) -> dict:
        raise NotImplementedError

    def _accepted(self, job: Job) -> Response:
        data = self._body(job)
        return Response(data, status=status.HTTP_202_ACCEPTED, headers={"Location": data["url"]})

    @extend_schema(responses={200: OpenApiTypes.OBJECT})
    def list(self, request, project=None):
        page = self.paginate_queryset(self.get_queryset())
        return self.get_paginated_response([self._body(j) for j in page])

    @extend_schema(responses={200: OpenApiTypes.OBJECT})
    def retrieve(self, request, project=None, pk=None):
        return Response(self._body(self._job(pk)))


class WeighingViewSet(_Jobs):
    """Candidate readings weighed by their marginal likelihoods (stepping-stone sampling)."""

    kind = evidence_jobs.WEIGHING_KIND
    prefix = "weighings"
    input_serializers = {"create": WeighingInput}

    def _body(self, job: Job) -> dict:
        return {**evidence_jobs.weighing_view(job), "url": self._url(job)}

    @extend_schema(request=WeighingInput, responses={202: OpenApiTypes.OBJECT})
    @idempotent
    def create(self, request, project=None):
        body = WeighingInput(data=request.data)
        body.is_valid(raise_exception=True)
        v = body.validated_data
        try:
            job = evidence_jobs.start_weighing(
                self.get_project(), actor_for(request), versions=v["versions"],
                alternatives_of=v["version"] if v["versions"] is None else None, settings=v["settings"],
                seed=v["seed"], method=v["method"])
        except ModelRefused as exc:
            raise _refused(exc) from None
        return self._accepted(job)

    @extend_schema(request=None, responses={202: OpenApiTypes.OBJECT})
    @action(detail=True, methods=["post"])
    def cancel(self, request, project=None, pk=None):
        job = evidence_jobs.cancel_weighing(self._job(pk))
        return Response(self._body(job), status=status.HTTP_202_ACCEPTED)


class SensitivityViewSet(_Jobs):
    """A version sampled under variations: how each boundary's median and ranges move."""

    kind = sensitivity.JOB_KIND
    prefix = "sensitivity"
    input_serializers = {"create": SensitivityInput}

    def _body(self, job: Job) -> dict:
        return {"id": str(job.pk), "state": job.state, "progress": job.progress, "params": job.params,
                "created_at": job.created_at, "finished_at": job.finished_at, "result": job.result,
                "error": job.error, "url": self._url(job)}

    @extend_schema(request=SensitivityInput, responses={202: OpenApiTypes.OBJECT})
    @idempotent
    def create(self, request, project=None):
        body = SensitivityInput(data=request.data)
        body.is_valid(raise_exception=True)
        v = body.validated_data
        try:
            job = sensitivity.start_sensitivity(self.get_project(), actor_for(request), version_id=v["version"],
                                                variations=v["variations"], settings=v["settings"], seed=v["seed"])
        except ModelRefused as exc:
            raise _refused(exc) from None
        return self._accepted(job)
