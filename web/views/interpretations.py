"""Interpretation versions: list, one version with its workflow actions, comparison of two, alternatives.

Every action calls ``chronology.interpretations.services`` (or
``alternatives``), the API's path, so it is checked and logged there; the
page checks the role first so a forced POST is refused with 403.
"""

from __future__ import annotations

from django.contrib import messages
from django.http import Http404, HttpResponseRedirect
from django.urls import reverse
from django.views.decorators.http import require_POST

from chronology.interpretations import alternatives, services
from chronology.interpretations.models import Reading, Status, Version
from chronology.models import Job
from projects.models import Role
from projects.record.errors import RecordError, RecordInvalid

from ..access import actor, require
from ..comparison import comparison
from .common import frame, project_page, query_without, refused, render_page

#: Which role each action needs (the API's ``action_roles``) and which status it starts from.
ACTIONS = {
    "commit": (Role.ANALYST, {Status.DRAFT}),
    "propose": (Role.ANALYST, {Status.COMMITTED}),
    "approve": (Role.MANAGER, {Status.PROPOSED}),
    "reject": (Role.MANAGER, {Status.PROPOSED}),
    "make-current": (Role.MANAGER, {Status.APPROVED}),
}


def _versions(project):
    return Version.objects.filter(project=project).select_related("interpretation", "author", "status_changed_by")


#: The large documents of a version, left out of lists (a version of a big site holds megabytes of them).
HEAVY = ("content", "validity")


def _version(project, version_id, *, light: bool = False) -> Version:
    qs = _versions(project).select_related("project")
    version = (qs.defer(*HEAVY) if light else qs).filter(pk=version_id).first()
    if version is None:
        raise Http404("no such version")
    return version


def _current_id(project):
    return Reading.objects.filter(project=project).values_list("version_id", flat=True).first()


@project_page
def versions(request, project):
    rows = list(_versions(project).defer(*HEAVY).order_by("interpretation__name", "-number"))
    return render_page(request, "web/versions.html", frame(
        request, project, "versions", rows=rows, current_id=_current_id(project),
        committed=[v for v in rows if v.status != Status.DRAFT],
    ))


@project_page
def version_detail(request, project, version_id: int):
    version = _version(project, version_id)
    allowed = {name.replace("-", "_"): version.status in starts and _may(project, role) for name, (role, starts) in ACTIONS.items()}
    content = version.content or {}
    phase_names = {p["key"]: p["name"] for p in content.get("phases", [])}
    counts = {}
    for a in content.get("assignments", []):
        counts[a["phase"]] = counts.get(a["phase"], 0) + 1
    return render_page(request, "web/version.html", frame(
        request, project, "versions", version=version, allowed=allowed, current_id=_current_id(project),
        phases=[{"name": p["name"], "key": p["key"], "contexts": counts.get(p["key"], 0),
                 "arrangement": (p.get("to_next") or {}).get("arrangement", "")} for p in content.get("phases", [])],
        content=content, phase_names=phase_names,
        others=_versions(project).defer(*HEAVY).exclude(pk=version.pk).order_by("-id")[:50],
        jobs=Job.objects.filter(project=project, kind=alternatives.JOB_KIND, params__version=version.pk)
        .order_by("-created_at")[:5],
    ))


def _may(project, role) -> bool:
    from ..access import can

    return can(project, role)


@project_page
@require_POST
def version_action(request, project, version_id: int, name: str):
    """commit / propose / approve / reject (reason required) / make-current, through the services."""
    if name not in ACTIONS:
        raise Http404("no such action")
    require(project, ACTIONS[name][0])
    version = _version(project, version_id)
    who = actor(request)
    reason = request.POST.get("reason", "").strip()
    try:
        if name == "commit":
            services.commit(version, who, message=request.POST.get("message") or None)
        elif name == "propose":
            services.propose(version, who)
        elif name == "approve":
            if not reason:
                raise RecordInvalid("give a reason for the approval", field="reason", code="required")
            services.approve(version, who, reason=reason)
            if request.POST.get("make_current"):
                services.make_current(version, who)
        elif name == "reject":
            services.reject(version, who, reason=reason)
        else:
            services.make_current(version, who)
        messages.success(request, f"{version}: {name.replace('-', ' ')} done.")
    except RecordError as exc:
        refused(request, exc)
    return HttpResponseRedirect(reverse("web:version", args=[project.organisation.slug, project.code, version.pk]))


@project_page
def compare(request, project):
    """Two versions side by side: the content difference and both phased diagrams, changed contexts marked."""
    rows = list(_versions(project).defer(*HEAVY).order_by("-id")[:200])
    a_id, b_id = request.GET.get("a", ""), request.GET.get("b", "")
    context = frame(request, project, "versions", rows=rows, a_id=a_id, b_id=b_id)
    if a_id.isdigit() and b_id.isdigit():
        # Their documents are read only if the comparison is not kept already.
        old, new = _version(project, int(a_id), light=True), _version(project, int(b_id), light=True)
        context.update(old=old, new=new, **comparison(old, new))
    return render_page(request, "web/compare.html", context)


@project_page
def alternatives_page(request, project, version_id: int):
    """The analysis of the version's undecided items: counts, and a page through the consistent choices."""
    version = _version(project, version_id)
    job = (Job.objects.filter(project=project, kind=alternatives.JOB_KIND, params__version=version.pk)
           .order_by("-created_at").first())
    listing, problem = None, None
    try:
        offset = max(0, int(request.GET.get("offset", 0)))
    except ValueError:
        offset = 0
    if job is not None and job.state == "done":
        try:
            listing = alternatives.choices(job, offset=offset, limit=20)
        except RecordError as exc:
            problem = exc.message
    return render_page(request, "web/alternatives.html", frame(
        request, project, "versions", version=version, job=job, listing=listing, problem=problem, offset=offset,
        next_offset=offset + 20, prev_offset=max(0, offset - 20), paging=query_without(request, "offset"),
    ))


@project_page
@require_POST
def alternatives_start(request, project, version_id: int):
    require(project, Role.ANALYST)
    version = _version(project, version_id)
    try:
        alternatives.start(version, actor(request), include_uncertain=bool(request.POST.get("include_uncertain")))
    except RecordError as exc:
        refused(request, exc)
    return HttpResponseRedirect(reverse("web:alternatives", args=[project.organisation.slug, project.code, version.pk]))
