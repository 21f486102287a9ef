"""A version's revision gives the same order however the record changes; moving on says what changed."""

from __future__ import annotations

from chronology.interpretations import services
from chronology.interpretations.validity import compile_version_order
from projects.models import Role
from projects.record import writes
from tests.interpretations.conftest import phased_content, vurl
from tests.record.helpers import add_contexts, relate


def _shape(graph) -> tuple:
    """The order as plain data: members of each node and every edge with its supports."""
    members = tuple(tuple(graph.node_context_ids(v)) for v in range(graph.n_nodes))
    edges = tuple(sorted(
        (tuple(graph.node_context_ids(a)), tuple(graph.node_context_ids(b)), s, tuple(sorted(r)))
        for a, b, s, r in zip(graph.edge_earlier, graph.edge_later, graph.edge_strict, graph.edge_relationships)
    ))
    return members, edges


def _order_of(version):
    return compile_version_order(version.content, services.record_at(version.project, version.record_revision))


def _churn(small, actor):
    """Edit, retract and add a lot after the version was made."""
    project = small["project"]
    ids, rels = small["ids"], small["rels"]
    writes.edit_context(project, actor, ids["104"], {"label": "104a", "description": "relabelled"})
    writes.retract_relationship(project, actor, rels["u1"], reason="misread in the section")
    writes.retract_context(project, actor, ids["108"], reason="duplicate number")
    add_contexts(project, actor, ["110", "111"])
    relate(project, actor, "110", "above", "105")
    relate(project, actor, "111", "same_as", "110", certainty="uncertain")
    relate(project, actor, "107", "above", "103")


def test_the_versions_revision_gives_the_same_order_after_the_record_changed(draft, small, actor):
    before = _shape(_order_of(draft))
    validity = draft.validity
    _churn(small, actor)
    assert small["project"].revision > draft.record_revision
    assert _shape(_order_of(draft)) == before
    assert services._assess(draft.project, draft.record_revision, draft.content) == validity


def test_the_current_record_gives_a_different_order(draft, small, actor):
    before = _shape(_order_of(draft))
    _churn(small, actor)
    now = compile_version_order(draft.content, services.record_at(draft.project, small["project"].revision))
    assert _shape(now) != before


def test_record_changes_lists_exactly_what_touches_the_version(draft, small, actor, client_for):
    _churn(small, actor)
    body = client_for(Role.VIEWER).get(vurl(draft.pk, "record-changes")).json()
    ids, rels = small["ids"], small["rels"]
    touching = {(row["kind"], row["id"]): row["change"] for row in body["touching"]}
    assert touching[("context", ids["104"])] == "edited"
    assert touching[("context", ids["108"])] == "retracted"
    assert touching[("relationship", rels["u1"])] == "retracted"
    assert touching[("relationship", rels["108=106"])] == "retracted"
    new = {row["id"] for row in body["touching"] if row["kind"] == "context" and row["change"] == "added"}
    assert len(new) == 2
    retracted = next(r for r in body["touching"] if r["kind"] == "relationship" and r["id"] == rels["u1"])
    assert retracted["log"][0]["action"] == "record.relationship.retracted"
    assert retracted["log"][0]["message"] == "misread in the section"
    assert body["since"] == draft.record_revision and body["until"] == small["project"].revision


def test_moving_on_carries_what_applies_and_lists_what_does_not(draft, small, actor, analyst_actor):
    ids, rels = small["ids"], small["rels"]
    content = phased_content(small, set_aside=[{"relationship": rels["u1"], "reason": "doubtful"}],
                             estimate=["108"])
    version = services.edit_draft(draft, analyst_actor, if_match=draft.etag, content=content)
    _churn(small, actor)
    moved, report = services.move_on(version, analyst_actor)
    assert moved.record_revision == small["project"].revision
    assert moved.parent_id == version.pk
    assert sorted((d["path"], d["reason"]) for d in report["dropped"]) == sorted([
        ("assignments[7]", f"context 108 is retracted at revision {moved.record_revision}"),
        ("estimate[0]", f"context 108 is retracted at revision {moved.record_revision}"),
        ("set_aside[0]", f"relationship {rels['u1']} is retracted at revision {moved.record_revision}"),
    ])
    assert ids["108"] not in {a["context"] for a in moved.content["assignments"]}
    assert moved.content["set_aside"] == [] and moved.content["estimate"] == []
    assert [i["type"] for i in report["new_items"]] == ["same_as"]
    # 110 and 111 are new and unphased, and 111 is tied to nothing but an undecided same-as:
    # warnings, not errors.
    assert moved.is_valid is True
    assert sorted((i["code"], len(i["contexts"])) for i in moved.validity["issues"]) == [
        ("isolated-context", 1), ("unphased-context", 1), ("unphased-context", 1)]
    # The old version still reads its own revision.
    assert version.record_revision < moved.record_revision


def test_moving_on_through_the_api_answers_the_new_draft_and_the_report(draft, small, actor, client_for):
    _churn(small, actor)
    response = client_for(Role.ANALYST).post(vurl(draft.pk, "move-on"), {}, format="json")
    assert response.status_code == 201, response.content
    body = response.json()
    assert body["version"]["status"] == "draft"
    assert body["version"]["record_revision"] == small["project"].revision
    assert body["report"]["from_revision"] == draft.record_revision
    assert [d["path"] for d in body["report"]["dropped"]] == ["assignments[7]"]


def test_diff_across_revisions_names_relationships_the_new_record_lacks(draft, small, actor, analyst_actor):
    rels = small["rels"]
    writes.retract_relationship(small["project"], actor, rels["e1"], reason="the two were never in contact")
    moved, _report = services.move_on(draft, analyst_actor)
    result = services.diff_versions(draft, moved)
    assert result["diff"]["equalities"]["changed"] == [
        {"relationship": rels["e1"], "from": "undecided", "to": "not in the record"}]
    assert result["diff"]["record_revision"] == {"from": draft.record_revision, "to": moved.record_revision}
    assert "Equality 104 contemporary with 106: undecided → not in the record" in result["text"]
