"""Give every request the server's own UUID, return it as ``X-Request-ID``.

A client may send its own ``X-Request-ID`` for correlation; it is kept apart
(``request.client_request_id``, stored as the entry's ``client_request_id``)
and never taken as the server's id, so a client cannot choose what the
change log records as the request.
"""

from __future__ import annotations

import re
import uuid

from api.request_ids import current_request_id, reset_request_id, set_request_id

__all__ = ["RequestIdMiddleware", "current_request_id"]

_VALID = re.compile(r"^[A-Za-z0-9._:-]{1,64}$")


class RequestIdMiddleware:
    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        incoming = request.headers.get("X-Request-ID", "")
        request.client_request_id = incoming if _VALID.match(incoming or "") else ""
        request_id = str(uuid.uuid4())
        token = set_request_id(request_id)
        request.request_id = request_id
        try:
            response = self.get_response(request)
        finally:
            reset_request_id(token)
        response["X-Request-ID"] = request_id
        return response

    def process_exception(self, request, exception):
        # A body over Django's limit read outside DRF (a form, request.body) would
        # otherwise become Django's HTML 400.
        from django.core.exceptions import RequestDataTooBig, TooManyFieldsSent

        if isinstance(exception, (RequestDataTooBig, TooManyFieldsSent)):
            from api.errors import too_large_response

            return too_large_response(request, exception)
        return None
