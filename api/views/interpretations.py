"""Interpretations, their versions and workflow, diffs, alternatives and the project's jobs."""

from __future__ import annotations

from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, extend_schema
from rest_framework import mixins, status
from rest_framework.decorators import action
from rest_framework.response import Response

from api.errors import ApiError, error_response
from api.idempotency import idempotent
from api.serializers.interpretations import (
    AlternativesInput,
    ChoiceInput,
    ChoicesOut,
    CommitInput,
    DiffOut,
    DraftInput,
    InterpretationInput,
    InterpretationOut,
    JobOut,
    MoveOnInput,
    MoveOnOut,
    ReadingOut,
    ReasonInput,
    ValidityOut,
    VersionEdit,
    VersionOut,
)
from api.views.base import ProjectScopedViewSet
from chronology import jobs
from chronology.interpretations import alternatives, services
from chronology.interpretations.content import ContentInvalid
from chronology.interpretations.models import Interpretation, Reading, Status, Version
from chronology.models import Job
from projects.models import Role
from api.actor import actor_for
from projects.record.changes import Actor

IF_MATCH = OpenApiParameter("If-Match", OpenApiTypes.STR, OpenApiParameter.HEADER, required=True,
                            description="The ETag of the draft as last read.")


class _InterpretationScoped(ProjectScopedViewSet):
    """Analysts and managers write; only managers approve, reject and set the current reading."""

    read_role = Role.VIEWER
    write_role = Role.ANALYST

    def handle_exception(self, exc):
        if isinstance(exc, ContentInvalid):
            return error_response(exc.status, exc.errors)
        return super().handle_exception(exc)

    def actor(self) -> Actor:
        return actor_for(self.request)

    def current_version_id(self):
        return Reading.objects.filter(project=self.get_project()).values_list("version_id", flat=True).first()

    def version_body(self, version: Version) -> dict:
        return VersionOut(version, context={"current_version": self.current_version_id()}).data

    def version_response(self, version: Version, code=status.HTTP_200_OK) -> Response:
        return Response(self.version_body(version), status=code, headers={"ETag": version.etag})


class InterpretationViewSet(mixins.ListModelMixin, mixins.RetrieveModelMixin, _InterpretationScoped):
    """Named lines of thought about a project's record."""

    serializer_class = InterpretationOut

    def get_queryset(self):
        if getattr(self, "swagger_fake_view", False):
            return Interpretation.objects.none()
        return (Interpretation.objects.filter(project=self.get_project()).select_related("created_by")
                .order_by("id"))

    @extend_schema(request=InterpretationInput, responses={201: VersionOut})
    @idempotent
    def create(self, request, project=None):
        data = InterpretationInput(data=request.data)
        data.is_valid(raise_exception=True)
        _interp, version = services.create_interpretation(self.get_project(), self.actor(), **data.validated_data)
        return self.version_response(version, status.HTTP_201_CREATED)


class VersionViewSet(mixins.ListModelMixin, _InterpretationScoped):
    """Versions of every interpretation of the project, drafts and committed ones."""

    serializer_class = VersionOut
    action_roles = {"approve": Role.MANAGER, "reject": Role.MANAGER, "make_current": Role.MANAGER}

    def get_queryset(self):
        if getattr(self, "swagger_fake_view", False):
            return Version.objects.none()
        qs = (Version.objects.filter(project=self.get_project())
              .select_related("interpretation", "author", "status_changed_by", "project")
              .order_by("interpretation_id", "number", "id"))
        params = self.request.query_params
        if params.get("interpretation", "").isdigit():
            qs = qs.filter(interpretation_id=int(params["interpretation"]))
        if params.get("status") in Status.values:
            qs = qs.filter(status=params["status"])
        return qs

    def get_serializer_context(self):
        return {**super().get_serializer_context(), "current_version": self.current_version_id()}

    def version(self, pk) -> Version:
        version = Version.objects.filter(project=self.get_project(), pk=pk).select_related(
            "interpretation", "author", "status_changed_by", "project").first()
        if version is None:
            raise ApiError(404, "not-found", f"no version {pk} in project {self.get_project().code}")
        return version

    @extend_schema(parameters=[OpenApiParameter("interpretation", OpenApiTypes.INT),
                               OpenApiParameter("status", OpenApiTypes.STR, enum=Status.values)],
                   responses=VersionOut(many=True))
    def list(self, request, project=None):
        return super().list(request, project)

    @extend_schema(responses=VersionOut)
    def retrieve(self, request, project=None, pk=None):
        version = self.version(pk)
        if request.headers.get("If-None-Match") == version.etag:
            return Response(status=status.HTTP_304_NOT_MODIFIED, headers={"ETag": version.etag})
        return self.version_response(version)

    @extend_schema(request=VersionEdit, responses=VersionOut, parameters=[IF_MATCH])
    def partial_update(self, request, project=None, pk=None):
        data = VersionEdit(data=request.data, partial=True)
        data.is_valid(raise_exception=True)
        version = services.edit_draft(self.version(pk), self.actor(), if_match=request.headers.get("If-Match"),
                                      **data.validated_data)
        return self.version_response(version)

    @extend_schema(request=CommitInput, responses=VersionOut)
    @action(detail=True, methods=["post"])
    def commit(self, request, project=None, pk=None):
        data = CommitInput(data=request.data)
        data.is_valid(raise_exception=True)
        return self.version_response(services.commit(self.version(pk), self.actor(), **data.validated_data))

    @extend_schema(request=None, responses=VersionOut)
    @action(detail=True, methods=["post"])
    def propose(self, request, project=None, pk=None):
        return self.version_response(services.propose(self.version(pk), self.actor()))

    @extend_schema(request=ReasonInput, responses=VersionOut)
    @action(detail=True, methods=["post"])
    def approve(self, request, project=None, pk=None):
        data = ReasonInput(data=request.data)
        data.is_valid(raise_exception=True)
        return self.version_response(services.approve(self.version(pk), self.actor(), **data.validated_data))

    @extend_schema(request=ReasonInput, responses=VersionOut)
    @action(detail=True, methods=["post"])
    def reject(self, request, project=None, pk=None):
        data = ReasonInput(data=request.data)
        data.is_valid(raise_exception=True)
        return self.version_response(services.reject(self.version(pk), self.actor(), **data.validated_data))

    @extend_schema(request=None, responses=ReadingOut)
    @action(detail=True, methods=["post"], url_path="make-current")
    def make_current(self, request, project=None, pk=None):
        reading = services.make_current(self.version(pk), self.actor())
        return Response(ReadingOut(reading, context={"current_version": reading.version_id}).data)

    @extend_schema(request=DraftInput, responses={201: VersionOut})
    @action(detail=True, methods=["post"])
    def drafts(self, request, project=None, pk=None):
        """A new draft whose parent is this version (same revision unless given)."""
        data = DraftInput(data=request.data)
        data.is_valid(raise_exception=True)
        draft = services.new_draft(self.version(pk), self.actor(), **data.validated_data)
        return self.version_response(draft, status.HTTP_201_CREATED)

    @extend_schema(responses=ValidityOut)
    @action(detail=True, methods=["get"])
    def validity(self, request, project=None, pk=None):
        return Response(self.version(pk).validity)

    @extend_schema(parameters=[OpenApiParameter("until", OpenApiTypes.INT, description="Defaults to the latest.")],
                   responses={200: OpenApiTypes.OBJECT})
    @action(detail=True, methods=["get"], url_path="record-changes")
    def record_changes(self, request, project=None, pk=None):
        """What changed in the record since the version's revision, and what of it touches the version."""
        return Response(services.changes_touching(self.version(pk), request.query_params.get("until") or None))

    @extend_schema(request=MoveOnInput, responses={201: MoveOnOut})
    @action(detail=True, methods=["post"], url_path="move-on")
    def move_on(self, request, project=None, pk=None):
        """A new draft on the latest revision carrying over what still applies."""
        data = MoveOnInput(data=request.data)
        data.is_valid(raise_exception=True)
        draft, report = services.move_on(self.version(pk), self.actor(), **data.validated_data)
        body = {"version": self.version_body(draft), "report": report}
        return Response(body, status=status.HTTP_201_CREATED, headers={"ETag": draft.etag})

    @extend_schema(parameters=[OpenApiParameter("against", OpenApiTypes.INT, required=True,
                                                description="The other version: the diff runs from it to this one."),
                               OpenApiParameter("as", OpenApiTypes.STR, enum=["json", "text"], description="text: only the readable lines.")],
                   responses={200: DiffOut})
    @action(detail=True, methods=["get"])
    def diff(self, request, project=None, pk=None):
        against = request.query_params.get("against", "")
        if not against.isdigit():
            raise ApiError(400, "required", "name the other version with ?against=<id>", field="against")
        result = services.diff_versions(self.version(int(against)), self.version(pk))
        if request.query_params.get("as") == "text":
            return Response({"text": result["text"]})
        return Response(result)

    @extend_schema(request=AlternativesInput, responses={202: JobOut})
    @action(detail=True, methods=["post"])
    def alternatives(self, request, project=None, pk=None):
        """Start the analysis of the version's undecided items (202 with the job's URL)."""
        data = AlternativesInput(data=request.data)
        data.is_valid(raise_exception=True)
        job = alternatives.start(self.version(pk), self.actor(), **data.validated_data)
        body = JobOut(job, context={"request": request, "project_ref": self.kwargs["project"]}).data
        return Response(body, status=status.HTTP_202_ACCEPTED, headers={"Location": body["url"]})

    @extend_schema(request=ChoiceInput, responses={201: VersionOut})
    @action(detail=True, methods=["post"], url_path="from-alternative")
    def from_alternative(self, request, project=None, pk=None):
        """A new draft deciding every analysed item as the listed choice ``index`` does."""
        data = ChoiceInput(data=request.data)
        data.is_valid(raise_exception=True)
        job = Job.objects.filter(project=self.get_project(), pk=data.validated_data["job"]).first()
        if job is None:
            raise ApiError(404, "not-found", "no such job in this project", field="job")
        draft = alternatives.draft_from_choice(self.version(pk), self.actor(), job, data.validated_data["index"],
                                               message=data.validated_data["message"])
        return self.version_response(draft, status.HTTP_201_CREATED)


class ReadingViewSet(_InterpretationScoped):
    """The project's current reading (one approved version)."""

    def get_queryset(self):
        if getattr(self, "swagger_fake_view", False):
            return Reading.objects.none()
        return Reading.objects.filter(project=self.get_project())

    @extend_schema(responses=ReadingOut)
    def list(self, request, project=None):
        reading = self.get_queryset().select_related(
            "version__interpretation", "version__author", "set_by").first()
        if reading is None:
            raise ApiError(404, "no-current-reading", "no version is the current reading yet")
        return Response(ReadingOut(reading, context={"current_version": reading.version_id}).data)


class JobViewSet(_InterpretationScoped):
    """Background jobs of this project: state, progress and result."""

    lookup_value_regex = r"[0-9a-fA-F-]{36}"

    def get_queryset(self):
        if getattr(self, "swagger_fake_view", False):
            return Job.objects.none()
        return Job.objects.filter(project=self.get_project()).order_by("-created_at", "id")

    def job(self, pk) -> Job:
        job = self.get_queryset().filter(pk=pk).first()
        if job is None:
            raise ApiError(404, "not-found", f"no job {pk} in project {self.get_project().code}")
        return job

    def body(self, job: Job) -> dict:
        return JobOut(job, context={"request": self.request, "project_ref": self.kwargs["project"]}).data

    @extend_schema(responses=JobOut)
    def retrieve(self, request, project=None, pk=None):
        return Response(self.body(self.job(pk)))

    @extend_schema(request=None, responses=JobOut)
    @action(detail=True, methods=["post"])
    def cancel(self, request, project=None, pk=None):
        return Response(self.body(jobs.cancel(self.job(pk))))

    @extend_schema(parameters=[OpenApiParameter("offset", OpenApiTypes.INT), OpenApiParameter("limit", OpenApiTypes.INT)],
                   responses=ChoicesOut)
    @action(detail=True, methods=["get"])
    def choices(self, request, project=None, pk=None):
        """One page of the consistent choices of an alternatives job, computed on demand."""
        try:
            offset = int(request.query_params.get("offset", 0))
            limit = int(request.query_params.get("limit", 50))
        except ValueError:
            raise ApiError(400, "invalid-number", "offset and limit are integers", field="offset") from None
        return Response(alternatives.choices(self.job(pk), offset=offset, limit=limit))
