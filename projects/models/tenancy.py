"""Organisations (field units), memberships with roles, and projects (excavations).

Every query for record data starts from a project that the caller may see:
``Project.objects.visible_to(user)``.  A project of another organisation is
simply not in that queryset, so the API answers 404 for it, never 403.
"""

from __future__ import annotations

from django.conf import settings
from django.core.validators import RegexValidator
from django.db import models


class Role(models.TextChoices):
    """Roles in increasing order of what they may do."""

    VIEWER = "viewer", "Viewer"
    RECORDER = "recorder", "Recorder"
    ANALYST = "analyst", "Analyst"
    MANAGER = "manager", "Manager"

    @classmethod
    def rank(cls, role: str | None) -> int:
        order = [cls.VIEWER, cls.RECORDER, cls.ANALYST, cls.MANAGER]
        return order.index(role) + 1 if role in order else 0


code_validator = RegexValidator(
    r"^[A-Za-z0-9][A-Za-z0-9_-]{0,31}$",
    "Use 1-32 letters, digits, '-' or '_', starting with a letter or digit.",
)


class Organisation(models.Model):
    slug = models.SlugField(max_length=64, unique=True)
    name = models.CharField(max_length=200)
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["slug"]

    def __str__(self) -> str:
        return self.name


class Membership(models.Model):
    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="memberships")
    organisation = models.ForeignKey(Organisation, on_delete=models.CASCADE, related_name="memberships")
    role = models.CharField(max_length=16, choices=Role.choices)

    class Meta:
        constraints = [models.UniqueConstraint(fields=["user", "organisation"], name="one_membership_per_org")]
        ordering = ["organisation_id", "user_id"]

    def __str__(self) -> str:
        return f"{self.user} in {self.organisation} as {self.role}"


class ProjectQuerySet(models.QuerySet):
    def with_role_of(self, user) -> "ProjectQuerySet":
        """Annotate each project with ``user``'s override and membership roles (one query)."""
        from django.db.models import OuterRef, Subquery

        override = ProjectRole.objects.filter(project=OuterRef("pk"), user=user).values("role")[:1]
        member = Membership.objects.filter(organisation=OuterRef("organisation_id"), user=user).values("role")[:1]
        return self.annotate(_override_role=Subquery(override), _member_role=Subquery(member))

    def visible_to(self, user) -> "ProjectQuerySet":
        """Projects of the organisations ``user`` belongs to (none for anonymous)."""
        if user is None or not user.is_authenticated:
            return self.none()
        if user.is_superuser:
            return self.all()
        return self.filter(organisation__memberships__user=user).distinct()


class Project(models.Model):
    """One excavation.  ``revision`` is the record revision: every change bumps it."""

    organisation = models.ForeignKey(Organisation, on_delete=models.PROTECT, related_name="projects")
    code = models.CharField(max_length=32, validators=[code_validator])
    name = models.CharField(max_length=200)
    description = models.TextField(blank=True)
    revision = models.PositiveIntegerField(default=0)
    record_digest = models.CharField(max_length=64, blank=True, help_text="Digest of the latest revision.")
    head_digest = models.CharField(
        max_length=64, blank=True, help_text="Head of the record's digest chain (the latest revision or workflow entry)."
    )
    created_at = models.DateTimeField(auto_now_add=True)

    objects = ProjectQuerySet.as_manager()

    class Meta:
        constraints = [models.UniqueConstraint(fields=["organisation", "code"], name="project_code_unique_in_org")]
        ordering = ["organisation_id", "code"]

    def __str__(self) -> str:
        return f"{self.code} ({self.organisation.slug})"

    def role_of(self, user) -> str | None:
        """The caller's role here: the project override if any, else the membership."""
        if user is None or not user.is_authenticated:
            return None
        known = getattr(self, "_roles_for", None)
        if known is not None and known[0] == user.pk:
            return known[1]
        override = self.role_overrides.filter(user=user).values_list("role", flat=True).first()
        if override:
            return override
        role = (
            Membership.objects.filter(user=user, organisation_id=self.organisation_id)
            .values_list("role", flat=True)
            .first()
        )
        if role is None and user.is_superuser:
            return Role.MANAGER
        return role


class ProjectRole(models.Model):
    """A per-project override of a member's organisation role."""

    project = models.ForeignKey(Project, on_delete=models.CASCADE, related_name="role_overrides")
    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="project_roles")
    role = models.CharField(max_length=16, choices=Role.choices)

    class Meta:
        constraints = [models.UniqueConstraint(fields=["project", "user"], name="one_override_per_project")]
