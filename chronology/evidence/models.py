"""Dating evidence on the record, and the calibration curves it is read against.

Samples, radiocarbon determinations, calendar dates and termini are record
objects like contexts: append-only rows that carry the revision in which they
were created and, if so, retracted, with every version kept in
``RecordState`` (kinds ``sample``, ``determination``, ``calendar_date``,
``terminus``).  Only ``chronology.evidence.writes`` writes them.

Calibration curves are immutable reference data.  A ``CurveTable`` holds the
rows of one table once, keyed by the checksum of its numbers; a ``Curve`` is a
named, cited and licensed use of a table, either global (no organisation) or
belonging to one organisation.  Years are stored as astronomical years
(1 BC = 0), see ``chronology.engine.calendar_scales``.
"""

from __future__ import annotations

from django.conf import settings
from django.db import models
from django.db.models import Q

from projects.models import Context, Organisation
from projects.models.append_only import AppendOnlyModel, AppendOnlyQuerySet
from projects.models.record import RecordedObject


class CurveTable(AppendOnlyModel):
    """The rows of one calibration-curve table, stored once per checksum.

    ``rows`` is ``{"cal_bp": [...], "c14_bp": [...], "sigma": [...]}``,
    youngest first, exactly as the engine parsed them.
    """

    checksum = models.CharField(max_length=64, unique=True)
    n_rows = models.PositiveIntegerField()
    cal_bp_min = models.FloatField()
    cal_bp_max = models.FloatField()
    rows = models.JSONField()
    created_at = models.DateTimeField(auto_now_add=True)

    objects = AppendOnlyQuerySet.as_manager()

    def __str__(self) -> str:
        return f"curve table {self.checksum[:12]} ({self.n_rows} rows)"


class CurveQuerySet(AppendOnlyQuerySet):
    def visible_to_organisation(self, organisation_id) -> "CurveQuerySet":
        """Global curves and those of one organisation."""
        return self.filter(Q(organisation__isnull=True) | Q(organisation_id=organisation_id))

    def visible_to(self, user) -> "CurveQuerySet":
        """Global curves and those of the organisations ``user`` belongs to."""
        if user is None or not user.is_authenticated:
            return self.none()
        if user.is_superuser:
            return self.all()
        return self.filter(Q(organisation__isnull=True) | Q(organisation__memberships__user=user)).distinct()


class Curve(AppendOnlyModel):
    """A calibration curve as the unit uses it: a table with its name, citation and licence."""

    organisation = models.ForeignKey(
        Organisation, on_delete=models.PROTECT, null=True, blank=True, related_name="curves",
        help_text="Empty for a curve every organisation may use.",
    )
    name = models.CharField(max_length=100)
    citation = models.TextField()
    licence = models.TextField()
    synthetic = models.BooleanField(default=False, help_text="A generated test curve, not for dating real samples.")
    table = models.ForeignKey(CurveTable, on_delete=models.PROTECT, related_name="curves")
    created_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, blank=True,
                                   related_name="+")
    created_at = models.DateTimeField(auto_now_add=True)

    objects = CurveQuerySet.as_manager()

    class Meta:
        ordering = ["name", "id"]
        constraints = [
            models.UniqueConstraint(fields=["organisation", "name"], name="curve_name_unique_in_org"),
            models.UniqueConstraint(fields=["name"], condition=Q(organisation__isnull=True),
                                    name="global_curve_name_unique"),
        ]

    def __str__(self) -> str:
        return self.name

    @property
    def checksum(self) -> str:
        return self.table.checksum


class Sample(RecordedObject):
    """Material taken from a context for dating."""

    context = models.ForeignKey(Context, on_delete=models.PROTECT, related_name="+")
    code = models.CharField(max_length=64, help_text="Sample number, unique in the project.")
    material = models.CharField(max_length=200, help_text="e.g. charred cereal grain, animal bone, charcoal.")
    short_lived = models.BooleanField(default=False, help_text="Formed within a year or so of its death.")
    notes = models.TextField(blank=True)

    class Meta:
        ordering = ["project_id", "id"]
        constraints = [
            models.UniqueConstraint(fields=["project", "code"], condition=Q(retracted_revision__isnull=True),
                                    name="active_sample_code_unique"),
            models.UniqueConstraint(fields=["project", "uid"], name="sample_uid_unique"),
        ]

    def __str__(self) -> str:
        return self.code


class Determination(RecordedObject):
    """A radiocarbon measurement of a sample.

    F14C is the primary value when the laboratory reported it; the
    conventional radiocarbon age is then derived (Stuiver & Polach 1977).
    ``delta_r`` applies to the marine curve: to ``curve`` itself when there is
    no ``marine_fraction``, else to ``marine_curve`` in the mixture.
    """

    class Measured(models.TextChoices):
        CRA = "cra", "conventional radiocarbon age"
        F14C = "f14c", "F14C"

    organisation = models.ForeignKey(Organisation, on_delete=models.PROTECT, related_name="+")
    sample = models.ForeignKey(Sample, on_delete=models.PROTECT, related_name="determinations")
    lab_code = models.CharField(max_length=64, help_text="Laboratory code, unique across the organisation.")
    measured = models.CharField(max_length=4, choices=Measured.choices)
    cra = models.FloatField(help_text="Conventional radiocarbon age, 14C yr BP.")
    cra_sigma = models.FloatField(help_text="One-sigma error of the age.")
    f14c = models.FloatField(null=True, blank=True)
    f14c_sigma = models.FloatField(null=True, blank=True)
    delta13c = models.FloatField(null=True, blank=True, help_text="δ13C in per mil.")
    curve = models.ForeignKey(Curve, on_delete=models.PROTECT, related_name="+")
    delta_r = models.FloatField(null=True, blank=True)
    delta_r_sigma = models.FloatField(null=True, blank=True)
    marine_fraction = models.FloatField(null=True, blank=True)
    marine_fraction_sigma = models.FloatField(null=True, blank=True)
    marine_curve = models.ForeignKey(Curve, on_delete=models.PROTECT, null=True, blank=True, related_name="+")
    notes = models.TextField(blank=True)

    class Meta:
        ordering = ["project_id", "id"]
        constraints = [
            models.UniqueConstraint(fields=["organisation", "lab_code"], condition=Q(retracted_revision__isnull=True),
                                    name="active_lab_code_unique_in_org"),
            models.UniqueConstraint(fields=["project", "uid"], name="determination_uid_unique"),
        ]

    def __str__(self) -> str:
        return self.lab_code


class CalendarDate(RecordedObject):
    """A calendar date of a sample or a context: a normal ``mean ± sd`` or a uniform range."""

    class Kind(models.TextChoices):
        NORMAL = "normal", "mean and standard deviation"
        UNIFORM = "uniform", "uniform range"

    sample = models.ForeignKey(Sample, on_delete=models.PROTECT, null=True, blank=True, related_name="+")
    context = models.ForeignKey(Context, on_delete=models.PROTECT, related_name="+")
    kind = models.CharField(max_length=8, choices=Kind.choices)
    mean = models.FloatField(null=True, blank=True)
    sd = models.FloatField(null=True, blank=True)
    start = models.FloatField(null=True, blank=True)
    end = models.FloatField(null=True, blank=True)
    method = models.CharField(max_length=100, blank=True, help_text="e.g. dendrochronology, documentary.")
    notes = models.TextField(blank=True)

    class Meta:
        ordering = ["project_id", "id"]
        constraints = [models.UniqueConstraint(fields=["project", "uid"], name="calendar_date_uid_unique")]


class Terminus(RecordedObject):
    """A terminus post quem or ante quem for a context from a datable find."""

    class Kind(models.TextChoices):
        POST_QUEM = "post_quem", "terminus post quem"
        ANTE_QUEM = "ante_quem", "terminus ante quem"

    context = models.ForeignKey(Context, on_delete=models.PROTECT, related_name="+")
    kind = models.CharField(max_length=9, choices=Kind.choices)
    year = models.FloatField(help_text="The bound, astronomical year.")
    year_end = models.FloatField(null=True, blank=True,
                                 help_text="End of the find's date range (e.g. an issue period), if any.")
    find = models.CharField(max_length=200, help_text="e.g. a coin and its catalogue entry.")
    notes = models.TextField(blank=True)

    class Meta:
        ordering = ["project_id", "id"]
        constraints = [models.UniqueConstraint(fields=["project", "uid"], name="terminus_uid_unique")]
