"""``Idempotency-Key`` on POSTs that field apps retry.

The first request with a key stores its response; a repeat with the same key
and body gets the stored response again (``Idempotent-Replayed: true``); a
repeat while the first is still running gets 409; the same key with another
body gets 422.
"""

from __future__ import annotations

import functools
import hashlib
import json

from django.db import IntegrityError, transaction
from rest_framework.response import Response
from rest_framework.utils.encoders import JSONEncoder

from api.errors import ApiError
from projects.models import IdempotencyRecord

HEADER = "Idempotency-Key"


def _body_digest(request) -> str:
    try:
        payload = json.dumps(request.data, sort_keys=True, default=str)
    except (TypeError, ValueError):
        payload = repr(request.data)
    return hashlib.sha256(payload.encode()).hexdigest()


def idempotent(view_method):
    @functools.wraps(view_method)
    def wrapper(self, request, *args, **kwargs):
        key = request.headers.get(HEADER)
        if not key:
            return view_method(self, request, *args, **kwargs)
        if len(key) > 200:
            raise ApiError(400, "invalid", "Idempotency-Key is at most 200 characters", field=HEADER)
        digest = _body_digest(request)
        try:
            with transaction.atomic():
                record = IdempotencyRecord.objects.create(
                    user=request.user, key=key, method=request.method, path=request.path, body_digest=digest
                )
        except IntegrityError:
            record = IdempotencyRecord.objects.get(user=request.user, key=key)
            if record.path != request.path or record.body_digest != digest:
                raise ApiError(
                    422, "idempotency-key-reused", "this Idempotency-Key was used for a different request", field=HEADER
                ) from None
            if record.state == IdempotencyRecord.State.RUNNING:
                raise ApiError(409, "idempotency-in-progress", "the first request with this key is still running",
                               field=HEADER) from None
            response = Response(_stored_body(record.response_body), status=record.status_code)
            response["Idempotent-Replayed"] = "true"
            return response
        try:
            response = view_method(self, request, *args, **kwargs)
        except Exception as exc:
            # Store refusals (4xx) so a retry gets the same answer; forget crashes so a retry may run.
            try:
                handled = self.handle_exception(exc)
            except Exception:
                IdempotencyRecord.objects.filter(pk=record.pk).delete()
                raise
            if 400 <= handled.status_code < 500:
                _store(record, handled)
            else:
                IdempotencyRecord.objects.filter(pk=record.pk).delete()
            return handled
        if response.status_code < 500:
            _store(record, response)
        else:
            IdempotencyRecord.objects.filter(pk=record.pk).delete()
        return response

    return wrapper


def _store(record: IdempotencyRecord, response) -> None:
    # Kept as JSON text: PostgreSQL's jsonb reorders object keys, and a replay must be byte-identical.
    body = None if response.data is None else json.dumps(response.data, cls=JSONEncoder)
    IdempotencyRecord.objects.filter(pk=record.pk).update(
        state=IdempotencyRecord.State.DONE, status_code=response.status_code, response_body=body
    )


def _stored_body(body):
    return json.loads(body) if isinstance(body, str) else body
