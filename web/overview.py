"""Read-only summaries for the organisation's home page.

Every figure of every project comes from one annotated query (subqueries
per column), so the page costs the same few queries whatever the number
of projects and the size of their records.
"""

from __future__ import annotations

from django.db.models import Count, F, IntegerField, OuterRef, Q, Subquery, Value
from django.db.models.functions import Coalesce, Lower

from chronology.interpretations.models import Reading, Status, Version
from chronology.models import CheckReport
from chronology.runs.models import Run, RunState
from projects.models import ChangeLogEntry, Context, Project, Relationship

SORTS = {
    "code": ("code",),
    "-code": ("-code",),
    "name": (Lower("name"), "code"),
    "revision": ("revision", "code"),
    "-revision": ("-revision", "code"),
    "changed": (F("last_change_at").asc(nulls_first=True), "code"),
    "-changed": (F("last_change_at").desc(nulls_last=True), "code"),
    "contexts": ("context_count", "code"),
    "-contexts": ("-context_count", "code"),
    "problems": ("check_errors", "code"),
    "-problems": (F("check_errors").desc(nulls_last=True), "code"),
}


def _count(model, **extra):
    rows = (model.objects.filter(project=OuterRef("pk"), retracted_revision__isnull=True, **extra).order_by()
            .values("project").annotate(n=Count("pk")).values("n"))
    return Coalesce(Subquery(rows, output_field=IntegerField()), Value(0))


def projects_overview(organisation, *, search: str = "", sort: str = "code"):
    """The organisation's projects, each with its latest change, counts, check, current version and run."""
    last = ChangeLogEntry.objects.filter(project=OuterRef("pk")).order_by("-id")
    check = CheckReport.objects.filter(project=OuterRef("pk")).order_by("-revision")
    reading = Reading.objects.filter(project=OuterRef("pk"))
    run = Run.objects.filter(project=OuterRef("pk")).order_by("-created_at")
    qs = (Project.objects.filter(organisation=organisation)
          .annotate(
              last_change_at=Subquery(last.values("created_at")[:1]),
              last_change_by=Subquery(last.values("user_name")[:1]),
              last_change_device=Subquery(last.values("device")[:1]),
              context_count=_count(Context),
              relationship_count=_count(Relationship),
              check_revision=Subquery(check.values("revision")[:1]),
              check_errors=Subquery(check.values("summary__errors")[:1]),
              check_warnings=Subquery(check.values("summary__warnings")[:1]),
              current_version_id=Subquery(reading.values("version_id")[:1]),
              current_version_number=Subquery(reading.values("version__number")[:1]),
              current_version_name=Subquery(reading.values("version__interpretation__name")[:1]),
              current_version_status=Subquery(reading.values("version__status")[:1]),
              proposed_count=Coalesce(Subquery(
                  Version.objects.filter(project=OuterRef("pk"), status=Status.PROPOSED).order_by()
                  .values("project").annotate(n=Count("pk")).values("n"), output_field=IntegerField()), Value(0)),
              run_id=Subquery(run.values("id")[:1]),
              run_state=Subquery(run.values("state")[:1]),
              run_converged=Subquery(run.values("converged")[:1]),
              run_version_label=Subquery(run.values("version_label")[:1]),
          ))
    if search:
        qs = qs.filter(Q(code__icontains=search) | Q(name__icontains=search) | Q(description__icontains=search))
    return qs.order_by(*SORTS.get(sort, SORTS["code"]))


def needs_attention(organisation, limit: int = 20) -> dict:
    """Versions awaiting approval, runs that failed or did not converge, checks with problems."""
    proposed = (Version.objects.filter(project__organisation=organisation, status=Status.PROPOSED)
                .select_related("project", "interpretation", "author").order_by("-status_changed_at", "-id")[:limit])
    runs = (Run.objects.filter(project__organisation=organisation)
            .filter(Q(state=RunState.FAILED) | Q(state=RunState.DONE, converged=False))
            .select_related("project").order_by("-created_at")[:limit])
    latest_check = CheckReport.objects.filter(project=OuterRef("project")).order_by("-revision").values("revision")[:1]
    checks = (CheckReport.objects.filter(project__organisation=organisation, ok=False)
              .annotate(latest=Subquery(latest_check)).filter(revision=F("latest"))
              .select_related("project").defer("report").order_by("project__code")[:limit])
    return {"proposed": list(proposed), "runs": list(runs), "checks": list(checks)}
