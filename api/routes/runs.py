"""Project-nested routes for runs (included by api/urls.py)."""

urlpatterns: list = []
