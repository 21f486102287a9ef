from django.contrib import admin

from projects.models import (
    ApiToken,
    ChangeLogEntry,
    Context,
    Membership,
    Organisation,
    Project,
    ProjectRole,
    Relationship,
    Revision,
)


class ReadOnlyAdmin(admin.ModelAdmin):
    """The record is written only through its write path; the admin only shows it."""

    def has_add_permission(self, request):
        return False

    def has_change_permission(self, request, obj=None):
        return False

    def has_delete_permission(self, request, obj=None):
        return False


class MembershipInline(admin.TabularInline):
    model = Membership
    extra = 0


@admin.register(Organisation)
class OrganisationAdmin(admin.ModelAdmin):
    list_display = ["slug", "name"]
    inlines = [MembershipInline]


@admin.register(Project)
class ProjectAdmin(admin.ModelAdmin):
    list_display = ["code", "organisation", "name", "revision"]
    readonly_fields = ["revision"]


admin.site.register(ProjectRole)


@admin.register(ApiToken)
class ApiTokenAdmin(admin.ModelAdmin):
    list_display = ["name", "user", "prefix", "created_at", "revoked_at"]
    readonly_fields = ["prefix", "key_digest", "created_at", "last_used_at"]


@admin.register(Context)
class ContextAdmin(ReadOnlyAdmin):
    list_display = ["label", "project", "kind", "area", "created_revision", "retracted_revision"]
    list_filter = ["project", "kind"]


@admin.register(Relationship)
class RelationshipAdmin(ReadOnlyAdmin):
    list_display = ["id", "project", "later", "type", "earlier", "certainty", "retracted_revision"]


@admin.register(ChangeLogEntry)
class ChangeLogEntryAdmin(ReadOnlyAdmin):
    list_display = ["project", "revision", "action", "object_repr", "user_name", "device", "created_at"]


@admin.register(Revision)
class RevisionAdmin(ReadOnlyAdmin):
    list_display = ["project", "number", "summary", "user_name", "created_at"]
