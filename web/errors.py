"""Error pages: HTML for people, the API's JSON body under ``/api/``."""

from django.shortcuts import render

from api.errors import not_found_view as api_not_found


def not_found(request, exception=None):
    if request.path.startswith("/api/"):
        return api_not_found(request, exception)
    return render(request, "404.html", status=404)
