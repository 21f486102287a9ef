"""Project-nested routes for weighing by the evidence and sensitivity runs (included by api/urls.py)."""

from rest_framework.routers import SimpleRouter

from api.views.weighing import SensitivityViewSet, WeighingViewSet

router = SimpleRouter()
router.register("weighings", WeighingViewSet, basename="weighing")
router.register("sensitivity", SensitivityViewSet, basename="sensitivity")

urlpatterns = router.urls
