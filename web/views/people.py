"""People and devices: one's own tokens; a manager's view of the organisation's people and tokens.

Every change goes through ``projects.people`` (the API's path too), which
checks the role and writes the organisation's people log.
"""

from __future__ import annotations

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.http import HttpResponseRedirect
from django.shortcuts import render
from django.urls import reverse
from django.views.decorators.http import require_POST

from api.middleware import current_request_id
from projects import people
from projects.models import Membership, PeopleLogEntry, Role
from projects.record.errors import RecordError, RecordNotFound

from ..access import organisation_for
from .common import refused


@login_required
def tokens(request):
    """The caller's own device tokens; a new key is shown once, right after it is made."""
    new_key = request.session.pop("web.new_token_key", None)
    rows = people.tokens_visible_to(request.user)
    return render(request, "web/tokens.html", {"tokens": rows, "new_key": new_key})


@login_required
@require_POST
def token_create(request):
    try:
        token, key = people.issue_token(request.user, request.POST.get("name", ""), request_id=current_request_id())
    except RecordError as exc:
        refused(request, exc)
        return HttpResponseRedirect(reverse("web:tokens"))
    request.session["web.new_token_key"] = {"name": token.name, "key": key}
    return HttpResponseRedirect(reverse("web:tokens"))


@login_required
@require_POST
def token_revoke(request, token_id: int):
    org = None
    if request.POST.get("organisation"):
        org = organisation_for(request, request.POST["organisation"])
    try:
        token = people.revoke_token(request.user, token_id, organisation=org, request_id=current_request_id())
    except RecordNotFound:
        from django.http import Http404

        raise Http404("no such token") from None
    messages.success(request, f"Token “{token.name}” revoked.")
    target = reverse("web:people", args=[org.slug]) if org else reverse("web:tokens")
    return HttpResponseRedirect(target)


@login_required
def people_page(request, org: str):
    """Members and their roles; managers also see every member's tokens and the people log."""
    organisation = organisation_for(request, org)
    manager = people.is_manager(request.user, organisation)
    members = Membership.objects.filter(organisation=organisation).select_related("user").order_by("user__username")
    context = {"organisation": organisation, "members": members, "manager": manager, "roles": Role.choices}
    if manager:
        context["tokens"] = people.tokens_visible_to(request.user, organisation)
        context["log"] = PeopleLogEntry.objects.filter(organisation=organisation).order_by("-id")[:50]
    return render(request, "web/people.html", context)


def _managed(request, org: str):
    organisation = organisation_for(request, org)
    if not people.is_manager(request.user, organisation):
        raise PermissionDenied("only managers change the organisation's people")
    return organisation


@login_required
@require_POST
def member_add(request, org: str):
    organisation = _managed(request, org)
    try:
        people.add_member(request.user, organisation, request.POST.get("username", ""), request.POST.get("role", ""),
                          password=request.POST.get("password", ""), request_id=current_request_id())
        messages.success(request, f"{request.POST.get('username')} added.")
    except RecordError as exc:
        refused(request, exc)
    return HttpResponseRedirect(reverse("web:people", args=[organisation.slug]))


@login_required
@require_POST
def member_role(request, org: str, membership_id: int):
    organisation = _managed(request, org)
    try:
        people.set_role(request.user, organisation, membership_id, request.POST.get("role", ""),
                        request_id=current_request_id())
        messages.success(request, "Role changed.")
    except RecordError as exc:
        refused(request, exc)
    return HttpResponseRedirect(reverse("web:people", args=[organisation.slug]))


@login_required
@require_POST
def member_remove(request, org: str, membership_id: int):
    organisation = _managed(request, org)
    try:
        people.remove_member(request.user, organisation, membership_id, request_id=current_request_id())
        messages.success(request, "Removed from the organisation.")
    except RecordError as exc:
        refused(request, exc)
    return HttpResponseRedirect(reverse("web:people", args=[organisation.slug]))
