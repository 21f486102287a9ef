"""Each item of a sync batch passes the serializer its single-item endpoint uses.

One validation path: a NUL byte, a lone surrogate or a number too large for a
float is refused the same way in a batch as in a single post, and a batch
with any such item is refused whole (400) with every bad item named by its
collection, index and client uid, before the write path sees any of it.
"""

from __future__ import annotations

from api.errors import ApiError, _flatten
from api.serializers.record import ContextInput, RelationshipInput

_SERIALIZERS = {"contexts": ContextInput, "relationships": RelationshipInput}


def validated_items(data: dict) -> dict:
    """The batch with each item replaced by its validated data; raises a 400 naming every bad item."""
    out = {"batch_id": data["batch_id"]}
    errors: list[dict] = []
    for collection, serializer_class in _SERIALIZERS.items():
        items = []
        for index, item in enumerate(data.get(collection) or []):
            uid = item.get("uid") if isinstance(item, dict) else None
            serializer = serializer_class(data=item)
            # A batch is a record of field work: an attribute we do not keep is refused, not dropped.
            unknown = sorted(set(item) - set(serializer.fields)) if isinstance(item, dict) else []
            for name in unknown:
                errors.append({"collection": collection, "index": index, "uid": uid, "field": name,
                               "code": "unknown-field", "message": f"{name!r} is not an attribute of an item"})
            if serializer.is_valid() and not unknown:
                items.append(dict(serializer.validated_data))
                continue
            for entry in _flatten(serializer.errors):
                errors.append({"collection": collection, "index": index, "uid": uid, **entry})
        out[collection] = items
    if errors:
        raise ApiError(400, "batch-invalid", f"{len(errors)} problem(s) in the batch's items; nothing was written",
                       items=errors)
    return out
