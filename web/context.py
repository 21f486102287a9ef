"""What every page's frame shows: the user's organisations and the chosen one."""

from .access import current_organisation, organisations_of


def navigation(request):
    user = getattr(request, "user", None)
    if user is None or not user.is_authenticated or request.path.startswith("/api/"):
        return {}
    return {"nav_organisations": organisations_of(user), "nav_organisation": current_organisation(request)}
