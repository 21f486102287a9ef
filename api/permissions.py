"""Role checks declared on the view, enforced in one place.

A view names the least role needed to read (``read_role``) and to write
(``write_role``), and may name a role per action (``action_roles``).  The
caller's role is the project override if any, else their organisation
membership role.  A project the caller cannot see raises 404 in
``ProjectScopedMixin.get_project`` before this check runs.
"""

from __future__ import annotations

from rest_framework import permissions

from projects.models import Role


class ProjectRolePermission(permissions.BasePermission):
    message = "Your role on this project does not allow this."

    def has_permission(self, request, view):
        if not request.user or not request.user.is_authenticated:
            return False
        project = view.get_project()
        role = project.role_of(request.user)
        needed = view.required_role(request)
        return Role.rank(role) >= Role.rank(needed)
