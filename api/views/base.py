"""What every project-nested view shares: the tenant project and role checks."""

from __future__ import annotations

from rest_framework import exceptions, serializers, viewsets

from api.errors import ApiError
from api.permissions import ProjectRolePermission
from projects.models import Membership, Organisation, Project, ProjectRole, Role


def find_project(user, ref: str) -> Project:
    """A project the user may see, by ``CODE`` or ``ORG:CODE``; 404 otherwise.

    A project of another organisation is not in the caller's queryset at all,
    so it is indistinguishable from one that does not exist.
    """
    if user is None or not user.is_authenticated or "\x00" in ref:  # no code holds NUL (nor can PostgreSQL text)
        raise exceptions.NotFound(f"no project {ref!r}")
    org_slug, code = ref.split(":", 1) if ":" in ref else (None, ref)
    if user.is_superuser:
        visible = Project.objects.select_related("organisation").with_role_of(user).order_by().filter(code=code)
        if org_slug is not None:
            visible = visible.filter(organisation__slug=org_slug)
        candidates = list(visible)
    else:
        candidates = _member_projects(user, code, org_slug)
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


_MEMBER_PROJECTS = """
SELECT p.*, o.slug AS org_slug, o.name AS org_name, o.created_at AS org_created_at,
       m.role AS _member_role,
       (SELECT r.role FROM {role} r WHERE r.project_id = p.id AND r.user_id = %s) AS _override_role
FROM {project} p
JOIN {org} o ON o.id = p.organisation_id
JOIN {membership} m ON m.organisation_id = p.organisation_id AND m.user_id = %s
WHERE p.code = %s {org_filter}
ORDER BY o.slug
"""


def _member_projects(user, code: str, org_slug: str | None) -> list[Project]:
    """Projects with this code in the user's organisations, with the user's roles.

    This runs on every project-nested request, so it is one plain query
    (membership is the visibility rule and the role source at once).
    """
    sql = _MEMBER_PROJECTS.format(
        project=Project._meta.db_table,
        org=Organisation._meta.db_table,
        membership=Membership._meta.db_table,
        role=ProjectRole._meta.db_table,
        org_filter="AND o.slug = %s" if org_slug is not None else "",
    )
    params = [user.pk, user.pk, code] + ([org_slug] if org_slug is not None else [])
    found = list(Project.objects.raw(sql, params))
    for project in found:
        project.organisation = Organisation(
            id=project.organisation_id, slug=project.org_slug, name=project.org_name, created_at=project.org_created_at
        )
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


class DescribedInputMixin:
    # Names the input serializer of each action, for OPTIONS and the browsable API:
    # DRF's metadata and HTML forms ask a view for get_serializer() under the method
    # being described; our views validate input with a serializer per action, so the
    # action that method routes to picks it, and an action without a body gets an
    # empty one.  (A comment, not a docstring: the schema would show it on every view.)

    input_serializers: dict[str, type] = {}

    def get_serializer_class(self):
        if getattr(self, "serializer_class", None) is not None:
            return self.serializer_class
        action = getattr(self, "action", None)
        routed = getattr(self, "action_map", {}) or {}
        request = getattr(self, "request", None)
        if request is not None and request.method.lower() in routed:
            action = routed[request.method.lower()]
        return self.input_serializers.get(action, serializers.Serializer)


class ProjectScopedViewSet(ProjectScopedMixin, DescribedInputMixin, viewsets.GenericViewSet):
    lookup_value_regex = r"\d+"

    def get_queryset(self):  # a forgotten override must fail loudly, never leak
        raise NotImplementedError(f"{type(self).__name__} must derive its queryset from the project")


def truthy(value) -> bool:
    return str(value).lower() in {"1", "true", "yes", "on"}


__all__ = ["find_project", "DescribedInputMixin", "ProjectScopedMixin", "ProjectScopedViewSet", "truthy"]
