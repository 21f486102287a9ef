"""The ``Actor`` of a request: the one place where HTTP meets the record's idea of who acts."""

from __future__ import annotations

from projects.models import ApiToken
from projects.record.changes import Actor


def actor_for(request) -> Actor:
    """The user, the device token (if one authenticated the request) and both request ids.

    ``request.request_id`` is the server's own id (``api.middleware``);
    the id the client sent travels separately, for correlation only.
    """
    token = request.auth if isinstance(request.auth, ApiToken) else None
    return Actor(
        user=request.user,
        token=token,
        request_id=getattr(request, "request_id", ""),
        client_request_id=getattr(request, "client_request_id", ""),
        device="" if token else "web session",
    )
