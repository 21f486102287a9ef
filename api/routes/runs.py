"""Project-nested routes for model runs (included by api/urls.py)."""

from rest_framework.routers import SimpleRouter

from api.views.runs import RunViewSet

router = SimpleRouter()
router.register("runs", RunViewSet, basename="run")

urlpatterns = router.urls
