"""Who may see and do what on a page: the API's rules, for HTML.

A project is found exactly as the API finds it (``api.views.base.find_project``):
one of another organisation is not found at all (404, whatever the URL).
Roles are ranked as the API ranks them (``projects.models.Role``); a page
shows a write control only when the role allows it, and the POST handler
checks again, so a forced POST is refused with 403.
"""

from __future__ import annotations

from django.core.exceptions import PermissionDenied
from django.http import Http404
from rest_framework import exceptions

from api.errors import ApiError
from api.middleware import current_request_id
from api.views.base import find_project
from projects.models import Membership, Organisation, Role
from projects.record.changes import Actor

SESSION_ORG = "web.organisation"


def project_for(request, org: str, code: str):
    """The project ``org``/``code`` if the signed-in user may see it, else 404."""
    try:
        project = find_project(request.user, f"{org}:{code}")
    except (exceptions.NotFound, ApiError):
        raise Http404("no such project") from None
    project.page_role = project.role_of(request.user)
    return project


def can(project, role: str) -> bool:
    return Role.rank(getattr(project, "page_role", None)) >= Role.rank(role)


def require(project, role: str) -> None:
    """403 unless the caller's role on ``project`` is at least ``role``."""
    if not can(project, role):
        raise PermissionDenied(f"this needs the {role} role on {project.code}")


def actor(request) -> Actor:
    """The web session as the write path's actor (device: the browser session)."""
    return Actor(user=request.user, request_id=current_request_id(), device="web session")


def organisations_of(user):
    if user.is_superuser:
        return list(Organisation.objects.order_by("name"))
    return list(Organisation.objects.filter(memberships__user=user).order_by("name").distinct())


def current_organisation(request):
    """The organisation chosen in the switcher, else the user's first one (None if they have none)."""
    if not request.user.is_authenticated:
        return None
    cached = getattr(request, "_web_org", None)
    if cached is not None:
        return cached
    orgs = organisations_of(request.user)
    chosen = request.session.get(SESSION_ORG)
    found = next((o for o in orgs if o.slug == chosen), orgs[0] if orgs else None)
    request._web_org = found
    return found


def organisation_for(request, slug: str):
    """An organisation the user belongs to, by slug; 404 otherwise."""
    for org in organisations_of(request.user):
        if org.slug == slug:
            return org
    raise Http404("no such organisation")


def org_role(user, organisation) -> str | None:
    if user.is_superuser:
        return Role.MANAGER
    return Membership.objects.filter(user=user, organisation=organisation).values_list("role", flat=True).first()
