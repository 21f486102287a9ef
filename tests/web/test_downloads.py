"""A finished run's downloads open from its page with the browser's session, and never for another organisation."""

from __future__ import annotations

import re

import pytest
from django.urls import reverse

from chronology.runs.models import Run
from projects.models import Role

from .conftest import signed_in


@pytest.fixture
def finished_run_page(site, web_client, django_capture_on_commit_callbacks):
    project, first = site["project"], site["first"]
    args = (project.organisation.slug, project.code)
    with django_capture_on_commit_callbacks(execute=True):
        web_client(Role.ANALYST).post(reverse("web:run-submit", args=args),
                                      {"version": first.pk, "chains": 1, "iterations": 100, "warmup": 0})
    run = Run.objects.exclude(pk=site["run"].pk).get()
    return reverse("web:run", args=(*args, run.pk))


def _downloads(html: str) -> list[str]:
    return re.findall(r'href="(/api/v1/projects/[^"]+/runs/[^"]+/(?:results|samples|model|plot\.svg|plot\.png)/)"', html)


def test_every_download_of_a_finished_run_opens_for_a_viewer_signed_in_to_the_pages(finished_run_page, web_client):
    client = web_client(Role.VIEWER)
    links = _downloads(client.get(finished_run_page).content.decode())
    assert len(links) == 5
    assert {link: client.get(link).status_code for link in links} == {link: 200 for link in links}


def test_no_download_of_the_run_opens_for_the_other_organisation(finished_run_page, web_client, outsider):
    links = _downloads(web_client(Role.VIEWER).get(finished_run_page).content.decode())
    client = signed_in(outsider)
    assert {link: client.get(link).status_code for link in links} == {link: 404 for link in links}
