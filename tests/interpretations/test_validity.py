"""A version is checked against its own record revision, with stable codes and exact paths."""

from __future__ import annotations

from chronology.interpretations import services
from projects.models import Role
from projects.record import writes
from tests.api.conftest import assert_error_body
from tests.interpretations.conftest import phased_content, vurl


def _make(small, analyst_actor, name="Check", revision=None, **extra):
    _i, version = services.create_interpretation(small["project"], analyst_actor, name=name,
                                                 content=phased_content(small, **extra), record_revision=revision)
    return version


def _errors(version) -> list[tuple[str, str | None]]:
    return [(i["code"], i["path"]) for i in version.validity["issues"] if i["severity"] == "error"]


def test_the_phased_small_record_is_valid_with_no_warnings(draft):
    assert draft.validity["ok"] is True
    assert draft.validity["issues"] == []
    assert draft.validity["order"]["merged"] == [draft.validity["order"]["merged"][0]]  # only 108 = 106


def test_an_interpretive_ordering_that_closes_a_cycle_is_reported_at_its_path(small, analyst_actor):
    version = _make(small, analyst_actor, orderings=[{"earlier": "105", "later": "101", "reason": "a guess"}])
    assert _errors(version) == [("cycle", "orderings[0]")]
    issue = version.validity["issues"][0]
    assert {step["id"] for step in issue["explanation"] if not step["recorded"]} == {"orderings[0]"}
    assert version.is_valid is False


def test_accepting_an_equality_between_ordered_contexts_is_a_contradiction(small, analyst_actor):
    version = _make(small, analyst_actor, equalities=[{"relationship": small["rels"]["e3"], "decision": "accepted"}])
    [(code, path)] = _errors(version)
    assert (code, path) == ("contradiction", None)
    assert small["rels"]["e3"] in version.validity["issues"][0]["relationships"]


def test_a_context_phased_before_what_lies_below_it_contradicts_the_phasing(small, analyst_actor):
    content = phased_content(small)
    content["assignments"] = [a if a["context"] != "105" else {"context": "105", "phase": "early"}
                              for a in content["assignments"]]
    _i, version = services.create_interpretation(small["project"], analyst_actor, name="Wrong", content=content)
    # Assignments are stored sorted by context id: 103, 104, 106 and 108 (middle) lie below 105, now early.
    assert _errors(version) == [
        ("phase-contradiction", "assignments[2]"), ("phase-contradiction", "assignments[3]"),
        ("phase-contradiction", "assignments[5]"), ("phase-contradiction", "assignments[7]"),
        ("phase-order-unsupported", "phases"),
    ]
    message = next(i["message"] for i in version.validity["issues"] if i["code"] == "phase-contradiction")
    assert message.startswith("103 (middle) lies below 105 (early), but early is before middle")


def test_an_overlapping_arrangement_does_not_order_the_two_phases(small, analyst_actor):
    content = phased_content(small)
    content["phases"][0]["to_next"] = {"arrangement": "overlapping"}
    moved = {"103": "early", "102": "middle"}
    content["assignments"] = [{"context": a["context"], "phase": moved.get(a["context"], a["phase"])}
                              for a in content["assignments"]]
    _i, version = services.create_interpretation(small["project"], analyst_actor, name="Overlap", content=content)
    assert version.validity["ok"] is True
    content["phases"][0]["to_next"] = {"arrangement": "sequential"}
    _i, strict = services.create_interpretation(small["project"], analyst_actor, name="Strict", content=content)
    assert ("phase-contradiction", "assignments[1]") in _errors(strict)


def test_an_unphased_context_is_a_warning_only(small, analyst_actor):
    content = phased_content(small)
    content["assignments"] = [a for a in content["assignments"] if a["context"] != "108"]
    _i, version = services.create_interpretation(small["project"], analyst_actor, name="Unphased", content=content)
    assert version.validity["ok"] is True
    assert [(i["code"], i["severity"], i["contexts"]) for i in version.validity["issues"]] == [
        ("unphased-context", "warning", [small["ids"]["108"]])]


def test_decisions_on_the_wrong_kind_of_relationship(small, analyst_actor):
    version = _make(small, analyst_actor,
                    equalities=[{"relationship": small["rels"]["102>101"], "decision": "accepted"}],
                    uncertain=[{"relationship": small["rels"]["103>102"], "decision": "rejected"}],
                    set_aside=[{"relationship": 10 ** 9, "reason": "typo"}])
    assert _errors(version) == [
        ("not-an-equality", "equalities[0].relationship"),
        ("not-uncertain", "uncertain[0].relationship"),
        ("unknown-relationship", "set_aside[0].relationship"),
    ]


def test_references_retracted_by_the_versions_revision(small, analyst_actor, actor):
    project = small["project"]
    writes.retract_context(project, actor, small["ids"]["108"], reason="same deposit as 106, numbered twice")
    content = phased_content(small, equalities=[{"relationship": small["rels"]["108=106"], "decision": "accepted"}])
    for a in content["assignments"]:
        if a["context"] == "108":
            a["context"] = small["ids"]["108"]  # a label no longer resolves once retracted; an id still can
    _i, version = services.create_interpretation(project, analyst_actor, name="Retracted", content=content)
    assert _errors(version) == [
        ("retracted-context", "assignments[7].context"),
        ("retracted-relationship", "equalities[0].relationship"),
    ]


def test_a_context_added_after_the_versions_revision_is_unknown_there(small, analyst_actor, actor):
    old = small["project"].revision
    writes.add_context(small["project"], actor, label="109", kind="deposit", area="A")
    version = _make(small, analyst_actor, revision=old, estimate=[])
    services.edit_draft(version, analyst_actor, if_match=version.etag,
                        content={**version.content, "estimate": [small["project"].context_set.get(label="109").id]})
    version.refresh_from_db()
    assert _errors(version) == [("unknown-context", "estimate[0]")]


def test_an_invalid_version_cannot_be_proposed(small, analyst_actor, client_for):
    version = services.commit(_make(small, analyst_actor, orderings=[
        {"earlier": "105", "later": "101", "reason": "a guess"}]), analyst_actor)
    response = client_for(Role.ANALYST).post(vurl(version.pk, "propose"), {}, format="json")
    error = assert_error_body(response, 409, "invalid-version")
    assert error["report"]["ok"] is False
    assert [i["code"] for i in error["report"]["issues"]] == ["cycle"]


def test_validity_is_served_as_stored(draft, client_for):
    response = client_for(Role.VIEWER).get(vurl(draft.pk, "validity"))
    assert response.status_code == 200
    assert response.json() == draft.validity


def test_evidence_of_a_known_kind_must_exist_in_the_project(small, analyst_actor):
    version = _make(small, analyst_actor, evidence=[
        {"evidence": "determination:999999", "use": "included", "outlier_prior": 0.05},
        {"evidence": "photograph:3", "use": "included", "outlier_prior": 0.0},  # no such table: shape only
    ])
    assert _errors(version) == [("unknown-evidence", "evidence[0].evidence")]
