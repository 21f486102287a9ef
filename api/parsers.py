"""JSON request bodies with a size and a nesting limit.

Python's JSON decoder recurses once per nested bracket, so a body of a few
thousand ``[`` ends in ``RecursionError``; and a body of any size is read
into memory whole.  This parser reads at most ``DATA_UPLOAD_MAX_MEMORY_SIZE``
bytes (413 beyond it) and refuses documents nested deeper than
``TELLSTACK_MAX_JSON_DEPTH`` (400), with the API's one error body.
"""

from __future__ import annotations

import codecs
import json

from django.conf import settings
from rest_framework.parsers import JSONParser
from rest_framework.utils.json import strict_constant

from api.errors import ApiError


def body_limit() -> int:
    """The most bytes a request body may hold (Django's own upload setting)."""
    return settings.DATA_UPLOAD_MAX_MEMORY_SIZE or 2**62


def too_large(limit: int) -> ApiError:
    return ApiError(413, "body-too-large", f"the request body is larger than the limit of {limit} bytes",
                    limit=limit)


def nesting_depth(value) -> int:
    """Depth of nested lists and objects in a decoded document, without recursion."""
    deepest, stack = 0, [(value, 1)]
    while stack:
        node, depth = stack.pop()
        if isinstance(node, dict):
            children = node.values()
        elif isinstance(node, list):
            children = node
        else:
            continue
        deepest = max(deepest, depth)
        stack.extend((child, depth + 1) for child in children if isinstance(child, (dict, list)))
    return deepest


class BoundedJSONParser(JSONParser):
    """DRF's JSON parser, reading a bounded body and refusing deep nesting."""

    def parse(self, stream, media_type=None, parser_context=None):
        limit = body_limit()
        request = (parser_context or {}).get("request")
        declared = _declared_length(request)
        if declared is not None and declared > limit:
            raise too_large(limit)
        raw = stream.read(limit + 1) if stream is not None else b""
        if len(raw) > limit:
            raise too_large(limit)
        encoding = (parser_context or {}).get("encoding", settings.DEFAULT_CHARSET)
        try:
            text = codecs.decode(raw, encoding)
        except (UnicodeDecodeError, LookupError):
            raise ApiError(400, "parse-error", f"the body is not valid {encoding} text") from None
        try:
            data = json.loads(text, parse_constant=strict_constant if self.strict else None)
        except RecursionError:
            data = None
            depth = None
        except ValueError as exc:
            raise ApiError(400, "parse-error", f"JSON parse error - {exc}") from None
        else:
            depth = nesting_depth(data)
        max_depth = settings.TELLSTACK_MAX_JSON_DEPTH
        if depth is None or depth > max_depth:
            raise ApiError(400, "too-deeply-nested", f"JSON nested deeper than {max_depth} levels is refused",
                           limit=max_depth)
        return data


def _declared_length(request) -> int | None:
    meta = getattr(getattr(request, "_request", request), "META", None) or {}
    try:
        return int(meta.get("CONTENT_LENGTH") or 0) or None
    except (TypeError, ValueError):
        return None
