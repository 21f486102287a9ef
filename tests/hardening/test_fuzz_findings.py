"""What the generated requests of the schema test found, each kept as an example of its own."""

from __future__ import annotations

from projects.models import ApiToken, Role
from tests.api.conftest import assert_error_body, url

EMPTY_SECTIONS = {name: [] for name in ("assignments", "equalities", "estimate", "evidence", "orderings", "phases",
                                        "set_aside", "uncertain")}


def test_a_question_whose_kind_is_an_object_is_refused_with_400(client_for, project):
    body = {"name": "Main", "content": {**EMPTY_SECTIONS, "questions": [{"kind": {}}]}}
    response = client_for(Role.ANALYST).post(url("VML24", "interpretations"), body, format="json")
    assert response.status_code == 400, response.content
    assert any(e["field"].startswith("questions[0]") for e in response.json()["errors"])


def test_revoking_a_token_named_by_something_other_than_a_number_is_not_found(client_for):
    response = client_for(Role.MANAGER).delete("/api/v1/tokens/null/")
    assert response.status_code == 404


def test_revoking_a_token_still_works_by_its_number(users, client_for):
    spare, _key = ApiToken.issue(users[Role.MANAGER], "spare")
    assert client_for(Role.MANAGER).delete(f"/api/v1/tokens/{spare.id}/").status_code == 204


def test_the_schema_documents_each_export_format_by_its_media_type(api):
    operation = api.get("/api/v1/schema/?format=json").json()["paths"]["/api/v1/projects/{project}/order/export.{fmt}"]
    assert {"text/csv", "application/graphml+xml", "text/vnd.graphviz", "application/json"} <= set(
        operation["get"]["responses"]["200"]["content"])


def test_the_schema_documents_the_content_schema_as_json_schema(api):
    operation = api.get("/api/v1/schema/?format=json").json()["paths"]["/api/v1/schemas/interpretation/"]
    assert "application/schema+json" in operation["get"]["responses"]["200"]["content"]
