"""Fixtures for the API tests: URLs of the demo project and a few record objects."""

from __future__ import annotations

import pytest

from projects.record.changes import Actor
from tests.record.helpers import add_contexts, relate


def url(code: str, *parts) -> str:
    """``/api/v1/projects/{code}/<parts>/``."""
    tail = "/".join(str(p) for p in parts)
    return f"/api/v1/projects/{code}/{tail}/"


@pytest.fixture
def base(project):
    def make(*parts):
        return url(project.code, *parts)

    return make


@pytest.fixture
def foreign_record(other_project, outsider):
    """Two contexts and a relationship of another organisation's project."""
    actor = Actor(user=outsider, device="quillmoor tablet")
    contexts = add_contexts(other_project, actor, ["Q1", "Q2"])
    rel = relate(other_project, actor, "Q1", "above", "Q2")
    return {"contexts": contexts, "relationship": rel, "project": other_project}


def assert_error_body(response, status: int, code: str | None = None) -> dict:
    """The one error body of the API; returns its first error entry."""
    assert response.status_code == status, response.content
    body = response.json()
    assert set(body) >= {"status", "code", "message", "request_id", "errors"}
    assert body["status"] == status
    assert body["request_id"] == response["X-Request-ID"]
    assert body["errors"] and {"field", "code", "message"} <= set(body["errors"][0])
    if code is not None:
        assert body["code"] == code
    return body["errors"][0]
