"""Project-nested routes for interpretations and the project's jobs (included by api/urls.py)."""

from rest_framework.routers import SimpleRouter

from api.views import interpretations

router = SimpleRouter()
router.register("interpretations", interpretations.InterpretationViewSet, basename="interpretation")
router.register("versions", interpretations.VersionViewSet, basename="interpretation-version")
router.register("reading", interpretations.ReadingViewSet, basename="interpretation-reading")
router.register("jobs", interpretations.JobViewSet, basename="project-job")

urlpatterns = router.urls
