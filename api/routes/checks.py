"""Project-nested routes for checks (included by api/urls.py)."""

urlpatterns: list = []
