"""Top-level URL configuration."""

from django.contrib import admin
from django.urls import include, path

urlpatterns = [
    path("admin/", admin.site.urls),
    path("api/", include("api.urls")),
    path("", include("web.urls")),
]

handler400 = "api.errors.bad_request_view"
handler404 = "web.errors.not_found"  # HTML for people, the API's JSON body under /api/
handler500 = "api.errors.server_error_view"
