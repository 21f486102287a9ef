"""Shapes of evidence, curve and calibration input and output.

The serializers check shapes only (a number is a number); the write path
(``chronology.evidence.writes``) decides which values are allowed and names
the field it refuses.
"""

from __future__ import annotations

from rest_framework import serializers

from api.serializers.record import ContextRef
from chronology.evidence.models import CalendarDate, Terminus


class Ref(ContextRef):
    """An object named by its code or name (string) or id (integer)."""


def _number(**kwargs):
    return serializers.FloatField(required=False, allow_null=True, default=None, **kwargs)


class SampleInput(serializers.Serializer):
    uid = serializers.UUIDField(required=False, help_text="Client-generated id; a retry with it is a no-op.")
    context = ContextRef(help_text="The context the sample was taken from (label or id).")
    code = serializers.CharField(max_length=64, help_text="Sample number, unique in the project.")
    material = serializers.CharField(max_length=200)
    short_lived = serializers.BooleanField(default=False)
    notes = serializers.CharField(required=False, allow_blank=True, default="")


class SampleOut(serializers.Serializer):
    id = serializers.IntegerField()
    uid = serializers.UUIDField()
    context_id = serializers.IntegerField()
    context = serializers.CharField(help_text="Context label at the revision read.")
    code = serializers.CharField()
    material = serializers.CharField()
    short_lived = serializers.BooleanField()
    notes = serializers.CharField()
    created_revision = serializers.IntegerField()


class DeterminationInput(serializers.Serializer):
    uid = serializers.UUIDField(required=False)
    sample = Ref(help_text="Sample code or id.")
    lab_code = serializers.CharField(max_length=64, help_text="Unique across the organisation.")
    cra = _number(help_text="Conventional radiocarbon age, 14C yr BP (or give f14c).")
    cra_sigma = _number(help_text="One-sigma error of the age.")
    f14c = _number(help_text="F14C, stored as the primary value when given.")
    f14c_sigma = _number()
    delta13c = _number(help_text="δ13C, per mil.")
    curve = Ref(help_text="Calibration curve id or name.")
    delta_r = _number(help_text="Local reservoir offset ΔR, 14C yr (marine material).")
    delta_r_sigma = _number()
    marine_fraction = _number(help_text="Marine fraction 0..1 for mixed carbon sources.")
    marine_fraction_sigma = _number()
    marine_curve = Ref(required=False, allow_null=True, default=None, help_text="Marine curve for the mixture.")
    notes = serializers.CharField(required=False, allow_blank=True, default="")


class DeterminationOut(serializers.Serializer):
    id = serializers.IntegerField()
    uid = serializers.UUIDField()
    sample_id = serializers.IntegerField()
    sample = serializers.CharField(help_text="Sample code at the revision read.")
    lab_code = serializers.CharField()
    measured = serializers.CharField(help_text="'cra' or 'f14c': which value the laboratory reported.")
    cra = serializers.FloatField()
    cra_sigma = serializers.FloatField()
    f14c = serializers.FloatField(allow_null=True)
    f14c_sigma = serializers.FloatField(allow_null=True)
    delta13c = serializers.FloatField(allow_null=True)
    curve_id = serializers.IntegerField()
    curve = serializers.CharField()
    delta_r = serializers.FloatField(allow_null=True)
    delta_r_sigma = serializers.FloatField(allow_null=True)
    marine_fraction = serializers.FloatField(allow_null=True)
    marine_fraction_sigma = serializers.FloatField(allow_null=True)
    marine_curve_id = serializers.IntegerField(allow_null=True)
    marine_curve = serializers.CharField(allow_null=True)
    notes = serializers.CharField()
    created_revision = serializers.IntegerField()


class CalendarDateInput(serializers.Serializer):
    uid = serializers.UUIDField(required=False)
    sample = Ref(required=False, allow_null=True, default=None)
    context = ContextRef(required=False, allow_null=True, default=None)
    kind = serializers.ChoiceField(choices=CalendarDate.Kind.choices)
    mean = _number(help_text="Astronomical year (1 BC = 0) for a normal date.")
    sd = _number()
    start = _number(help_text="Astronomical year for a uniform range.")
    end = _number()
    method = serializers.CharField(required=False, allow_blank=True, max_length=100, default="")
    notes = serializers.CharField(required=False, allow_blank=True, default="")


class CalendarDateOut(serializers.Serializer):
    id = serializers.IntegerField()
    uid = serializers.UUIDField()
    sample_id = serializers.IntegerField(allow_null=True)
    sample = serializers.CharField(allow_null=True)
    context_id = serializers.IntegerField()
    context = serializers.CharField()
    kind = serializers.CharField()
    mean = serializers.FloatField(allow_null=True)
    sd = serializers.FloatField(allow_null=True)
    start = serializers.FloatField(allow_null=True)
    end = serializers.FloatField(allow_null=True)
    method = serializers.CharField()
    notes = serializers.CharField()
    text = serializers.CharField()
    created_revision = serializers.IntegerField()


class TerminusInput(serializers.Serializer):
    uid = serializers.UUIDField(required=False)
    context = ContextRef()
    kind = serializers.ChoiceField(choices=Terminus.Kind.choices)
    year = serializers.FloatField(help_text="Astronomical year of the bound.")
    year_end = _number(help_text="End of the find's date range, if any.")
    find = serializers.CharField(max_length=200)
    notes = serializers.CharField(required=False, allow_blank=True, default="")


class TerminusOut(serializers.Serializer):
    id = serializers.IntegerField()
    uid = serializers.UUIDField()
    context_id = serializers.IntegerField()
    context = serializers.CharField()
    kind = serializers.CharField()
    year = serializers.FloatField()
    year_end = serializers.FloatField(allow_null=True)
    find = serializers.CharField()
    notes = serializers.CharField()
    text = serializers.CharField()
    created_revision = serializers.IntegerField()


class AdHocDetermination(serializers.Serializer):
    label = serializers.CharField(required=False, allow_blank=True, default="")
    cra = serializers.FloatField()
    error = serializers.FloatField(help_text="One-sigma error of the age.")
    curve = Ref()
    delta_r = _number()
    delta_r_sigma = _number()
    marine_fraction = _number()
    marine_fraction_sigma = _number()
    marine_curve = Ref(required=False, allow_null=True, default=None)


class CalibrateInput(serializers.Serializer):
    determinations = serializers.ListField(child=serializers.IntegerField(), required=False, default=list,
                                           help_text="Ids of stored determinations.")
    values = AdHocDetermination(many=True, required=False, default=list)
    density = serializers.BooleanField(default=False, help_text="Include the density on the grid.")
    step = serializers.FloatField(required=False, allow_null=True, default=None, help_text="Grid step in years.")
    at = serializers.IntegerField(required=False, allow_null=True, default=None,
                                  help_text="Read stored determinations at this revision.")


class CurveImportInput(serializers.Serializer):
    name = serializers.CharField(required=False, allow_blank=True, default="", max_length=100)
    citation = serializers.CharField(required=False, allow_blank=True, default="")
    licence = serializers.CharField(required=False, allow_blank=True, default="")
    organisation = serializers.CharField(required=False, allow_null=True, allow_blank=True, default=None,
                                         help_text="Organisation slug; empty for a global curve.")
    max_step = serializers.FloatField(required=False, allow_null=True, default=None)
    table = serializers.CharField(required=False, allow_blank=True, trim_whitespace=False, default="",
                                  help_text="The comma-separated table (or upload it as 'file').")
    file = serializers.FileField(required=False, allow_null=True, default=None)


class CurveOut(serializers.Serializer):
    id = serializers.IntegerField()
    name = serializers.CharField()
    citation = serializers.CharField()
    licence = serializers.CharField()
    synthetic = serializers.BooleanField()
    organisation = serializers.CharField(allow_null=True)
    checksum = serializers.CharField()
    rows = serializers.IntegerField()
    cal_bp_range = serializers.ListField(child=serializers.FloatField())
    created_at = serializers.DateTimeField()
