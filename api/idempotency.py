"""``Idempotency-Key`` on POSTs that field apps retry.

The first request with a key claims it with a lease and stores its response;
a repeat with the same key and body gets the stored response again
(``Idempotent-Replayed: true``). A repeat while the first still holds its
lease gets 409 with ``Retry-After``; once the lease has run out (the first
request's process was killed before it could answer) the repeat claims the key
and runs the request itself. The same key with another body gets 422 naming
the parts of the body that differ.

The lease (``TELLSTACK_IDEMPOTENCY_LEASE_SECONDS``) must be longer than the
longest a request may run (gunicorn's worker timeout), so a request is never
run twice at once. The lease's end doubles as the holder's token: a request
that lost its claim to a retry leaves the retry's answer in place.
"""

from __future__ import annotations

import functools
import hashlib
import json
import math
from datetime import timedelta

from django.conf import settings
from django.db import IntegrityError, transaction
from django.db.models import Q
from django.utils import timezone
from rest_framework.response import Response
from rest_framework.utils.encoders import JSONEncoder

from api.errors import ApiError
from projects.models import IdempotencyRecord

HEADER = "Idempotency-Key"
#: How many differing parts a 422 names at most.
MAX_NAMED_DIFFERENCES = 20


def _canonical(value) -> str:
    try:
        return json.dumps(value, sort_keys=True, default=str)
    except (TypeError, ValueError):
        return repr(value)


def _short_digest(value) -> str:
    return hashlib.sha256(_canonical(value).encode()).hexdigest()[:16]


def body_digest(data) -> str:
    return hashlib.sha256(_canonical(data).encode()).hexdigest()


def body_parts(data) -> dict:
    """Digests of a body's parts: each top-level field, and each item of a field holding a list."""
    if not isinstance(data, dict):
        return {"": _short_digest(data)}
    parts = {}
    for key, value in data.items():
        if isinstance(value, list):
            parts[str(key)] = [_short_digest(item) for item in value]
        else:
            parts[str(key)] = _short_digest(value)
    return parts


def differences(first: dict, second: dict) -> list[str]:
    """The parts named by ``body_parts`` that differ between two bodies, in a stable order.

    A list field that differs is named by its differing items (``contexts[3]``),
    or by the field alone when one body has a list there and the other not.
    """
    if not first:
        return ["body"]  # stored before the parts were kept: only the whole is known
    out = []
    for key in sorted(set(first) | set(second)):
        a, b = first.get(key), second.get(key)
        if a == b:
            continue
        if isinstance(a, list) and isinstance(b, list):
            for index in range(max(len(a), len(b))):
                if index >= len(a) or index >= len(b) or a[index] != b[index]:
                    out.append(f"{key}[{index}]")
        else:
            out.append(key or "body")
    return out


def _lease() -> timedelta:
    return timedelta(seconds=float(getattr(settings, "TELLSTACK_IDEMPOTENCY_LEASE_SECONDS", 150)))


def _refuse_reuse(record: IdempotencyRecord, request, parts: dict) -> None:
    if record.path != request.path or record.method != request.method:
        named = ["path"]
    elif record.body_digest != body_digest(request.data):
        named = differences(record.body_parts, parts)
    else:
        return
    shown = named[:MAX_NAMED_DIFFERENCES]
    more = f" and {len(named) - len(shown)} more" if len(named) > len(shown) else ""
    raise ApiError(
        422, "idempotency-key-reused",
        f"this Idempotency-Key was used for a different request; it differs in {', '.join(shown)}{more}",
        field=HEADER, differences=shown, different_parts=len(named),
    )


def _claim_expired(record: IdempotencyRecord) -> IdempotencyRecord | None:
    """Take over a key whose holder's lease ran out; ``None`` when it is still held (or was just taken)."""
    now = timezone.now()
    expired = Q(lease_expires_at__lt=now) | Q(lease_expires_at__isnull=True, created_at__lt=now - _lease())
    new_end = now + _lease()
    taken = IdempotencyRecord.objects.filter(expired, pk=record.pk, state=IdempotencyRecord.State.RUNNING).update(
        lease_expires_at=new_end
    )
    if not taken:
        return None
    record.lease_expires_at = new_end
    return record


def _in_progress(record: IdempotencyRecord) -> ApiError:
    end = record.lease_expires_at or (record.created_at + _lease())
    wait = max(1, math.ceil((end - timezone.now()).total_seconds()))
    return ApiError(
        409, "idempotency-in-progress",
        f"the first request with this key is still running; retry after {wait} s",
        field=HEADER, retry_after=wait, headers={"Retry-After": str(wait)},
    )


def idempotent(view_method):
    @functools.wraps(view_method)
    def wrapper(self, request, *args, **kwargs):
        key = request.headers.get(HEADER)
        if not key:
            return view_method(self, request, *args, **kwargs)
        if len(key) > 200:
            raise ApiError(400, "invalid", "Idempotency-Key is at most 200 characters", field=HEADER)
        parts = body_parts(request.data)
        try:
            with transaction.atomic():
                record = IdempotencyRecord.objects.create(
                    user=request.user, key=key, method=request.method, path=request.path,
                    body_digest=body_digest(request.data), body_parts=parts,
                    lease_expires_at=timezone.now() + _lease(),
                )
        except IntegrityError:
            record = IdempotencyRecord.objects.get(user=request.user, key=key)
            _refuse_reuse(record, request, parts)
            if record.state == IdempotencyRecord.State.RUNNING:
                if _claim_expired(record) is None:
                    raise _in_progress(record) from None
            else:
                response = Response(_stored_body(record.response_body), status=record.status_code)
                response["Idempotent-Replayed"] = "true"
                return response
        return _run_holding(record, view_method, self, request, *args, **kwargs)

    return wrapper


def _run_holding(record, view_method, view, request, *args, **kwargs):
    try:
        response = view_method(view, request, *args, **kwargs)
    except Exception as exc:
        # Store refusals (4xx) so a retry gets the same answer; forget crashes so a retry may run.
        try:
            handled = view.handle_exception(exc)
        except Exception:
            _release(record)
            raise
        if 400 <= handled.status_code < 500:
            _store(record, handled)
        else:
            _release(record)
        return handled
    if response.status_code < 500:
        _store(record, response)
    else:
        _release(record)
    return response


def _held(record: IdempotencyRecord):
    """This request's claim: the row, while its lease end is still the one this request set."""
    return IdempotencyRecord.objects.filter(
        pk=record.pk, state=IdempotencyRecord.State.RUNNING, lease_expires_at=record.lease_expires_at
    )


def _release(record: IdempotencyRecord) -> None:
    _held(record).delete()


def _store(record: IdempotencyRecord, response) -> None:
    # Kept as JSON text: PostgreSQL's jsonb reorders object keys, and a replay must be byte-identical.
    body = None if response.data is None else json.dumps(response.data, cls=JSONEncoder)
    _held(record).update(state=IdempotencyRecord.State.DONE, status_code=response.status_code, response_body=body)


def _stored_body(body):
    return json.loads(body) if isinstance(body, str) else body
