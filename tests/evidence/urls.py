"""The project's URLs with the curve routes mounted at ``/api/v1/`` (as api/urls.py is to do)."""

from django.urls import include, path

from api.routes.evidence import global_urlpatterns
from config.urls import urlpatterns as project_urlpatterns

urlpatterns = [*project_urlpatterns, path("api/v1/", include(global_urlpatterns))]
