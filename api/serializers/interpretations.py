"""Shapes of interpretation input and output.  ``chronology.interpretations`` decides what is allowed."""

from __future__ import annotations

from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from chronology.interpretations.content_schema import openapi_view
from chronology.interpretations.models import Status


@extend_schema_field(openapi_view())
class ContentField(serializers.JSONField):
    """An interpretation content document (its shape: ``GET /api/v1/schemas/interpretation/``)."""


class InterpretationInput(serializers.Serializer):
    name = serializers.CharField(max_length=120)
    description = serializers.CharField(required=False, allow_blank=True, default="")
    content = ContentField(required=False, default=None,
                                    help_text="The first draft's document; contexts may be given by label.")
    record_revision = serializers.IntegerField(required=False, allow_null=True, default=None,
                                               help_text="Defaults to the current record revision.")
    message = serializers.CharField(required=False, allow_blank=True, default="")


class VersionSummary(serializers.Serializer):
    id = serializers.IntegerField()
    number = serializers.IntegerField()
    status = serializers.ChoiceField(choices=Status.choices)
    record_revision = serializers.IntegerField()
    is_valid = serializers.BooleanField()


class InterpretationOut(serializers.Serializer):
    id = serializers.IntegerField()
    name = serializers.CharField()
    description = serializers.CharField()
    created_at = serializers.DateTimeField()
    created_by = serializers.CharField(source="created_by.username")
    versions = serializers.SerializerMethodField()

    def get_versions(self, obj) -> list[dict]:
        return VersionSummary(obj.versions.order_by("number"), many=True).data


class VersionOut(serializers.Serializer):
    id = serializers.IntegerField()
    interpretation = serializers.IntegerField(source="interpretation_id")
    interpretation_name = serializers.CharField(source="interpretation.name")
    number = serializers.IntegerField()
    record_revision = serializers.IntegerField()
    parent = serializers.IntegerField(source="parent_id", allow_null=True)
    author = serializers.CharField(source="author.username")
    message = serializers.CharField()
    status = serializers.ChoiceField(choices=Status.choices)
    status_changed_at = serializers.DateTimeField(allow_null=True)
    status_changed_by = serializers.CharField(source="status_changed_by.username", allow_null=True, default=None)
    status_reason = serializers.CharField()
    content = ContentField()
    content_hash = serializers.CharField(help_text="SHA-256 of the canonical content and revision; set on commit.")
    committed_at = serializers.DateTimeField(allow_null=True)
    is_valid = serializers.BooleanField()
    etag = serializers.CharField()
    is_current = serializers.SerializerMethodField()
    created_at = serializers.DateTimeField()
    updated_at = serializers.DateTimeField()

    def get_is_current(self, obj) -> bool:
        return obj.pk == self.context.get("current_version")


class VersionEdit(serializers.Serializer):
    content = ContentField(required=False, help_text="The whole document; contexts may be given by label.")
    message = serializers.CharField(required=False, allow_blank=True)
    record_revision = serializers.IntegerField(required=False, help_text="Rebuild the draft on another revision.")


class CommitInput(serializers.Serializer):
    message = serializers.CharField(required=False, allow_blank=True)


class ReasonInput(serializers.Serializer):
    reason = serializers.CharField(required=False, allow_blank=True, default="", max_length=2000)


class DraftInput(serializers.Serializer):
    message = serializers.CharField(required=False, allow_blank=True, default="")
    content = ContentField(required=False, default=None)
    record_revision = serializers.IntegerField(required=False, allow_null=True, default=None)


class MoveOnInput(serializers.Serializer):
    message = serializers.CharField(required=False, allow_blank=True, default="")


class AlternativesInput(serializers.Serializer):
    include_uncertain = serializers.BooleanField(default=True,
                                                 help_text="Also choose among undecided uncertain orderings.")
    time_budget = serializers.FloatField(default=30.0, help_text="Seconds allowed for the exhaustive search.")
    max_k_exact = serializers.IntegerField(default=40, help_text="Largest block of interacting items searched exactly.")


class ChoiceInput(serializers.Serializer):
    job = serializers.UUIDField()
    index = serializers.IntegerField(min_value=0)
    message = serializers.CharField(required=False, allow_blank=True, default="")


class ValidityOut(serializers.Serializer):
    ok = serializers.BooleanField()
    revision = serializers.IntegerField()
    errors = serializers.IntegerField()
    warnings = serializers.IntegerField()
    issues = serializers.ListField(child=serializers.DictField())
    order = serializers.DictField()


class DiffOut(serializers.Serializer):
    to = serializers.IntegerField()
    diff = serializers.DictField()
    text = serializers.CharField()


DiffOut._declared_fields["from"] = serializers.IntegerField()


class MoveOnOut(serializers.Serializer):
    version = VersionOut()
    report = serializers.DictField()


class ReadingOut(serializers.Serializer):
    version = VersionOut()
    set_at = serializers.DateTimeField()
    set_by = serializers.CharField(source="set_by.username")


class JobOut(serializers.Serializer):
    id = serializers.UUIDField()
    kind = serializers.CharField()
    state = serializers.CharField()
    progress = serializers.FloatField()
    progress_detail = serializers.DictField()
    cancel_requested = serializers.BooleanField()
    created_at = serializers.DateTimeField()
    started_at = serializers.DateTimeField(allow_null=True)
    finished_at = serializers.DateTimeField(allow_null=True)
    params = serializers.DictField()
    result = serializers.JSONField(allow_null=True)
    error = serializers.JSONField(allow_null=True)
    log = serializers.ListField(child=serializers.DictField())
    url = serializers.SerializerMethodField()

    def get_url(self, obj) -> str:
        request = self.context.get("request")
        path = f"/api/v1/projects/{self.context['project_ref']}/jobs/{obj.pk}/"
        return request.build_absolute_uri(path) if request is not None else path


class ChoicesOut(serializers.Serializer):
    count = serializers.IntegerField()
    offset = serializers.IntegerField()
    limit = serializers.IntegerField()
    exact = serializers.BooleanField()
    results = serializers.ListField(child=serializers.DictField())
