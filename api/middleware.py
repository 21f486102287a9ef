"""Give every request the server's own UUID, return it as ``X-Request-ID``.

A client may send its own ``X-Request-ID`` for correlation; it is kept apart
(``request.client_request_id``, stored as the entry's ``client_request_id``)
and never taken as the server's id, so a client cannot choose what the
change log records as the request.
"""

from __future__ import annotations

import contextvars
import re
import uuid

_request_id: contextvars.ContextVar[str] = contextvars.ContextVar("request_id", default="")
_VALID = re.compile(r"^[A-Za-z0-9._:-]{1,64}$")


def current_request_id() -> str:
    return _request_id.get()


class RequestIdMiddleware:
    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        incoming = request.headers.get("X-Request-ID", "")
        request.client_request_id = incoming if _VALID.match(incoming or "") else ""
        request_id = str(uuid.uuid4())
        token = _request_id.set(request_id)
        request.request_id = request_id
        try:
            response = self.get_response(request)
        finally:
            _request_id.reset(token)
        response["X-Request-ID"] = request_id
        return response
