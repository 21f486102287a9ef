"""The stored (and served) representation of each record object.

``RecordState.data`` holds exactly these dicts, so a read at a past revision
returns what a read returned at that revision.  Relationships store context
ids only; labels are joined in at read time from the contexts' state at the
same revision (a label may be corrected later).
"""

from __future__ import annotations

CONTEXT_FIELDS = ("label", "kind", "description", "area", "top_level", "base_level")


def context_data(ctx) -> dict:
    return {
        "id": ctx.id,
        "uid": str(ctx.uid),
        "label": ctx.label,
        "kind": ctx.kind,
        "description": ctx.description,
        "area": ctx.area,
        "top_level": ctx.top_level,
        "base_level": ctx.base_level,
        "created_revision": ctx.created_revision,
    }


def relationship_data(rel) -> dict:
    return {
        "id": rel.id,
        "uid": str(rel.uid),
        "type": rel.type,
        "later_id": rel.later_id,
        "earlier_id": rel.earlier_id,
        "certainty": rel.certainty,
        "recorded_as": rel.recorded_as,
        "note": rel.note,
        "created_revision": rel.created_revision,
    }


def relationship_text(type_: str, later_label: str, earlier_label: str) -> str:
    return f"{later_label} {type_.replace('_', ' ')} {earlier_label}"
