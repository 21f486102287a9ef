"""Rate limits by role for the heavy endpoints (calibrations, their plots, curve imports).

A view opts in with ``throttle_scope = "heavy"`` (or an action with
``@action(..., throttle_scope="heavy")``). The rate comes from
``TELLSTACK_THROTTLE_RATES[scope][role]``: the caller's role in the view's
project, or their highest role in any organisation for views outside a
project. A refusal is DRF's 429 with ``Retry-After``, in the API's error body.
"""

from __future__ import annotations

from django.conf import settings
from rest_framework.throttling import SimpleRateThrottle

from projects.models import Membership, Role

__all__ = ["RoleScopedThrottle", "DEFAULT_RATES"]

#: Requests per role (DRF rate strings); superusers and staff are not limited.
DEFAULT_RATES = {
    "heavy": {Role.VIEWER: "30/minute", Role.RECORDER: "60/minute", Role.ANALYST: "120/minute",
              Role.MANAGER: "120/minute", "": "10/minute"},
}


def _role(request, view) -> str:
    get_project = getattr(view, "get_project", None)
    if get_project is not None and "project" in getattr(view, "kwargs", {}):
        return get_project().role_of(request.user) or ""
    roles = Membership.objects.filter(user=request.user).values_list("role", flat=True)
    return max(roles, key=Role.rank, default="")


class RoleScopedThrottle(SimpleRateThrottle):
    """``SimpleRateThrottle`` whose rate depends on the view's scope and the caller's role."""

    scope_attr = "throttle_scope"

    def __init__(self):
        pass  # the rate is known only with the request (see allow_request)

    def allow_request(self, request, view):
        self.scope = getattr(view, self.scope_attr, None)
        user = request.user
        if not self.scope or not user or not user.is_authenticated or user.is_superuser or user.is_staff:
            return True
        self.role = _role(request, view)
        rates = getattr(settings, "TELLSTACK_THROTTLE_RATES", DEFAULT_RATES).get(self.scope, {})
        self.rate = rates.get(self.role) or rates.get("")
        if self.rate is None:
            return True
        self.num_requests, self.duration = self.parse_rate(self.rate)
        return super().allow_request(request, view)

    def get_cache_key(self, request, view):
        return self.cache_format % {"scope": f"{self.scope}-{self.role}", "ident": request.user.pk}
