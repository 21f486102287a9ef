"""A small phased site, built through the write paths, and signed-in clients per role.

The site is the runs tests' seven-context sequence with its evidence, plus:
the first interpretation committed and proposed, a second one committed and
proposed (so there are two versions to compare and one to approve), a stored
check, and one queued run (no chain sampled: pages show it without waiting).
"""

from __future__ import annotations

import pytest
from django.test import Client
from django.urls import reverse

from chronology.evidence.curves import forget as forget_curves
from chronology.interpretations import services
from chronology.order_service import store_check
from chronology.runs.service import start_inline
from projects.models import Role
from projects.record.changes import Actor
from tests.runs.conftest import SMALL, build_site

ALL_ROLES = [Role.VIEWER, Role.RECORDER, Role.ANALYST, Role.MANAGER]


@pytest.fixture(autouse=True)
def _media(settings, tmp_path):
    settings.MEDIA_ROOT = tmp_path / "media"
    forget_curves()
    yield
    forget_curves()


@pytest.fixture
def site(project, users):
    recorder = Actor(user=users[Role.RECORDER], device="test tablet")
    analyst = Actor(user=users[Role.ANALYST], device="test desk")
    built = build_site(project, recorder, analyst)
    first = services.propose(services.commit(built["draft"], analyst), analyst)
    content = dict(built["content"])
    content["assignments"] = [a for a in content["assignments"] if a["phase"] == "early"]
    _interp, draft = services.create_interpretation(project, analyst, name="Early only", content=content)
    second = services.propose(services.commit(draft, analyst), analyst)
    store_check(project, project.revision)
    run = start_inline(project, first, users[Role.ANALYST], **SMALL)
    project.refresh_from_db()
    built.update(first=first, second=second, run=run, project=project)
    return built


def signed_in(user) -> Client:
    client = Client()
    client.force_login(user)
    return client


@pytest.fixture
def web_client(users):
    def make(role):
        return signed_in(users[role])

    return make


def page_urls(site) -> dict[str, str]:
    """Every page of the site the tests know, by name."""
    project = site["project"]
    p = (project.organisation.slug, project.code)
    ctx = site["contexts"]["1003"].id
    first, second, run = site["first"], site["second"], site["run"]
    return {
        "project": reverse("web:project", args=p),
        "contexts": reverse("web:contexts", args=p),
        "contexts filtered": reverse("web:contexts", args=p) + "?area=A&kind=deposit&q=100&phase=early",
        "contexts at 1": reverse("web:contexts", args=p) + "?at=1",
        "context": reverse("web:context", args=(*p, ctx)),
        "relationships": reverse("web:relationships", args=p) + "?q=1003",
        "changes": reverse("web:changes", args=p),
        "changes at 3": reverse("web:changes", args=p) + "?at=3",
        "diagram": reverse("web:diagram", args=p),
        "diagram of version": reverse("web:diagram", args=p) + f"?version={first.pk}",
        "check": reverse("web:check", args=p),
        "evidence": reverse("web:evidence", args=p),
        "determination": reverse("web:determination", args=(*p, site["determinations"][0].id)),
        "versions": reverse("web:versions", args=p),
        "version": reverse("web:version", args=(*p, first.pk)),
        "compare": reverse("web:compare", args=p) + f"?a={second.pk}&b={first.pk}",
        "alternatives": reverse("web:alternatives", args=(*p, first.pk)),
        "runs": reverse("web:runs", args=p),
        "run": reverse("web:run", args=(*p, run.pk)),
        "run progress": reverse("web:run-progress", args=(*p, run.pk)),
        "people": reverse("web:people", args=(project.organisation.slug,)),
    }


GLOBAL_PAGES = ["web:home", "web:curves", "web:tokens", "web:password-change"]


@pytest.fixture(scope="session")
def live_server(django_db_setup, live_server):
    """pytest-django's live server, set up after the test database so it stops before that is dropped."""
    return live_server
