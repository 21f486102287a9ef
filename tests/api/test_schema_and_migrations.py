"""The API describes itself and the models match their migrations."""

from __future__ import annotations

import io

from django.core.management import call_command
from drf_spectacular.drainage import GENERATOR_STATS
from drf_spectacular.generators import SchemaGenerator
from drf_spectacular.validation import validate_schema

RECORD_SOURCES = ("api/views/record.py", "api/views/tenancy.py", "api/serializers/")


def test_the_openapi_schema_is_served(api, project):
    response = api.get("/api/v1/schema/", HTTP_ACCEPT="application/json")
    assert response.status_code == 200
    schema = response.json()
    assert "/api/v1/projects/{project}/relationships/" in schema["paths"]
    assert "/api/v1/projects/{project}/sync/" in schema["paths"]


def test_the_openapi_schema_is_valid_openapi(db):
    schema = SchemaGenerator().get_schema(request=None, public=True)
    validate_schema(schema)  # drf_spectacular.validation: raises on an invalid OpenAPI 3 document


def test_the_record_and_tenancy_views_generate_without_schema_errors(db):
    GENERATOR_STATS.reset()
    with GENERATOR_STATS.silence():
        SchemaGenerator().get_schema(request=None, public=True)
    errors = [msg for msg in GENERATOR_STATS._error_cache if any(src in msg for src in RECORD_SOURCES)]
    GENERATOR_STATS.reset()
    assert errors == []


def test_no_migrations_are_missing(db):
    out = io.StringIO()
    call_command("makemigrations", "--check", "--dry-run", stdout=out)  # SystemExit(1) if any are missing


def test_the_record_models_match_their_migrations(db):
    call_command("makemigrations", "projects", "--check", "--dry-run", stdout=io.StringIO())
