"""Filters over record states (current or past revision) with django-filter."""

import django_filters
from django.db.models import Q

from projects.models import RecordState


class ContextStateFilter(django_filters.FilterSet):
    kind = django_filters.CharFilter(field_name="data__kind", help_text="Context kind.")
    area = django_filters.CharFilter(field_name="data__area", help_text="Area or trench.")
    label = django_filters.CharFilter(field_name="data__label", help_text="Exact label.")

    class Meta:
        model = RecordState
        fields = []


class RelationshipStateFilter(django_filters.FilterSet):
    type = django_filters.CharFilter(field_name="data__type", help_text="Canonical type.")
    certainty = django_filters.CharFilter(field_name="data__certainty")
    context = django_filters.NumberFilter(method="filter_context", help_text="Either end, by context id.")

    class Meta:
        model = RecordState
        fields = []

    def filter_context(self, queryset, name, value):
        return queryset.filter(Q(data__later_id=int(value)) | Q(data__earlier_id=int(value)))


class ChangeFilter(django_filters.FilterSet):
    since = django_filters.NumberFilter(field_name="revision", lookup_expr="gt", help_text="Entries after this revision.")
    after = django_filters.NumberFilter(
        field_name="id", lookup_expr="gt",
        help_text="Entries after this entry id: a cursor that also catches actions logged without a new "
                  "revision (interpretation workflow).",
    )
    action = django_filters.CharFilter(field_name="action", lookup_expr="startswith")
    object_kind = django_filters.CharFilter(field_name="object_kind")
