"""Priors on a phase's duration and on the gap to the next phase, set in a version's content."""

from __future__ import annotations

import pytest

from chronology.interpretations.content import ContentInvalid, content_hash, validate


def _errors(document) -> list[tuple[str, str]]:
    with pytest.raises(ContentInvalid) as caught:
        validate(document)
    return [(e["field"], e["code"]) for e in caught.value.errors]


def _two(duration=None, to_next=None) -> dict:
    first = {"key": "a", "name": "A", "to_next": to_next or {"arrangement": "sequential"}}
    if duration is not None:
        first["duration"] = duration
    return {"phases": [first, {"key": "b", "name": "B", "duration": {"distribution": "normal", "mean": 150,
                                                                      "sd": 40}}]}


def test_a_duration_prior_is_kept_in_the_canonical_document():
    doc = validate(_two({"distribution": "uniform", "min": 50, "max": 250}))
    assert doc["phases"][0]["duration"] == {"distribution": "uniform", "min": 50, "max": 250}


def test_a_phase_without_a_duration_prior_keeps_its_former_hash():
    # documents stored before duration priors existed must hash as they did
    plain = {"phases": [{"key": "a", "name": "A"}]}
    assert "duration" not in validate(plain)["phases"][0]
    assert content_hash(validate({"phases": [{"key": "a", "name": "A", "duration": None}]}), 1) == \
        content_hash(validate(plain), 1)


def test_a_gap_prior_is_kept_under_to_next():
    doc = validate(_two(to_next={"arrangement": "sequential", "gap": {"distribution": "lognormal", "median": 30,
                                                                      "sd_log": 0.5}}))
    assert doc["phases"][0]["to_next"]["gap"] == {"distribution": "lognormal", "median": 30, "sd_log": 0.5}


def test_a_uniform_duration_whose_max_is_not_above_its_min_is_refused_at_max():
    assert _errors(_two({"distribution": "uniform", "min": 250, "max": 50})) == [("phases[0].duration.max",
                                                                                 "invalid-range")]


def test_a_normal_duration_needs_a_positive_sd():
    assert _errors(_two({"distribution": "normal", "mean": 150, "sd": 0})) == [("phases[0].duration.sd",
                                                                               "invalid-number")]


def test_a_missing_parameter_is_named():
    assert _errors(_two({"distribution": "lognormal", "median": 150})) == [("phases[0].duration.sd_log",
                                                                           "required")]


def test_a_parameter_of_another_family_is_refused():
    assert _errors(_two({"distribution": "normal", "mean": 150, "sd": 40, "max": 300})) == [
        ("phases[0].duration.max", "parameter-not-used")]


def test_an_unknown_family_is_refused():
    assert _errors(_two({"distribution": "gamma", "mean": 150})) == [("phases[0].duration.distribution",
                                                                     "invalid-choice")]


def test_a_negative_duration_bound_is_refused():
    assert _errors(_two({"distribution": "uniform", "min": -5, "max": 50})) == [("phases[0].duration.min",
                                                                                "invalid-number")]


def test_a_gap_prior_belongs_only_to_a_sequential_arrangement():
    doc = _two(to_next={"arrangement": "contiguous", "gap": {"distribution": "uniform", "min": 0, "max": 50}})
    assert _errors(doc) == [("phases[0].to_next.gap", "gap-needs-sequential")]
