"""Bodies too deep or too large are refused with the API's JSON error body, never a 500 or Django's HTML."""

from __future__ import annotations

import json
import uuid

from projects.models import Context
from tests.api.conftest import assert_error_body, url


def _post_raw(client, path, raw: bytes, content_type="application/json"):
    return client.generic("POST", path, raw, content_type=content_type)


def test_twenty_thousand_nested_brackets_are_refused_as_too_deep(api, project):
    response = _post_raw(api, url("VML24", "sync"), b"[" * 20000 + b"]" * 20000)
    assert assert_error_body(response, 400, "too-deeply-nested")["limit"] == 32


def test_nesting_just_over_the_limit_is_refused(api, project, settings):
    settings.TELLSTACK_MAX_JSON_DEPTH = 4
    body = {"label": "1001", "kind": "deposit", "description": [[[["x"]]]]}
    response = _post_raw(api, url("VML24", "contexts"), json.dumps(body).encode())
    assert_error_body(response, 400, "too-deeply-nested")


def test_a_body_over_the_size_limit_is_refused_with_413(api, project, settings):
    settings.DATA_UPLOAD_MAX_MEMORY_SIZE = 10_000
    body = {"batch_id": str(uuid.uuid4()), "contexts": [{"label": f"C{i}", "kind": "deposit"} for i in range(1000)]}
    response = _post_raw(api, url("VML24", "sync"), json.dumps(body).encode())
    assert assert_error_body(response, 413, "body-too-large")["limit"] == 10_000
    assert not Context.objects.exists()


def test_a_form_body_over_the_size_limit_is_refused_with_the_json_body(api, project, settings):
    settings.DATA_UPLOAD_MAX_MEMORY_SIZE = 1_000
    response = _post_raw(api, "/api/v1/curves/", b"name=x&table=" + b"1,2,3%0A" * 500,
                         content_type="application/x-www-form-urlencoded")
    assert response["Content-Type"].startswith("application/json")
    assert_error_body(response, 413, "body-too-large")


def test_a_body_that_is_not_json_is_a_parse_error(api, project):
    assert_error_body(_post_raw(api, url("VML24", "contexts"), b"{label: 1001"), 400, "parse-error")


def test_nan_in_a_body_is_a_parse_error(api, project):
    response = _post_raw(api, url("VML24", "contexts"), b'{"label": "1001", "kind": "deposit", "top_level": NaN}')
    assert_error_body(response, 400, "parse-error")
