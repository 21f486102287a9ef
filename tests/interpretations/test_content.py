"""The content document's validator: every problem at its exact path with a stable code."""

from __future__ import annotations

import json

import pytest

from chronology.interpretations.content import ContentInvalid, content_hash, resolve_labels, validate


def _errors(document) -> list[tuple[str, str]]:
    with pytest.raises(ContentInvalid) as caught:
        validate(document)
    return [(e["field"], e["code"]) for e in caught.value.errors]


def test_empty_document_is_valid_and_has_every_section():
    assert validate({}) == {name: [] for name in ("phases", "assignments", "equalities", "set_aside", "uncertain",
                                                  "orderings", "evidence", "estimate", "questions")}


def test_unknown_top_level_section_is_reported_by_name():
    assert _errors({"phasing": []}) == [("phasing", "unknown-field")]


def test_phase_errors_name_the_phase_and_field():
    doc = {"phases": [
        {"key": "a", "name": "A", "to_next": {"arrangement": "sideways"}},
        {"key": "a", "name": ""},
        {"key": "c", "name": "C", "to_next": {"arrangement": "sequential"}},
    ]}
    assert _errors(doc) == [
        ("phases[0].to_next.arrangement", "invalid-choice"),
        ("phases[1].key", "duplicate-phase"),
        ("phases[1].name", "required"),
        ("phases[2].to_next", "last-phase-arrangement"),
    ]


def test_a_gap_belongs_only_to_a_sequential_arrangement():
    doc = {"phases": [{"key": "a", "name": "A", "to_next": {"arrangement": "contiguous", "min_gap": 5}},
                      {"key": "b", "name": "B"}]}
    assert _errors(doc) == [("phases[0].to_next.min_gap", "gap-needs-sequential")]


def test_missing_arrangement_defaults_to_sequential_without_gap():
    doc = validate({"phases": [{"key": "a", "name": "A"}, {"key": "b", "name": "B"}]})
    assert doc["phases"][0]["to_next"] == {"arrangement": "sequential", "min_gap": None}
    assert doc["phases"][1]["to_next"] is None


def test_assignment_to_an_undefined_phase_and_twice_to_one_context():
    doc = {"phases": [{"key": "a", "name": "A"}],
           "assignments": [{"context": 5, "phase": "a"}, {"context": 5, "phase": "b"}, {"context": "1001", "phase": "a"}]}
    assert _errors(doc) == [
        ("assignments[1].phase", "unknown-phase"),
        ("assignments[1].context", "duplicate-assignment"),
        ("assignments[2].context", "unresolved-label"),
    ]


def test_decisions_are_checked_for_choice_duplicates_and_double_decisions():
    doc = {
        "equalities": [{"relationship": 3, "decision": "maybe"}, {"relationship": 4, "decision": "accepted"}],
        "uncertain": [{"relationship": 4, "decision": "rejected"}],
        "set_aside": [{"relationship": 4, "reason": "redundant"}, {"relationship": 9, "reason": " "}],
    }
    assert _errors(doc) == [
        ("equalities[0].decision", "invalid-choice"),
        ("uncertain[0].relationship", "decided-twice"),
        ("set_aside[0].relationship", "decided-twice"),
        ("set_aside[1].reason", "required"),
    ]


def test_orderings_need_two_different_contexts_and_a_reason():
    doc = {"orderings": [{"earlier": 3, "later": 3, "reason": "x"}, {"earlier": 1, "later": 2}]}
    assert _errors(doc) == [("orderings[0].later", "self-ordering"), ("orderings[1].reason", "required")]


def test_evidence_slots_check_reference_use_and_prior():
    doc = {"evidence": [
        {"evidence": "determination", "use": "included", "outlier_prior": 0.05},
        {"evidence": "determination:4", "use": "kept", "outlier_prior": 1.5},
        {"evidence": "determination:4", "use": "residual", "outlier_prior": True},
    ]}
    assert _errors(doc) == [
        ("evidence[0].evidence", "invalid-evidence-ref"),
        ("evidence[1].use", "invalid-choice"),
        ("evidence[1].outlier_prior", "invalid-probability"),
        ("evidence[2].evidence", "duplicate-evidence"),
        ("evidence[2].outlier_prior", "invalid-probability"),
    ]


def test_questions_reference_defined_phases_and_used_evidence():
    doc = {
        "phases": [{"key": "a", "name": "A"}],
        "evidence": [{"evidence": "determination:4", "use": "included", "outlier_prior": 0.05}],
        "questions": [
            {"kind": "duration", "phase": "z"},
            {"kind": "gap", "from": "phase:a:beginning", "to": "phase:a:middle"},
            {"kind": "precedence", "earlier": "evidence:determination:5", "later": "context:7"},
            {"kind": "precedence", "earlier": "context:7", "later": "context:7"},
            {"kind": "duration", "phase": "a"},
            {"kind": "duration", "phase": "a", "label": "again"},
        ],
    }
    assert _errors(doc) == [
        ("questions[0].phase", "unknown-phase"),
        ("questions[1].to", "invalid-event"),
        ("questions[2].earlier", "evidence-not-used"),
        ("questions[3].later", "same-event"),
        ("questions[5]", "duplicate-question"),
    ]


def test_a_document_in_the_earlier_question_names_validates_to_the_current_names():
    # Stored documents are read through the one alias table (chronology.engine.legacy_names).
    old = {"phases": [{"key": "a", "name": "A", "to_next": {"arrangement": "sequential"}}, {"key": "b", "name": "B"}],
           "questions": [{"kind": "span", "phase": "a"},
                         {"kind": "interval", "from": "phase:a:end", "to": "phase:b:start"},
                         {"kind": "order", "earlier": "phase:a:start", "later": "phase:b:end"}]}
    kept = json.loads(json.dumps(old))
    assert validate(old)["questions"] == [
        {"kind": "duration", "phase": "a"},
        {"kind": "gap", "from": "phase:a:close", "to": "phase:b:beginning"},
        {"kind": "precedence", "earlier": "phase:a:beginning", "later": "phase:b:close"},
    ]
    assert old == kept  # the stored document itself is never rewritten


def test_canonical_form_sorts_unordered_sections_so_the_hash_ignores_order():
    a = validate({"estimate": [9, 3], "assignments": [], "set_aside": [
        {"relationship": 8, "reason": "r"}, {"relationship": 2, "reason": "s"}]})
    b = validate({"set_aside": [{"relationship": 2, "reason": "s"}, {"relationship": 8, "reason": "r"}],
                  "estimate": [3, 9]})
    assert a == b
    assert content_hash(a, 4) == content_hash(b, 4)
    assert content_hash(a, 4) != content_hash(a, 5)


def test_labels_are_resolved_and_unknown_ones_reported_at_their_path():
    ids = {"1001": 11, "1002": 12}
    doc = resolve_labels({"assignments": [{"context": "1001", "phase": "a"}],
                          "orderings": [{"earlier": "1002", "later": 11, "reason": "x"}],
                          "questions": [{"kind": "precedence", "earlier": "context:1001", "later": "context:1002"}],
                          "estimate": ["1002"]}, ids.get)
    assert doc["assignments"][0]["context"] == 11
    assert doc["orderings"][0]["earlier"] == 12
    assert doc["questions"][0] == {"kind": "precedence", "earlier": "context:11", "later": "context:12"}
    assert doc["estimate"] == [12]
    with pytest.raises(ContentInvalid) as caught:
        resolve_labels({"estimate": ["9999"]}, ids.get)
    assert caught.value.errors == [{"field": "estimate[0]", "code": "unknown-context",
                                    "message": "no context labelled '9999' at this revision"}]
