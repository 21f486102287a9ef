"""Organisations, projects and the caller's device tokens."""

from __future__ import annotations

from drf_spectacular.utils import extend_schema
from rest_framework import mixins, permissions, status, viewsets
from rest_framework.response import Response

from api.errors import ApiError
from api.middleware import current_request_id
from api.serializers.tenancy import OrganisationOut, ProjectInput, ProjectOut, TokenCreated, TokenInput, TokenOut
from api.views.base import find_project
from projects import people
from projects.models import ApiToken, Membership, Organisation, Project, Role


class OrganisationViewSet(mixins.ListModelMixin, viewsets.GenericViewSet):
    serializer_class = OrganisationOut
    permission_classes = [permissions.IsAuthenticated]
    queryset = Organisation.objects.none()

    def get_queryset(self):
        return Organisation.objects.filter(memberships__user=self.request.user).order_by("slug").distinct()


class ProjectViewSet(viewsets.GenericViewSet):
    serializer_class = ProjectOut
    permission_classes = [permissions.IsAuthenticated]
    lookup_field = "code"
    lookup_url_kwarg = "project"
    lookup_value_regex = r"[A-Za-z0-9_:-]+"
    queryset = Project.objects.none()

    def get_queryset(self):
        return Project.objects.visible_to(self.request.user).select_related("organisation").order_by(
            "organisation__slug", "code"
        )

    def list(self, request):
        page = self.paginate_queryset(self.get_queryset())
        return self.get_paginated_response(ProjectOut(page, many=True, context={"request": request}).data)

    def retrieve(self, request, project=None):
        found = find_project(request.user, project)
        return Response(ProjectOut(found, context={"request": request}).data)

    @extend_schema(request=ProjectInput, responses={201: ProjectOut})
    def create(self, request):
        data = ProjectInput(data=request.data)
        data.is_valid(raise_exception=True)
        org = Organisation.objects.filter(
            slug=data.validated_data["organisation"], memberships__user=request.user
        ).first()
        if org is None:
            raise ApiError(404, "not-found", "no such organisation", field="organisation")
        role = Membership.objects.filter(user=request.user, organisation=org).values_list("role", flat=True).first()
        if Role.rank(role) < Role.rank(Role.MANAGER):
            raise ApiError(403, "permission-denied", "only managers create projects")
        if Project.objects.filter(organisation=org, code=data.validated_data["code"]).exists():
            raise ApiError(409, "duplicate-code", "the organisation already has a project with this code", field="code")
        created = Project.objects.create(
            organisation=org,
            code=data.validated_data["code"],
            name=data.validated_data["name"],
            description=data.validated_data["description"],
        )
        return Response(ProjectOut(created, context={"request": request}).data, status=status.HTTP_201_CREATED)


class TokenViewSet(mixins.ListModelMixin, viewsets.GenericViewSet):
    """The caller's named device tokens.  DELETE revokes (the row is kept)."""

    serializer_class = TokenOut
    permission_classes = [permissions.IsAuthenticated]
    queryset = ApiToken.objects.none()
    lookup_value_regex = r"\d+"

    def get_queryset(self):
        return ApiToken.objects.filter(user=self.request.user).order_by("id")

    @extend_schema(request=TokenInput, responses={201: TokenCreated})
    def create(self, request):
        data = TokenInput(data=request.data)
        data.is_valid(raise_exception=True)
        token, key = people.issue_token(request.user, data.validated_data["name"], request_id=current_request_id())
        body = TokenOut(token).data
        body["key"] = key
        return Response(body, status=status.HTTP_201_CREATED)

    @extend_schema(responses={204: None})
    def destroy(self, request, pk=None):
        if not self.get_queryset().filter(pk=pk).exists():
            raise ApiError(404, "not-found", "no such token")
        people.revoke_token(request.user, pk, request_id=current_request_id())
        return Response(status=status.HTTP_204_NO_CONTENT)
