"""What every project-nested view shares: the tenant project and role checks."""

from __future__ import annotations

from django.db.models import Q
from rest_framework import exceptions, viewsets

from api.errors import ApiError
from api.permissions import ProjectRolePermission
from projects.models import Project, Role


def find_project(user, ref: str) -> Project:
    """A project the user may see, by ``CODE`` or ``ORG:CODE``; 404 otherwise.

    A project of another organisation is not in the caller's queryset at all,
    so it is indistinguishable from one that does not exist.
    """
    if user is None or not user.is_authenticated:
        raise exceptions.NotFound(f"no project {ref!r}")
    # Visibility is membership of the project's organisation, read from the same
    # subquery that gives the caller's role: one query, no join fan-out.
    visible = Project.objects.select_related("organisation").with_role_of(user).order_by()
    if not user.is_superuser:
        visible = visible.filter(_member_role__isnull=False)
    if ":" in ref:
        org, code = ref.split(":", 1)
        candidates = list(visible.filter(organisation__slug=org, code=code))
    else:
        candidates = list(visible.filter(code=ref))
    if not candidates:
        raise exceptions.NotFound(f"no project {ref!r}")
    if len(candidates) > 1:
        raise ApiError(
            409, "ambiguous-project", f"several of your organisations have a project {ref!r}; use ORG:CODE",
            field="project", candidates=[f"{p.organisation.slug}:{p.code}" for p in candidates],
        )
    found = candidates[0]
    role = found._override_role or found._member_role or (Role.MANAGER if user.is_superuser else None)
    found._roles_for = (user.pk, role)
    return found


class ProjectScopedMixin:
    """Nested under ``/projects/{project}/``: querysets derive from that project only."""

    permission_classes = [ProjectRolePermission]
    read_role = Role.VIEWER
    write_role = Role.RECORDER
    action_roles: dict[str, str] = {}

    def get_project(self) -> Project:
        if not hasattr(self, "_project"):
            self._project = find_project(self.request.user, self.kwargs["project"])
        return self._project

    def required_role(self, request) -> str:
        action = getattr(self, "action", None)
        if action in self.action_roles:
            return self.action_roles[action]
        return self.read_role if request.method in ("GET", "HEAD", "OPTIONS") else self.write_role


class ProjectScopedViewSet(ProjectScopedMixin, viewsets.GenericViewSet):
    lookup_value_regex = r"\d+"

    def get_queryset(self):  # a forgotten override must fail loudly, never leak
        raise NotImplementedError(f"{type(self).__name__} must derive its queryset from the project")


def truthy(value) -> bool:
    return str(value).lower() in {"1", "true", "yes", "on"}


__all__ = ["find_project", "ProjectScopedMixin", "ProjectScopedViewSet", "truthy", "Q"]
