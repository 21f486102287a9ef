"""The interpretation document's published JSON Schema: valid, served, and the one statement of its shape."""

from __future__ import annotations

import json
import math

import pytest
from drf_spectacular.generators import SchemaGenerator
from jsonschema import Draft202012Validator
from rest_framework.test import APIClient

from chronology.interpretations import content
from chronology.interpretations.content import ContentInvalid, validate
from chronology.interpretations.content_schema import schema

TWO_PHASES = [{"key": "a", "name": "A"}, {"key": "b", "name": "B"}]


def _codes(document) -> list[tuple[str, str]]:
    with pytest.raises(ContentInvalid) as caught:
        validate(document)
    return [(e["field"], e["code"]) for e in caught.value.errors]


def test_schema_file_is_a_valid_draft_2020_12_schema():
    # JSON Schema Draft 2020-12 (Wright, Andrews, Hutton & Dennis 2022), checked by jsonschema's meta-schema.
    Draft202012Validator.check_schema(schema())
    assert schema()["$schema"] == "https://json-schema.org/draft/2020-12/schema"


def test_the_service_lists_its_choices_from_the_schema():
    defs = schema()["$defs"]
    props = schema()["properties"]
    assert content.ARRANGEMENTS == tuple(defs["arrangement"]["enum"])
    assert content.QUESTION_KINDS == tuple(defs["questionKind"]["enum"])
    assert content.EQUALITY_DECISIONS == tuple(props["equalities"]["items"]["properties"]["decision"]["enum"])
    assert content.UNCERTAIN_DECISIONS == tuple(props["uncertain"]["items"]["properties"]["decision"]["enum"])
    assert content.EVIDENCE_USES == tuple(props["evidence"]["items"]["properties"]["use"]["enum"])
    assert content.SECTIONS == tuple(content.empty_document())


def test_canonical_documents_meet_the_schema_as_written():
    doc = validate({"phases": TWO_PHASES, "assignments": [{"context": 3, "phase": "a"}],
                    "questions": [{"kind": content.QUESTION_KINDS[0], "phase": "b", "label": " How long? "}]})
    assert list(Draft202012Validator(schema()).iter_errors(doc)) == []
    assert doc["questions"][0]["label"] == "How long?"


MALFORMED = [
    ("not-an-object", [], [("content", "invalid-type")]),
    ("section-not-a-list", {"estimate": {"a": 1}}, [("estimate", "invalid-type")]),
    ("item-not-an-object", {"assignments": [7]}, [("assignments[0]", "invalid-type")]),
    ("phase-key-missing", {"phases": [{"name": "A"}]}, [("phases[0].key", "invalid-key")]),
    ("phase-key-pattern", {"phases": [{"key": "-a", "name": "A"}]}, [("phases[0].key", "invalid-key")]),
    ("phase-name-too-long", {"phases": [{"key": "a", "name": "x" * 201}]}, [("phases[0].name", "too-long")]),
    ("unknown-field-in-item", {"phases": [{"key": "a", "name": "A", "colour": "red"}]},
     [("phases[0].colour", "unknown-field")]),
    ("negative-gap", {"phases": [{"key": "a", "name": "A", "to_next": {"arrangement": "sequential", "min_gap": -1}},
                                 {"key": "b", "name": "B"}]}, [("phases[0].to_next.min_gap", "invalid-number")]),
    ("context-as-float", {"estimate": [5.0]}, [("estimate[0]", "invalid-context")]),
    ("context-as-boolean", {"estimate": [True]}, [("estimate[0]", "invalid-context")]),
    ("context-as-label", {"estimate": ["1001"]}, [("estimate[0]", "unresolved-label")]),
    ("relationship-zero", {"uncertain": [{"relationship": 0, "decision": "accepted"}]},
     [("uncertain[0].relationship", "invalid-relationship")]),
    ("decision-missing", {"uncertain": [{"relationship": 4}]}, [("uncertain[0].decision", "invalid-choice")]),
    ("strict-not-boolean", {"orderings": [{"earlier": 1, "later": 2, "strict": "yes", "reason": "r"}]},
     [("orderings[0].strict", "invalid-type")]),
    ("prior-not-finite", {"evidence": [{"evidence": "determination:1", "use": "included", "outlier_prior": math.nan}]},
     [("evidence[0].outlier_prior", "invalid-probability")]),
    ("prior-missing", {"evidence": [{"evidence": "determination:1", "use": "included"}]},
     [("evidence[0].outlier_prior", "invalid-probability")]),
    ("question-kind-unknown", {"questions": [{"kind": "when"}]}, [("questions[0].kind", "invalid-choice")]),
    ("question-field-of-another-kind", {"phases": TWO_PHASES,
                                        "questions": [{"kind": content.QUESTION_KINDS[0], "phase": "a", "to": "x"}]},
     [("questions[0].to", "unknown-field")]),
    ("event-not-a-string", {"phases": TWO_PHASES, "questions": [{"kind": content.QUESTION_KINDS[1], "from": 3,
                                                                 "to": "context:4"}]},
     [("questions[0].from", "invalid-event")]),
]


@pytest.mark.parametrize("document, expected", [(d, e) for _, d, e in MALFORMED], ids=[n for n, _, _ in MALFORMED])
def test_malformed_documents_are_refused_at_their_path_with_a_stable_code(document, expected):
    assert _codes(document) == expected


def test_errors_carry_a_message_for_people():
    with pytest.raises(ContentInvalid) as caught:
        validate({"phases": [{"key": "a", "name": "A", "to_next": {"arrangement": "sideways"}}, {"key": "b", "name": "B"}]})
    (error,) = caught.value.errors
    assert error["message"] == "must be one of sequential, contiguous, overlapping"


@pytest.mark.django_db
def test_the_api_serves_the_schema_without_signing_in():
    response = APIClient().get("/api/v1/schemas/interpretation/")
    assert response.status_code == 200
    assert json.loads(response.content) == schema()


def test_the_openapi_description_shows_the_document_shape():
    components = SchemaGenerator().get_schema(request=None, public=True)["components"]["schemas"]
    shapes = [field for comp in components.values() for name, field in comp.get("properties", {}).items()
              if name == "content" and "properties" in field]
    assert shapes, "no request or response shows the content document's fields"
    assert set(shapes[0]["properties"]) == set(content.SECTIONS)
    assert shapes[0]["externalDocs"]["url"] == "/api/v1/schemas/interpretation/"
