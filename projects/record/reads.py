"""Reads of the record at the current or any past revision.

Every read goes through ``RecordState``, the exact temporal table, so the
state at revision R is what it was when R was the latest revision, however
much was edited or retracted afterwards.
"""

from __future__ import annotations

from chronology.engine.record_data import ContextData, RelationshipData
from projects.models import Project, RecordState

from .errors import RecordInvalid
from .representation import relationship_text


def resolve_revision(project: Project, at) -> int:
    """The revision to read: ``at`` if given (validated), else the current one."""
    if at is None or at == "":
        return project.revision
    try:
        revision = int(at)
    except (TypeError, ValueError):
        raise RecordInvalid("at must be a revision number", field="at", code="invalid-number") from None
    if revision < 0 or revision > project.revision:
        raise RecordInvalid(
            f"revision {revision} does not exist (the record is at {project.revision})", field="at", code="unknown-revision"
        )
    return revision


def states(project: Project, kind: str, revision: int):
    return RecordState.objects.filter(project=project, kind=kind).at(revision).order_by("object_id")


def context_labels(project: Project, revision: int, ids=None) -> dict[int, str]:
    qs = states(project, "context", revision)
    if ids is not None:
        qs = qs.filter(object_id__in=list(ids))
    return {object_id: data["label"] for object_id, data in qs.values_list("object_id", "data")}


def with_labels(rows: list[dict], labels: dict[int, str]) -> list[dict]:
    """Relationship states with the context labels in force at the same revision."""
    out = []
    for data in rows:
        later, earlier = labels.get(data["later_id"], "?"), labels.get(data["earlier_id"], "?")
        out.append({**data, "later": later, "earlier": earlier, "text": relationship_text(data["type"], later, earlier)})
    return out


def snapshot(project: Project, revision: int | None = None) -> tuple[list[ContextData], list[RelationshipData]]:
    """The record at ``revision`` as engine data (contexts and relationships)."""
    revision = project.revision if revision is None else revision
    contexts = [
        ContextData(
            id=data["id"], label=data["label"], kind=data["kind"], area=data["area"] or "",
            attributes={"description": data["description"], "top_level": data["top_level"], "base_level": data["base_level"]},
        )
        for data in states(project, "context", revision).values_list("data", flat=True).iterator(chunk_size=5000)
    ]
    relationships = [
        RelationshipData(
            id=data["id"], type=data["type"], later=data["later_id"], earlier=data["earlier_id"],
            certain=data["certainty"] == "certain",
        )
        for data in states(project, "relationship", revision).values_list("data", flat=True).iterator(chunk_size=5000)
    ]
    return contexts, relationships
