"""Shapes of record input and output.  The write path decides what is allowed."""

from __future__ import annotations

from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from projects.models.record import Certainty, ContextKind
from projects.record.writes import WORDINGS


class ContextInput(serializers.Serializer):
    uid = serializers.UUIDField(required=False, help_text="Client-generated id; a retry with it is a no-op.")
    label = serializers.CharField(max_length=64)
    kind = serializers.ChoiceField(choices=ContextKind.choices)
    description = serializers.CharField(required=False, allow_blank=True, default="")
    area = serializers.CharField(required=False, allow_blank=True, max_length=64, default="")
    top_level = serializers.FloatField(required=False, allow_null=True, default=None)
    base_level = serializers.FloatField(required=False, allow_null=True, default=None)


class ContextEdit(serializers.Serializer):
    label = serializers.CharField(max_length=64, required=False)
    kind = serializers.ChoiceField(choices=ContextKind.choices, required=False)
    description = serializers.CharField(required=False, allow_blank=True)
    area = serializers.CharField(required=False, allow_blank=True, max_length=64)
    top_level = serializers.FloatField(required=False, allow_null=True)
    base_level = serializers.FloatField(required=False, allow_null=True)
    message = serializers.CharField(required=False, allow_blank=True, default="", write_only=True)


class ContextOut(serializers.Serializer):
    id = serializers.IntegerField()
    uid = serializers.UUIDField()
    label = serializers.CharField()
    kind = serializers.CharField()
    description = serializers.CharField()
    area = serializers.CharField()
    top_level = serializers.FloatField(allow_null=True)
    base_level = serializers.FloatField(allow_null=True)
    created_revision = serializers.IntegerField()


@extend_schema_field({"oneOf": [{"type": "string"}, {"type": "integer"}]})
class ContextRef(serializers.Field):
    """A context named by its label (string) or id (integer)."""

    def to_internal_value(self, data):
        if isinstance(data, bool) or not isinstance(data, (str, int)):
            raise serializers.ValidationError("name a context by its label (string) or id (integer)")
        return data

    def to_representation(self, value):
        return value


class RelationshipInput(serializers.Serializer):
    uid = serializers.UUIDField(required=False)
    subject = ContextRef(help_text="The context the statement is about, e.g. '1004' in '1004 cuts 1002'.")
    type = serializers.ChoiceField(choices=WORDINGS, help_text="Inverse wordings (below, cut_by…) are stored canonically.")
    object = ContextRef(help_text="The other context.")
    certainty = serializers.ChoiceField(choices=Certainty.choices, default=Certainty.CERTAIN)
    note = serializers.CharField(required=False, allow_blank=True, default="")


class RelationshipOut(serializers.Serializer):
    id = serializers.IntegerField()
    uid = serializers.UUIDField()
    type = serializers.CharField(help_text="Canonical type: 'later <type> earlier'.")
    later = serializers.CharField()
    later_id = serializers.IntegerField()
    earlier = serializers.CharField()
    earlier_id = serializers.IntegerField()
    certainty = serializers.CharField()
    recorded_as = serializers.CharField()
    note = serializers.CharField()
    text = serializers.CharField()
    created_revision = serializers.IntegerField()


class RetractInput(serializers.Serializer):
    reason = serializers.CharField(min_length=1, max_length=2000)


class SyncInput(serializers.Serializer):
    batch_id = serializers.UUIDField()
    contexts = serializers.ListField(child=serializers.DictField(), required=False, default=list)
    relationships = serializers.ListField(child=serializers.DictField(), required=False, default=list)


class ChangeOut(serializers.Serializer):
    id = serializers.IntegerField()
    revision = serializers.IntegerField()
    created_at = serializers.DateTimeField()
    user = serializers.CharField(source="user_name")
    device = serializers.CharField()
    request_id = serializers.CharField()
    client_request_id = serializers.CharField()
    action = serializers.CharField()
    object_kind = serializers.CharField()
    object_id = serializers.IntegerField(allow_null=True)
    object_repr = serializers.CharField()
    before = serializers.JSONField(allow_null=True)
    after = serializers.JSONField(allow_null=True)
    message = serializers.CharField()


class RevisionOut(serializers.Serializer):
    number = serializers.IntegerField()
    digest = serializers.CharField()
    parent_digest = serializers.CharField()
    created_at = serializers.DateTimeField()
    user = serializers.CharField(source="user_name")
    device = serializers.CharField()
    summary = serializers.CharField()
