"""The organisation's home: every project at a glance and what needs attention."""

from __future__ import annotations

from django.contrib.auth.decorators import login_required
from django.http import HttpResponseRedirect
from django.shortcuts import render
from django.urls import reverse
from django.views.decorators.http import require_POST

from ..access import SESSION_ORG, current_organisation, organisation_for, org_role
from ..overview import SORTS, needs_attention, projects_overview
from .common import query_without


@login_required
def home(request):
    org = current_organisation(request)
    if org is None:
        return render(request, "web/no_organisation.html", status=200)
    search = request.GET.get("q", "").strip()
    sort = request.GET.get("sort", "code")
    if sort not in SORTS:
        sort = "code"
    rows = list(projects_overview(org, search=search, sort=sort))
    return render(request, "web/home.html", {
        "organisation": org, "role": org_role(request.user, org), "rows": rows, "search": search, "sort": sort,
        "attention": needs_attention(org), "sort_query": query_without(request, "sort"),
    })


@login_required
@require_POST
def switch_organisation(request):
    """Choose the organisation the home page and the people pages show."""
    org = organisation_for(request, request.POST.get("organisation", ""))
    request.session[SESSION_ORG] = org.slug
    return HttpResponseRedirect(reverse("web:home"))
