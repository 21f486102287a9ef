"""The difference between two interpretation documents, on hand-built pairs with known answers."""

from __future__ import annotations

from chronology.engine.interpretation_diff import diff_interpretations, diff_text
from chronology.interpretations.content import validate

BASE = {
    "phases": [
        {"key": "p1", "name": "Natural"},
        {"key": "p2", "name": "Enclosure"},
        {"key": "p3", "name": "Settlement"},
    ],
    "assignments": [{"context": 1, "phase": "p1"}, {"context": 2, "phase": "p2"}, {"context": 3, "phase": "p3"},
                    {"context": 4, "phase": "p3"}],
    "equalities": [{"relationship": 50, "decision": "undecided"}],
    "set_aside": [{"relationship": 60, "reason": "redundant"}],
    "evidence": [{"evidence": "determination:7", "use": "included", "outlier_prior": 0.05}],
    "questions": [{"kind": "duration", "phase": "p3"}],
}


def _pair(**changes):
    old = validate(BASE)
    new = validate({**BASE, **changes})
    return old, new


def test_identical_documents_have_an_empty_diff():
    old, new = _pair()
    diff = diff_interpretations(old, new)
    assert diff["identical"] is True
    assert diff_text(diff) == "No differences.\n"


def test_a_renamed_phase_keeps_its_key_and_is_not_added_or_removed():
    phases = [dict(p) for p in BASE["phases"]]
    phases[2]["name"] = "Settlement and hearth"
    diff = diff_interpretations(*_pair(phases=phases))
    assert diff["phases"]["renamed"] == [{"key": "p3", "from": "Settlement", "to": "Settlement and hearth"}]
    assert diff["phases"]["added"] == diff["phases"]["removed"] == []
    assert diff["phases"]["reordered"] is None


def test_reordering_phases_reports_both_sequences():
    phases = [BASE["phases"][0], BASE["phases"][2], BASE["phases"][1]]
    diff = diff_interpretations(*_pair(phases=phases))
    assert diff["phases"]["reordered"] == {"from": ["p1", "p2", "p3"], "to": ["p1", "p3", "p2"]}


def test_a_phase_added_and_one_removed_with_their_contexts():
    phases = [BASE["phases"][0], BASE["phases"][2], {"key": "p4", "name": "Garden soils"}]
    assignments = [{"context": 1, "phase": "p1"}, {"context": 3, "phase": "p3"}, {"context": 4, "phase": "p4"},
                   {"context": 5, "phase": "p4"}]
    diff = diff_interpretations(*_pair(phases=phases, assignments=assignments))
    assert diff["phases"]["added"] == [{"key": "p4", "name": "Garden soils", "position": 2}]
    assert diff["phases"]["removed"] == [{"key": "p2", "name": "Enclosure", "position": 1}]
    assert diff["contexts"] == {
        "moved": [{"context": 4, "from": "p3", "to": "p4"}],
        "phased": [{"context": 5, "phase": "p4"}],
        "unphased": [{"context": 2, "phase": "p2"}],
    }


def test_toggled_equality_and_set_aside_relationships():
    diff = diff_interpretations(*_pair(
        equalities=[{"relationship": 50, "decision": "accepted"}],
        set_aside=[{"relationship": 61, "reason": "doubtful"}],
    ))
    assert diff["equalities"]["changed"] == [{"relationship": 50, "from": "undecided", "to": "accepted"}]
    assert diff["set_aside"]["added"] == [{"relationship": 61, "reason": "doubtful"}]
    assert diff["set_aside"]["removed"] == [{"relationship": 60, "reason": "redundant"}]


def test_a_decision_missing_on_one_side_reads_as_default():
    diff = diff_interpretations(*_pair(equalities=[]))
    assert diff["equalities"]["changed"] == [{"relationship": 50, "from": "undecided", "to": "default"}]


def test_evidence_use_and_questions_changes():
    diff = diff_interpretations(*_pair(
        evidence=[{"evidence": "determination:7", "use": "residual", "outlier_prior": 0.05},
                  {"evidence": "calendar_date:2", "use": "included", "outlier_prior": 0.0}],
        questions=[{"kind": "duration", "phase": "p3"}, {"kind": "precedence", "earlier": "phase:p2:close",
                                                     "later": "phase:p3:beginning"}],
    ))
    assert diff["evidence"]["changed"] == [{"evidence": "determination:7",
                                            "from": {"use": "included", "outlier_prior": 0.05},
                                            "to": {"use": "residual", "outlier_prior": 0.05}}]
    assert diff["evidence"]["added"] == [{"evidence": "calendar_date:2", "use": "included", "outlier_prior": 0.0}]
    assert diff["questions"] == {"added": [{"kind": "precedence", "earlier": "phase:p2:close", "later": "phase:p3:beginning"}],
                                 "removed": []}


def test_a_duration_prior_set_on_a_phase_is_a_change_with_its_reading():
    phases = [dict(BASE["phases"][0]), dict(BASE["phases"][1]),
              {**BASE["phases"][2], "duration": {"distribution": "uniform", "min": 50, "max": 250}}]
    old, new = _pair(phases=phases)
    diff = diff_interpretations(old, new)
    assert diff["phases"]["duration_prior_changed"] == [
        {"key": "p3", "from": None, "to": {"distribution": "uniform", "min": 50, "max": 250}}]
    assert "Phase Settlement (p3) duration prior: none → uniform 50-250 years" in diff_text(diff, phase_names={
        "p3": "Settlement"})


def test_diff_runs_one_way_swapping_sides_swaps_the_answer():
    old, new = _pair(assignments=[{"context": 1, "phase": "p2"}])
    forward, backward = diff_interpretations(old, new), diff_interpretations(new, old)
    assert forward["contexts"]["unphased"] == backward["contexts"]["phased"]
    assert forward["contexts"]["phased"] == backward["contexts"]["unphased"]


def test_text_uses_context_labels_relationship_texts_and_phase_names():
    phases = [dict(p) for p in BASE["phases"]]
    assignments = [dict(a) for a in BASE["assignments"]]
    assignments[3]["phase"] = "p2"
    diff = diff_interpretations(*_pair(phases=phases, assignments=assignments,
                                       equalities=[{"relationship": 50, "decision": "accepted"}]),
                                old_revision=12, new_revision=14)
    text = diff_text(diff, labels={4: "2032"}, relationships={50: "2032 contemporary with 2030"},
                     phase_names={p["key"]: p["name"] for p in phases}, title="A → B")
    assert text.splitlines() == [
        "A → B",
        "Record revision: 12 → 14",
        "Context 2032 moved: Settlement (p3) → Enclosure (p2)",
        "Equality 2032 contemporary with 2030: undecided → accepted",
    ]



def test_diff_through_the_api_reads_with_context_labels(small, analyst_actor, client_for):
    from chronology.interpretations import services
    from projects.models import Role
    from tests.interpretations.conftest import phased_content, vurl

    rels = small["rels"]
    _i, first = services.create_interpretation(small["project"], analyst_actor, name="First",
                                               content=phased_content(small))
    second_doc = phased_content(small, equalities=[{"relationship": rels["e1"], "decision": "accepted"}])
    second_doc["assignments"] = [a if a["context"] != "105" else {"context": "105", "phase": "middle"}
                                 for a in second_doc["assignments"]]
    _i, second = services.create_interpretation(small["project"], analyst_actor, name="Second", content=second_doc)
    viewer = client_for(Role.VIEWER)
    body = viewer.get(vurl(second.pk, "diff") + f"?against={first.pk}").json()
    assert body["diff"]["contexts"]["moved"] == [{"context": small["ids"]["105"], "from": "late", "to": "middle"}]
    # Defaults are written out before comparing: the certain same-as stays "accepted" on both sides.
    assert body["diff"]["equalities"]["changed"] == [{"relationship": rels["e1"], "from": "undecided",
                                                      "to": "accepted"}]
    assert body["text"].splitlines()[1:] == [
        "Context 105 moved: Late (late) → Middle (middle)",
        "Equality 104 contemporary with 106: undecided → accepted",
    ]
    assert viewer.get(vurl(second.pk, "diff") + f"?against={first.pk}&as=text").json() == {"text": body["text"]}
