"""Errors the record's write path raises; the API maps each to one 4xx body."""

from __future__ import annotations


class RecordError(Exception):
    """A write the record refuses.  Nothing of it has been written."""

    status = 400
    code = "invalid"

    def __init__(self, message: str, *, field: str | None = None, code: str | None = None, **details):
        super().__init__(message)
        self.message = message
        self.field = field
        if code:
            self.code = code
        self.details = details

    def as_error(self) -> dict:
        body = {"field": self.field, "code": self.code, "message": self.message}
        body.update(self.details)
        return body


class RecordInvalid(RecordError):
    """The input names something that does not exist or breaks a rule of the record."""

    status = 400


class RecordNotFound(RecordError):
    status = 404
    code = "not-found"


class RecordConflict(RecordError):
    """The input contradicts what is already recorded (cycle, inverse, duplicate)."""

    status = 409
    code = "conflict"


class BatchRejected(RecordError):
    """A sync batch with at least one bad item; ``details['items']`` lists each."""

    status = 409
    code = "batch-rejected"
