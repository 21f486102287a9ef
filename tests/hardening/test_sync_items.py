"""A sync item is checked by the same serializer as a single post: bad text or numbers are a 400 naming the item."""

from __future__ import annotations

import json
import uuid

import pytest

from projects.models import Context
from tests.api.conftest import assert_error_body, url


def _batch(**context_fields) -> dict:
    item = {"uid": str(uuid.uuid4()), "label": "1001", "kind": "deposit", **context_fields}
    ok = {"uid": str(uuid.uuid4()), "label": "1002", "kind": "deposit"}
    return {"batch_id": str(uuid.uuid4()), "contexts": [ok, item]}


def _post_raw(api, path, body: str):
    return api.generic("POST", path, body.encode("utf-8", "surrogatepass"), content_type="application/json")


@pytest.mark.parametrize(
    ("field", "raw_value", "code"),
    [
        ("label", '"10\\u000001"', "null-characters-not-allowed"),
        ("description", '"x\\udfff"', "surrogate-characters-not-allowed"),
        ("top_level", "1" + "0" * 400, "overflow"),
    ],
    ids=["nul-byte", "lone-surrogate", "four-hundred-digit-number"],
)
def test_a_bad_value_in_a_sync_item_is_refused_naming_index_and_uid(api, project, field, raw_value, code):
    body = _batch(**{field: "PLACEHOLDER"})
    text = json.dumps(body).replace('"PLACEHOLDER"', raw_value)
    error = assert_error_body(_post_raw(api, url("VML24", "sync"), text), 400, "batch-invalid")
    entries = [(i["collection"], i["index"], i["uid"], i["field"], i["code"]) for i in error["items"]]
    assert entries == [("contexts", 1, body["contexts"][1]["uid"], field, code)]
    assert not Context.objects.exists()


def test_the_same_value_posted_alone_is_refused_with_the_same_code(api, project):
    text = '{"label": "10\\u000001", "kind": "deposit"}'
    error = assert_error_body(_post_raw(api, url("VML24", "contexts"), text), 400)
    assert (error["field"], error["code"]) == ("label", "null-characters-not-allowed")
