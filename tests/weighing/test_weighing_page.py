"""The runs page shows the project's finished weighings, with the caution that Bayes factors depend on the priors."""

from __future__ import annotations

import pytest
from django.test import Client
from django.urls import reverse

from projects.models import Role

from .conftest import QUICK

pytestmark = pytest.mark.django_db(transaction=False)


def test_the_runs_page_lists_a_finished_weighing_with_its_caution(readings, client_for, users, project,
                                                                  django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        response = client_for(Role.ANALYST).post(
            f"/api/v1/projects/{project.code}/weighings/",
            {"versions": [readings["sequential"].pk, readings["contiguous"].pk], "settings": QUICK, "seed": 5},
            format="json")
    assert response.status_code == 202
    viewer = Client()
    viewer.force_login(users[Role.VIEWER])
    page = viewer.get(reverse("web:runs", args=(project.organisation.slug, project.code)))
    assert page.status_code == 200, page.status_code
    html = page.content.decode()
    assert 'id="weighings"' in html and "Sequential v1" in html and "Contiguous v1" in html
    assert "depend on the priors" in html
