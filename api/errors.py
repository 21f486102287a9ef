"""One error body for every 4xx.

::

    {"status": 409, "code": "cycle", "message": "...", "request_id": "...",
     "errors": [{"field": "type", "code": "cycle", "message": "...", "cycle": [...]}]}

``errors`` always lists at least one entry naming the field (or null) and a
stable code; domain details (the cycle, the existing object) ride on the entry.
"""

from __future__ import annotations

from django.core.exceptions import PermissionDenied as DjangoPermissionDenied
from django.core.exceptions import RequestDataTooBig, TooManyFieldsSent
from django.core.exceptions import ValidationError as DjangoValidationError
from django.http import Http404
from rest_framework import exceptions, status
from rest_framework.response import Response

from api.request_ids import current_request_id
from chronology.engine.errors import EngineError
from projects.models.append_only import AppendOnlyViolation
from projects.record.errors import RecordError

_DRF_CODES = {
    exceptions.NotAuthenticated: "not-authenticated",
    exceptions.AuthenticationFailed: "authentication-failed",
    exceptions.PermissionDenied: "permission-denied",
    exceptions.NotFound: "not-found",
    exceptions.MethodNotAllowed: "method-not-allowed",
    exceptions.NotAcceptable: "not-acceptable",
    exceptions.UnsupportedMediaType: "unsupported-media-type",
    exceptions.Throttled: "throttled",
    exceptions.ParseError: "parse-error",
}


class ApiError(exceptions.APIException):
    """A 4xx raised by a view with our own code and details."""

    def __init__(self, status_code: int, code: str, message: str, field: str | None = None, headers=None, **details):
        super().__init__(message)
        self.status_code = status_code
        self.headers = headers
        self.error = {"field": field, "code": code, "message": message, **details}


def error_response(status_code: int, errors: list[dict], headers=None) -> Response:
    first = errors[0]
    body = {
        "status": status_code,
        "code": first.get("code"),
        "message": first.get("message"),
        "request_id": current_request_id(),
        "errors": errors,
    }
    return Response(body, status=status_code, headers=headers)


def _flatten(detail, prefix: str | None = None) -> list[dict]:
    if isinstance(detail, dict):
        out = []
        for key, value in detail.items():
            name = key if prefix is None else f"{prefix}.{key}"
            if key == "non_field_errors":
                name = prefix
            out.extend(_flatten(value, name))
        return out
    if isinstance(detail, list):
        out = []
        for index, value in enumerate(detail):
            if isinstance(value, (dict, list)):
                out.extend(_flatten(value, f"{prefix}[{index}]" if prefix else f"[{index}]"))
            else:
                out.extend(_flatten(value, prefix))
        return out
    code = getattr(detail, "code", "invalid") or "invalid"
    return [{"field": prefix, "code": str(code).replace("_", "-"), "message": str(detail)}]


def _too_large_error(exc) -> dict:
    """The error entry for a body Django refused while reading it, naming the limit."""
    from django.conf import settings

    if isinstance(exc, TooManyFieldsSent):
        limit = settings.DATA_UPLOAD_MAX_NUMBER_FIELDS
        return {"field": None, "code": "too-many-fields",
                "message": f"the form has more than {limit} fields", "limit": limit}
    limit = settings.DATA_UPLOAD_MAX_MEMORY_SIZE
    return {"field": None, "code": "body-too-large",
            "message": f"the request body is larger than the limit of {limit} bytes", "limit": limit}


def exception_handler(exc, context):
    # Imported here: DRF's views module loads the parser classes, and the parsers raise ApiError.
    from rest_framework.views import exception_handler as drf_exception_handler

    if isinstance(exc, (RequestDataTooBig, TooManyFieldsSent)):
        return error_response(status.HTTP_413_REQUEST_ENTITY_TOO_LARGE, [_too_large_error(exc)])
    if isinstance(exc, RecordError):
        return error_response(exc.status, [exc.as_error()])
    if isinstance(exc, EngineError):
        return error_response(status.HTTP_409_CONFLICT, [{"field": None, **exc.as_dict()}])
    if isinstance(exc, ApiError):
        return error_response(exc.status_code, [exc.error], headers=exc.headers)
    if isinstance(exc, AppendOnlyViolation):
        return error_response(status.HTTP_409_CONFLICT, [{"field": None, "code": "immutable", "message": str(exc)}])
    if isinstance(exc, DjangoValidationError):
        errors = []
        for field, messages in getattr(exc, "message_dict", {None: exc.messages}).items():
            for message in messages:
                errors.append({"field": None if field == "__all__" else field, "code": "invalid", "message": message})
        return error_response(status.HTTP_400_BAD_REQUEST, errors)
    if isinstance(exc, Http404):
        exc = exceptions.NotFound()
    elif isinstance(exc, DjangoPermissionDenied):
        exc = exceptions.PermissionDenied()
    response = drf_exception_handler(exc, context)
    if response is None:
        return None
    if isinstance(exc, exceptions.ValidationError):
        errors = _flatten(exc.detail) or [{"field": None, "code": "invalid", "message": "invalid input"}]
    else:
        code = next((c for cls, c in _DRF_CODES.items() if isinstance(exc, cls)), "error")
        errors = [{"field": None, "code": code, "message": str(exc.detail)}]
    headers = {k: v for k, v in response.items() if k in ("WWW-Authenticate", "Retry-After", "Allow")}
    return error_response(response.status_code, errors, headers=headers)


def _plain_error(request, status_code: int, code: str, message: str, **details):
    from django.http import JsonResponse

    body = {
        "status": status_code,
        "code": code,
        "message": message,
        "request_id": getattr(request, "request_id", "") or current_request_id(),
        "errors": [{"field": None, "code": code, "message": message, **details}],
    }
    return JsonResponse(body, status=status_code)


def too_large_response(request, exc):
    """Django raises these while reading a body, outside DRF: the JSON body, never HTML."""
    error = _too_large_error(exc)
    return _plain_error(request, 413, error.pop("code"), error.pop("message"), **{k: v for k, v in error.items() if k != "field"})


def bad_request_view(request, exception=None):
    """Django's 400s (a suspicious request, a body over the limit read outside DRF) as the JSON error body."""
    if isinstance(exception, (RequestDataTooBig, TooManyFieldsSent)):
        return too_large_response(request, exception)
    return _plain_error(request, 400, "bad-request", "the request could not be read")


def not_found_view(request, exception=None):
    """Unrouted paths answer with the same error body as the API's own 404s."""
    return _plain_error(request, 404, "not-found", "no such resource")


def server_error_view(request):
    return _plain_error(request, 500, "server-error", "the server failed; the request id identifies the log entry")
