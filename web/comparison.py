"""The side-by-side comparison of two versions: their difference and both phased diagrams.

A committed version never changes (the ORM refuses edits to it), so what the
page shows for two committed versions is computed once and kept in the cache
under both ids and content hashes; a draft is computed on every request.  A
version whose record is too large to draw whole is not laid out at all: the
page says so and links to its diagram one area at a time.
"""

from __future__ import annotations

from django.core.cache import cache

from chronology.interpretations import services
from chronology.interpretations.models import Status
from chronology.order_service import MAX_DRAWN
from projects.record import reads

from .views.order import _svg_or_error, version_svg

KEEP_SECONDS = 24 * 3600


def _key(old, new) -> str | None:
    if Status.DRAFT in (old.status, new.status) or not (old.content_hash and new.content_hash):
        return None
    return f"web:compare:v2:{old.pk}:{old.content_hash}:{new.pk}:{new.content_hash}"


def drawing(version) -> tuple[str | None, dict | None]:
    """The version's phased diagram (SVG), or why it is not drawn here."""
    size = reads.states(version.project, "context", version.record_revision).count()
    if size > MAX_DRAWN:
        areas = sorted({a for a in reads.states(version.project, "context", version.record_revision)
                        .order_by().values_list("data__area", flat=True).distinct() if a})
        return None, {"code": "too-large-to-draw", "areas": areas,
                      "message": f"{size} contexts are too many to draw side by side (at most {MAX_DRAWN}); "
                                 "open this version's diagram one area at a time."}
    return _svg_or_error(lambda: version_svg(version))


def comparison(old, new) -> dict:
    """Difference text, contexts that changed phase, and the two diagrams (or why each is not drawn)."""
    key = _key(old, new)
    if key is not None:
        kept = cache.get(key)
        if kept is not None:
            return kept
    result = services.diff_versions(old, new)
    changed = result["diff"].get("contexts", {})
    marked = sorted({c["context"] for part in ("moved", "phased", "unphased") for c in changed.get(part, [])})
    left, left_problem = drawing(old)
    right, right_problem = drawing(new)
    out = {"text": result["text"], "marked": marked, "left": left, "right": right,
           "left_problem": left_problem, "right_problem": right_problem}
    if key is not None:
        cache.set(key, out, KEEP_SECONDS)
    return out
