"""The OpenAPI schema describes every interpretation route."""

from __future__ import annotations

from drf_spectacular.generators import SchemaGenerator


def test_schema_lists_the_interpretation_routes():
    paths = SchemaGenerator().get_schema(request=None, public=True)["paths"]
    base = "/api/v1/projects/{project}/"
    for tail in ("interpretations/", "versions/", "versions/{id}/", "versions/{id}/commit/", "versions/{id}/diff/",
                 "versions/{id}/alternatives/", "versions/{id}/move-on/", "reading/", "jobs/{id}/",
                 "jobs/{id}/choices/", "jobs/{id}/cancel/"):
        assert base + tail in paths, tail
    patch = paths[base + "versions/{id}/"]["patch"]
    assert any(p["name"] == "If-Match" and p["in"] == "header" for p in patch["parameters"])
