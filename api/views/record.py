"""Contexts, relationships, the change feed, revisions and batch sync of a project."""

from __future__ import annotations

from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, extend_schema
from rest_framework import mixins, status
from rest_framework.decorators import action
from rest_framework.response import Response

from api.filters import ChangeFilter, ContextStateFilter, RelationshipStateFilter
from api.idempotency import idempotent
from api.serializers.record import (
    ChangeOut,
    ContextEdit,
    ContextInput,
    ContextOut,
    RelationshipInput,
    RelationshipOut,
    RetractInput,
    RevisionOut,
    SyncInput,
)
from api.views.base import ProjectScopedViewSet
from projects.models import ChangeLogEntry, RecordState, Revision
from projects.record import reads, writes
from api.actor import actor_for
from projects.record.errors import RecordNotFound
from projects.record.representation import context_data, relationship_data
from projects.record.sync import sync_batch

AT = OpenApiParameter("at", OpenApiTypes.INT, description="Read the record as it was at this revision.")


class _RecordStateViewSet(ProjectScopedViewSet):
    kind: str = ""

    def revision(self) -> int:
        return reads.resolve_revision(self.get_project(), self.request.query_params.get("at"))

    def get_queryset(self):
        if getattr(self, "swagger_fake_view", False):  # schema generation has no project
            return RecordState.objects.none()
        return reads.states(self.get_project(), self.kind, self.revision())

    def rows(self, states) -> list[dict]:
        return [s.data for s in states]

    def list(self, request, project=None):
        qs = self.filter_queryset(self.get_queryset())
        page = self.paginate_queryset(qs)
        response = self.get_paginated_response(self.rows(page))
        response.data["revision"] = self.revision()
        return response

    def retrieve(self, request, project=None, pk=None):
        state = self.get_queryset().filter(object_id=pk).first()
        if state is None:
            raise RecordNotFound(f"no {self.kind} {pk} at revision {self.revision()}")
        return Response(self.rows([state])[0])


class ContextViewSet(_RecordStateViewSet):
    kind = "context"
    filterset_class = ContextStateFilter

    @extend_schema(parameters=[AT], responses=ContextOut(many=True))
    def list(self, request, project=None):
        return super().list(request, project)

    @extend_schema(parameters=[AT], responses=ContextOut)
    def retrieve(self, request, project=None, pk=None):
        return super().retrieve(request, project, pk)

    @extend_schema(request=ContextInput, responses={201: ContextOut, 200: ContextOut})
    @idempotent
    def create(self, request, project=None):
        data = ContextInput(data=request.data)
        data.is_valid(raise_exception=True)
        fields = dict(data.validated_data)
        uid = fields.pop("uid", None)
        result = writes.add_context(self.get_project(), actor_for(request), uid=uid, **fields)
        code = status.HTTP_201_CREATED if result.created else status.HTTP_200_OK
        return Response(context_data(result.object), status=code, headers={"X-Record-Revision": str(result.revision)})

    @extend_schema(request=ContextEdit, responses=ContextOut)
    def partial_update(self, request, project=None, pk=None):
        data = ContextEdit(data=request.data, partial=True)
        data.is_valid(raise_exception=True)
        fields = dict(data.validated_data)
        message = fields.pop("message", "")
        result = writes.edit_context(self.get_project(), actor_for(request), int(pk), fields, message=message)
        return Response(context_data(result.object), headers={"X-Record-Revision": str(result.revision)})

    @extend_schema(request=RetractInput, responses=ContextOut)
    @action(detail=True, methods=["post"])
    @idempotent
    def retract(self, request, project=None, pk=None):
        data = RetractInput(data=request.data)
        data.is_valid(raise_exception=True)
        result = writes.retract_context(
            self.get_project(), actor_for(request), int(pk), reason=data.validated_data["reason"]
        )
        body = context_data(result.object)
        body.update(retracted_revision=result.object.retracted_revision, retraction_reason=result.object.retraction_reason)
        return Response(body, headers={"X-Record-Revision": str(result.revision)})


class RelationshipViewSet(_RecordStateViewSet):
    kind = "relationship"
    filterset_class = RelationshipStateFilter

    def rows(self, states) -> list[dict]:
        data = [s.data for s in states]
        ids = {d["later_id"] for d in data} | {d["earlier_id"] for d in data}
        labels = reads.context_labels(self.get_project(), self.revision(), ids)
        return reads.with_labels(data, labels)

    @extend_schema(parameters=[AT], responses=RelationshipOut(many=True))
    def list(self, request, project=None):
        return super().list(request, project)

    @extend_schema(parameters=[AT], responses=RelationshipOut)
    def retrieve(self, request, project=None, pk=None):
        return super().retrieve(request, project, pk)

    def _out(self, rel) -> dict:
        return reads.with_labels([relationship_data(rel)], {rel.later_id: rel.later.label, rel.earlier_id: rel.earlier.label})[0]

    @extend_schema(request=RelationshipInput, responses={201: RelationshipOut, 200: RelationshipOut})
    @idempotent
    def create(self, request, project=None):
        data = RelationshipInput(data=request.data)
        data.is_valid(raise_exception=True)
        result = writes.add_relationship(self.get_project(), actor_for(request), **data.validated_data)
        code = status.HTTP_201_CREATED if result.created else status.HTTP_200_OK
        return Response(self._out(result.object), status=code, headers={"X-Record-Revision": str(result.revision)})

    @extend_schema(request=RetractInput, responses=RelationshipOut)
    @action(detail=True, methods=["post"])
    @idempotent
    def retract(self, request, project=None, pk=None):
        data = RetractInput(data=request.data)
        data.is_valid(raise_exception=True)
        result = writes.retract_relationship(
            self.get_project(), actor_for(request), int(pk), reason=data.validated_data["reason"]
        )
        body = self._out(result.object)
        body.update(retracted_revision=result.object.retracted_revision, retraction_reason=result.object.retraction_reason)
        return Response(body, headers={"X-Record-Revision": str(result.revision)})


class ChangeViewSet(mixins.ListModelMixin, ProjectScopedViewSet):
    """The change log of a project as a feed: ``?since=REV`` gives what came after."""

    serializer_class = ChangeOut
    filterset_class = ChangeFilter

    def get_queryset(self):
        if getattr(self, "swagger_fake_view", False):
            return ChangeLogEntry.objects.none()
        return ChangeLogEntry.objects.filter(project=self.get_project()).order_by("revision", "id")


class RevisionViewSet(mixins.ListModelMixin, ProjectScopedViewSet):
    serializer_class = RevisionOut

    def get_queryset(self):
        if getattr(self, "swagger_fake_view", False):
            return Revision.objects.none()
        return Revision.objects.filter(project=self.get_project()).order_by("number")


class SyncViewSet(ProjectScopedViewSet):
    """Batch sync for field apps (all-or-nothing; replay-safe)."""

    @extend_schema(request=SyncInput, responses={200: OpenApiTypes.OBJECT})
    @idempotent
    def create(self, request, project=None):
        data = SyncInput(data=request.data)
        data.is_valid(raise_exception=True)
        answer = sync_batch(self.get_project(), actor_for(request), **data.validated_data)
        return Response(answer)
