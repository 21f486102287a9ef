"""The API of a finished run's outputs: report, CSV, densities and comparisons; refusals and tenancy."""

from __future__ import annotations

import pytest

from projects.models import Role

from .finished import QUICK

pytestmark = pytest.mark.django_db


def _runs(project, *parts, query=""):
    tail = "".join(f"{p}/" for p in parts)
    return f"/api/v1/projects/{project.code}/runs/{tail}" + (f"?{query}" if query else "")


def _submit(client, site, project, capture, seed):
    with capture(execute=True):
        response = client.post(_runs(project), {"version": site["version"].pk, "seed": seed, **QUICK}, format="json")
    assert response.status_code == 202, response.json()
    return response.json()["id"]


@pytest.fixture
def run_id(site, client_for, project, django_capture_on_commit_callbacks):
    return _submit(client_for(Role.ANALYST), site, project, django_capture_on_commit_callbacks, 11)


def _body(response) -> bytes:
    return b"".join(response.streaming_content) if response.streaming else response.content


def test_a_viewer_reads_the_html_report_with_the_site_and_the_synthetic_warning(run_id, client_for, project):
    response = client_for(Role.VIEWER).get(_runs(project, run_id, "report.html"))
    assert response.status_code == 200 and response["Content-Type"].startswith("text/html")
    body = _body(response).decode()
    assert "Vellmarsh Lane" in body and "SYNTHETIC calibration curve: not for dating real samples." in body


def test_the_pdf_report_is_a_pdf(run_id, client_for, project):
    response = client_for(Role.VIEWER).get(_runs(project, run_id, "report.pdf"))
    assert response.status_code == 200 and response["Content-Type"] == "application/pdf"
    assert _body(response)[:5] == b"%PDF-"


def test_the_ranges_csv_starts_with_its_header(run_id, client_for, project):
    response = client_for(Role.VIEWER).get(_runs(project, run_id, "ranges.csv"))
    assert response.status_code == 200 and response["Content-Type"].startswith("text/csv")
    assert _body(response).decode().startswith("event,phase,kind,level,from,to,")


def test_densities_of_chosen_events_are_drawn_by_label(run_id, client_for, project):
    response = client_for(Role.VIEWER).get(_runs(project, run_id, "densities.svg", query="events=1003,Close of Early"))
    assert response.status_code == 200 and response["Content-Type"] == "image/svg+xml"
    body = _body(response)
    assert b"Close of Early" in body and b"SYNTHETIC" in body


def test_an_unknown_event_for_the_densities_is_a_400_naming_the_parameter(run_id, client_for, project):
    response = client_for(Role.VIEWER).get(_runs(project, run_id, "densities.png", query="events=9999"))
    assert response.status_code == 400
    assert response.json()["errors"][0]["field"] == "events"


def test_two_runs_are_compared_with_the_differences_of_their_medians(
        run_id, site, client_for, project, django_capture_on_commit_callbacks):
    other = _submit(client_for(Role.ANALYST), site, project, django_capture_on_commit_callbacks, 12)
    body = client_for(Role.VIEWER).get(_runs(project, run_id, "compare", query=f"with={other}")).json()
    assert body["first"]["run"] == run_id and body["second"]["run"] == other
    row = body["events"][0]
    assert row["median_difference"] == pytest.approx(row["second_median"] - row["first_median"])
    figure = client_for(Role.VIEWER).get(body["figure_svg"])
    assert figure.status_code == 200 and b"Two runs compared" in _body(figure)


def test_compare_without_the_other_run_is_a_400_naming_with(run_id, client_for, project):
    response = client_for(Role.VIEWER).get(_runs(project, run_id, "compare"))
    assert response.status_code == 400 and response.json()["errors"][0]["field"] == "with"


def test_a_run_of_another_organisation_is_not_found(run_id, project, other_project, outsider):
    from tests.conftest import token_client

    client = token_client(outsider)
    assert client.get(_runs(project, run_id, "report.pdf")).status_code == 404
    assert client.get(_runs(other_project, run_id, "report.html")).status_code == 404


def test_the_report_of_an_unfinished_run_is_a_409(site, client_for, project):
    response = client_for(Role.ANALYST).post(_runs(project), {"version": site["version"].pk, "seed": 3, **QUICK},
                                             format="json")  # commit callbacks not run: the run stays queued
    assert response.status_code == 202
    refused = client_for(Role.VIEWER).get(_runs(project, response.json()["id"], "report.html"))
    assert refused.status_code == 409 and refused.json()["code"] == "run-not-done"
