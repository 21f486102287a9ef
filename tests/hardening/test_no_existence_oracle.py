"""A context of another organisation's project is answered exactly as a missing one.

Whoever names a context id that belongs elsewhere must learn nothing about it:
the status, code, field and message are those of an id that exists nowhere.
"""

from __future__ import annotations

import uuid

import pytest

from projects.models import Context
from tests.api.conftest import url
from tests.api.conftest import foreign_record  # noqa: F401  (fixture)
from tests.record.helpers import add_contexts


def _requests(ref: int) -> dict:
    return {
        "context detail": ("get", url("VML24", "contexts", ref), None),
        "context edit": ("patch", url("VML24", "contexts", ref), {"description": "x"}),
        "context retract": ("post", url("VML24", "contexts", ref, "retract"), {"reason": "x"}),
        "relationship subject": ("post", url("VML24", "relationships"), {"subject": ref, "type": "above", "object": "1001"}),
        "relationship object": ("post", url("VML24", "relationships"), {"subject": "1001", "type": "above", "object": ref}),
        "sample": ("post", url("VML24", "samples"), {"context": ref, "code": "S1", "material": "charcoal"}),
        "terminus": ("post", url("VML24", "termini"),
                     {"context": ref, "kind": "post_quem", "year": 1200, "find": "coin"}),
        "calendar date": ("post", url("VML24", "calendar-dates"), {"context": ref, "kind": "normal", "mean": 1200, "sd": 20}),
        "sync relationship": ("post", url("VML24", "sync"), {
            "batch_id": str(uuid.uuid4()),
            "relationships": [{"uid": "00000000-0000-4000-8000-000000000001", "subject": ref, "type": "above",
                               "object": "1001"}]}),
    }


def _answer(response, ref: int) -> tuple:
    body = response.json()
    errors = [{k: str(v).replace(str(ref), "<ref>") for k, v in e.items()} for e in body.get("errors", [])]
    return response.status_code, body.get("code"), errors


@pytest.mark.parametrize("name", list(_requests(0)))
def test_a_foreign_context_id_gets_the_answer_of_a_missing_one(name, client_for, project, actor, foreign_record):
    from projects.models import Role

    add_contexts(project, actor, ["1001"])
    client = client_for(Role.MANAGER)
    foreign = foreign_record["contexts"]["Q1"].id
    missing = Context.objects.order_by("-pk").first().pk + 1000
    method, path, body = _requests(foreign)[name]
    foreign_answer = _answer(getattr(client, method)(path, body, format="json"), foreign)
    method, path, body = _requests(missing)[name]
    missing_answer = _answer(getattr(client, method)(path, body, format="json"), missing)
    assert foreign_answer[0] >= 400 and foreign_answer == missing_answer
