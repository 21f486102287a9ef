"""What the exchange commands share: finding the project and the acting user."""

from __future__ import annotations

from django.contrib.auth import get_user_model
from django.core.management.base import CommandError

from projects.models import Membership, Project, Role


def find_project(ref: str) -> Project | None:
    """The project named ``CODE`` or ``ORG:CODE``; None if there is none."""
    org, code = ref.split(":", 1) if ":" in ref else (None, ref)
    found = Project.objects.select_related("organisation").filter(code=code)
    if org is not None:
        found = found.filter(organisation__slug=org)
    projects = list(found[:2])
    if len(projects) > 1:
        raise CommandError(f"several organisations have a project {ref!r}; use ORG:CODE")
    return projects[0] if projects else None


def acting_user(project: Project, username: str | None):
    """The user a command acts as: ``--user``, else the organisation's only manager."""
    users = get_user_model().objects
    if username:
        user = users.filter(username=username).first()
        if user is None:
            raise CommandError(f"no user {username!r}")
        role = Membership.objects.filter(user=user, organisation=project.organisation).values_list(
            "role", flat=True).first()
        if not user.is_superuser and role != Role.MANAGER:
            raise CommandError(f"{username} is not a manager of {project.organisation.slug}")
        return user
    managers = list(users.filter(memberships__organisation=project.organisation,
                                 memberships__role=Role.MANAGER).order_by("username")[:2])
    if len(managers) != 1:
        raise CommandError(f"{project.organisation.slug} has {'no' if not managers else 'several'} managers; "
                           "name the one acting with --user")
    return managers[0]
