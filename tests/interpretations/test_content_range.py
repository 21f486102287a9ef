"""The overall range a version may set in its content."""

from __future__ import annotations

import pytest

from chronology.interpretations.content import ContentInvalid, content_hash, validate


def _errors(document) -> list[tuple[str, str]]:
    with pytest.raises(ContentInvalid) as caught:
        validate(document)
    return [(e["field"], e["code"]) for e in caught.value.errors]


def test_a_set_range_is_kept_in_the_canonical_document():
    assert validate({"range": {"earliest": -1200, "latest": 400}})["range"] == {"earliest": -1200, "latest": 400}


def test_a_document_without_a_range_keeps_its_former_hash():
    # documents stored before the range existed must hash as they did
    assert "range" not in validate({}) and content_hash(validate({"range": None}), 1) == content_hash(validate({}), 1)


def test_a_range_whose_latest_end_is_not_later_is_refused_at_that_field():
    assert _errors({"range": {"earliest": 100, "latest": 100}}) == [("range.latest", "invalid-range")]


def test_a_range_end_that_is_not_a_number_is_refused_at_that_field():
    assert _errors({"range": {"earliest": "AD 5", "latest": 100}}) == [("range.earliest", "invalid-number")]


def test_a_range_needs_both_ends():
    assert _errors({"range": {"earliest": 100}}) == [("range.latest", "required")]
