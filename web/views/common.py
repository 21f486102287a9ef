"""What the project pages share: the project frame, ``?at=``, paging and refusals shown as messages."""

from __future__ import annotations

from functools import wraps

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.paginator import Paginator
from django.http import HttpResponseRedirect
from django.shortcuts import render

from chronology.engine.errors import EngineError
from chronology.runs.models import Run
from projects.record import reads
from projects.record.errors import RecordError

from ..access import can, project_for

PAGE_SIZE = 50


def project_page(view):
    """Sign-in required; the project (404 if not visible) is passed as ``project``."""

    @login_required
    @wraps(view)
    def wrapper(request, org, code, *args, **kwargs):
        project = project_for(request, org, code)
        request.project = project
        try:
            return view(request, project, *args, **kwargs)
        except RecordError as exc:
            # A bad ``?at=`` or id in a read: the API's status and reason, as a page.
            return render(request, "400.html", {"error": exc}, status=exc.status)

    return wrapper


def revision_of(request, project) -> int | None:
    """The revision asked for with ``?at=``, or None for the current record (a bad one is refused as the API does)."""
    at = request.GET.get("at")
    if at in (None, ""):
        return None
    return reads.resolve_revision(project, at)


def unconverged_run(project):
    """The project's latest finished run if it has not converged (for the banner)."""
    run = (Run.objects.filter(project=project, state="done").order_by("-created_at")
           .only("id", "converged", "version_label", "created_at").first())
    return run if run is not None and run.converged is False else None


def frame(request, project, section: str, **extra) -> dict:
    roles = {name: can(project, name) for name in ("recorder", "analyst", "manager")}
    at = request.GET.get("at", "")
    return {"project": project, "section": section, "may": roles, "banner_run": unconverged_run(project),
            "org_slug": project.organisation.slug, "at": at if at.isdigit() else "",
            "role": getattr(project, "page_role", None), **extra}


def page(request, rows, size: int = PAGE_SIZE):
    paginator = Paginator(rows, size)
    return paginator.get_page(request.GET.get("page"))


def query_without(request, *names) -> str:
    """The current query string without ``names`` (for paging and sorting links)."""
    params = request.GET.copy()
    for name in names:
        params.pop(name, None)
    return params.urlencode()


def refused(request, exc: Exception) -> None:
    """Show why a service refused an action (the same reason the API gives)."""
    if isinstance(exc, RecordError):
        messages.error(request, f"Refused ({exc.code}): {exc.message}")
    elif isinstance(exc, EngineError):
        messages.error(request, f"Refused: {exc}")
    else:
        messages.error(request, f"Refused: {getattr(exc, 'message', exc)}")


def back(request, fallback: str) -> HttpResponseRedirect:
    return HttpResponseRedirect(fallback)


def render_page(request, template: str, context: dict, status: int = 200):
    return render(request, template, context, status=status)


__all__ = ["project_page", "revision_of", "frame", "page", "query_without", "refused", "back", "render_page",
           "RecordError"]
