"""Top-level URL configuration."""

from django.contrib import admin
from django.urls import include, path

urlpatterns = [
    path("admin/", admin.site.urls),
    path("api/", include("api.urls")),
]

handler400 = "api.errors.bad_request_view"
handler404 = "api.errors.not_found_view"
handler500 = "api.errors.server_error_view"
