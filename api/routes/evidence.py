"""Routes for dating evidence.

``urlpatterns`` are nested under ``/api/v1/projects/{project}/`` (included by
api/urls.py): samples, determinations (with ``calibration`` and ``plot``),
calendar dates, termini and ``calibrate``.  ``global_urlpatterns`` belong
under ``/api/v1/``: the calibration curves.
"""

from django.urls import path
from rest_framework.routers import SimpleRouter

from api.views import evidence

nested = SimpleRouter()
nested.register("samples", evidence.SampleViewSet, basename="sample")
nested.register("determinations", evidence.DeterminationViewSet, basename="determination")
nested.register("calendar-dates", evidence.CalendarDateViewSet, basename="calendar-date")
nested.register("termini", evidence.TerminusViewSet, basename="terminus")

urlpatterns = [
    *nested.urls,
    path("calibrate/", evidence.CalibrateView.as_view(), name="calibrate"),
]

curves = SimpleRouter()
curves.register("curves", evidence.CurveViewSet, basename="curve")

global_urlpatterns = [*curves.urls]
