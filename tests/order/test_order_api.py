"""The full check job, stored reports, the diagram and the exports through the API."""

from __future__ import annotations

import io
import xml.etree.ElementTree as ET

import networkx as nx
import pytest

from projects.models import Role
from tests.record.helpers import add_contexts, relate


@pytest.fixture
def small_site(project, actor):
    add_contexts(project, actor, ["1001", "1002", "1003", "1004"])
    relate(project, actor, "1001", "above", "1002")
    relate(project, actor, "1002", "above", "1003")
    relate(project, actor, "1001", "above", "1003")  # redundant
    relate(project, actor, "1004", "cuts", "1003")
    return project


def test_starting_a_check_runs_a_job_that_stores_the_report(small_site, client_for, django_capture_on_commit_callbacks):
    client = client_for(Role.ANALYST)
    with django_capture_on_commit_callbacks(execute=True):
        started = client.post("/api/v1/projects/VML24/checks/")
    assert started.status_code == 202
    assert started.data["revision"] == small_site.revision
    latest = client.get("/api/v1/projects/VML24/checks/latest/")
    assert latest.status_code == 200
    assert latest.data["ok"] is True
    assert latest.data["summary"]["redundant"] == 1


def test_the_report_lists_the_redundant_relationship_with_its_witness(small_site, client_for,
                                                                      django_capture_on_commit_callbacks):
    client = client_for(Role.ANALYST)
    with django_capture_on_commit_callbacks(execute=True):
        client.post("/api/v1/projects/VML24/checks/")
    report = client.get(f"/api/v1/projects/VML24/checks/{small_site.revision}/").data["report"]
    (item,) = report["redundant_relationships"]
    assert item["via_label"] == "1002"
    assert item["path_url"].endswith(f"/relationships/{item['id']}/implied-by/?at={small_site.revision}")


def _redundant_id(api):
    rels = api.get("/api/v1/projects/VML24/relationships/").data["results"]
    return next(r["id"] for r in rels if (r["later"], r["earlier"]) == ("1001", "1003"))


def test_the_full_path_of_a_redundant_relationship_is_served_on_request(small_site, api):
    response = api.get(f"/api/v1/projects/VML24/relationships/{_redundant_id(api)}/implied-by/")
    assert response.status_code == 200
    assert response.data["redundant"] is True
    steps = [(s["later_label"], s["earlier_label"]) for s in response.data["path"]]
    assert steps == [("1001", "1002"), ("1002", "1003")]


def test_a_direct_relationship_is_served_as_not_redundant_with_no_path(small_site, api):
    rels = api.get("/api/v1/projects/VML24/relationships/").data["results"]
    direct = next(r["id"] for r in rels if (r["later"], r["earlier"]) == ("1004", "1003"))
    response = api.get(f"/api/v1/projects/VML24/relationships/{direct}/implied-by/")
    assert response.status_code == 200
    assert response.data["redundant"] is False and response.data["path"] == []


def test_the_path_of_an_unknown_relationship_is_a_404_naming_the_field(small_site, api):
    response = api.get("/api/v1/projects/VML24/relationships/999999/implied-by/")
    assert response.status_code == 404
    assert response.json()["errors"][0]["field"] == "relationship"


def test_a_check_at_a_past_revision_sees_only_that_revision(small_site, client_for, django_capture_on_commit_callbacks):
    client = client_for(Role.ANALYST)
    with django_capture_on_commit_callbacks(execute=True):
        client.post("/api/v1/projects/VML24/checks/?at=1")
    report = client.get("/api/v1/projects/VML24/checks/1/").data["report"]
    assert report["context_count"] == 1


def test_the_diagram_is_well_formed_svg_naming_every_context_once(small_site, api):
    response = api.get("/api/v1/projects/VML24/order/diagram.svg")
    assert response.status_code == 200
    assert response["Content-Type"] == "image/svg+xml"
    root = ET.fromstring(response.content)
    texts = [t.text for t in root.iter("{http://www.w3.org/2000/svg}text")]
    for label in ("1001", "1002", "1003", "1004"):
        assert texts.count(label) == 1


def test_the_reduced_graphml_export_reads_back_in_networkx_without_the_redundant_edge(small_site, api):
    # Reference reader: networkx.read_graphml (GraphML, Brandes et al. 2013).
    response = api.get("/api/v1/projects/VML24/order/export.graphml?reduced=true")
    assert response.status_code == 200
    graph = nx.read_graphml(io.BytesIO(response.content))
    assert graph.number_of_nodes() == 4
    assert graph.number_of_edges() == 3


def test_an_unknown_export_format_is_a_404_with_the_known_formats(small_site, api):
    response = api.get("/api/v1/projects/VML24/order/export.xls")
    assert response.status_code == 404
    assert "graphml" in response.data["errors"][0]["formats"]


def test_another_organisations_diagram_and_checks_are_invisible(small_site, outsider):
    from tests.conftest import token_client

    client = token_client(outsider)
    for url in ("/api/v1/projects/VML24/order/diagram.svg", "/api/v1/projects/VML24/checks/latest/",
                "/api/v1/projects/VML24/order/export.csv"):
        assert client.get(url).status_code == 404
    assert client.post("/api/v1/projects/VML24/checks/").status_code == 404


def test_viewers_may_not_start_a_check(small_site, client_for):
    assert client_for(Role.VIEWER).post("/api/v1/projects/VML24/checks/").status_code == 403


def test_the_diagram_of_a_version_draws_its_phases_as_bands(small_site, client_for):
    from chronology.interpretations import services
    from projects.models import Context

    analyst = client_for(Role.ANALYST)
    ids = {c.label: c.id for c in Context.objects.filter(project=small_site)}
    content = {
        "phases": [{"key": "early", "name": "Early"}, {"key": "late", "name": "Late"}],
        "assignments": [{"context": ids["1003"], "phase": "early"}, {"context": ids["1002"], "phase": "early"},
                        {"context": ids["1001"], "phase": "late"}, {"context": ids["1004"], "phase": "late"}],
    }
    from projects.models import Role as R
    from projects.record.changes import Actor

    user = small_site.organisation.memberships.get(role=R.ANALYST).user
    _interp, version = services.create_interpretation(small_site, Actor(user=user), name="Two phases", content=content)
    response = analyst.get(f"/api/v1/projects/VML24/order/diagram.svg?version={version.pk}")
    assert response.status_code == 200
    texts = [t.text for t in ET.fromstring(response.content).iter("{http://www.w3.org/2000/svg}text")]
    assert "Early" in texts and "Late" in texts
