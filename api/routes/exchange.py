"""Project-nested routes for packages, linked data and register imports (included by api/urls.py)."""

from django.urls import path

from api.views import exchange

urlpatterns = [
    path("package/", exchange.PackageView.as_view(), name="project-package"),
    path("package/files/<uuid:job>/", exchange.PackageFileView.as_view(), name="project-package-file"),
    path("package.jsonld", exchange.LinkedDataView.as_view(), name="project-linked-data"),
    path("imports/", exchange.RegisterImportView.as_view(), name="project-register-import"),
]
