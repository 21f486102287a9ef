"""Requests that used to end in a 500 answer with the API's JSON error body or a plain success."""

from __future__ import annotations

import pytest

from projects.models import Role
from tests.api.conftest import url

COLLECTIONS = ["contexts", "relationships", "sync", "runs"]
RUN = "00000000-0000-4000-8000-000000000001"  # no such run: the description needs none
DETAIL_ACTIONS = [("contexts", "1", "retract"), ("relationships", "1", "retract"), ("runs", RUN, "cancel"),
                  ("runs", RUN, "continue")]


@pytest.fixture
def manager(client_for):
    return client_for(Role.MANAGER)


@pytest.mark.parametrize("collection", COLLECTIONS)
def test_options_on_a_project_collection_describes_it(manager, project, collection):
    response = manager.options(url("VML24", collection))
    assert response.status_code == 200, response.content
    assert response.json()["name"]


@pytest.mark.parametrize("parts", DETAIL_ACTIONS, ids=["/".join(p) for p in DETAIL_ACTIONS])
def test_options_on_a_detail_action_describes_it(manager, project, parts):
    response = manager.options(url("VML24", *parts))
    assert response.status_code == 200, response.content


def test_options_on_the_curves_describes_them(manager, project):
    response = manager.options("/api/v1/curves/")
    assert response.status_code == 200, response.content


@pytest.mark.parametrize("collection", COLLECTIONS)
def test_the_browsable_api_renders_a_project_collection(manager, project, collection):
    response = manager.get(url("VML24", collection), HTTP_ACCEPT="text/html")
    assert response.status_code in (200, 405), response.content[:500]


@pytest.mark.parametrize("parts", DETAIL_ACTIONS, ids=["/".join(p) for p in DETAIL_ACTIONS])
def test_the_browsable_api_renders_a_detail_action(manager, project, parts):
    response = manager.get(url("VML24", *parts), HTTP_ACCEPT="text/html")
    assert response.status_code == 405, response.content[:500]


def test_the_browsable_api_renders_the_curves(manager, project):
    response = manager.get("/api/v1/curves/", HTTP_ACCEPT="text/html")
    assert response.status_code == 200, response.content[:500]


def test_a_check_posted_with_a_list_body_is_refused(client_for, project):
    response = client_for(Role.ANALYST).post(url("VML24", "checks"), [1, 2], format="json")
    assert response.status_code == 400, response.content
    assert response.json()["errors"][0]["field"] is None


def test_a_nul_byte_in_a_filter_is_refused(client_for, project):
    response = client_for(Role.VIEWER).get(url("VML24", "determinations") + "?lab_code=a%00b")
    assert response.status_code == 400, response.content
    assert response.json()["errors"][0]["field"] == "lab_code"


def test_a_nul_byte_in_the_project_code_is_not_found(client_for, project):
    response = client_for(Role.VIEWER).get("/api/v1/projects/VML%0024/contexts/")
    assert response.status_code == 404, response.content
    assert response.json()["code"] == "not-found"

