"""The run report shows the latest weighing that included the run's version, with the caution."""

from __future__ import annotations

from types import SimpleNamespace

import pytest
from django.template.loader import render_to_string

from chronology.runs.report_weighing import weighing_for_report
from projects.models import Role

from .conftest import QUICK

pytestmark = pytest.mark.django_db(transaction=False)


@pytest.fixture
def weighed(readings, client_for, project, django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        response = client_for(Role.ANALYST).post(
            f"/api/v1/projects/{project.code}/weighings/",
            {"versions": [readings["sequential"].pk, readings["contiguous"].pk], "settings": QUICK, "seed": 5},
            format="json")
    assert response.status_code == 202, response.json()
    return readings


def test_a_run_of_a_weighed_version_reports_every_reading_of_the_weighing(weighed, project):
    found = weighing_for_report(SimpleNamespace(project=project, version_id=weighed["sequential"].pk))
    assert sorted(r["name"] for r in found["rows"]) == ["Contiguous v1", "Sequential v1"]
    assert [r["name"] for r in found["rows"] if r["this_run"]] == ["Sequential v1"]
    assert "depend on the priors" in found["caution"]


def test_a_run_of_a_version_never_weighed_reports_no_weighing(weighed, project):
    assert weighing_for_report(SimpleNamespace(project=project, version_id=weighed["first"].pk)) is None


def test_the_report_section_names_the_method_and_the_caution(weighed, project):
    found = weighing_for_report(SimpleNamespace(project=project, version_id=weighed["contiguous"].pk))
    html = render_to_string("runs/report_weighing.html", {"weighing": found})
    assert "Contiguous v1 (this run&#x27;s version)" in html or "Contiguous v1 (this run's version)" in html
    assert "stepping-stone" in html and "depend on the priors" in html
