"""Project-nested routes for interpretations (included by api/urls.py)."""

urlpatterns: list = []
