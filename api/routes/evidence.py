"""Project-nested routes for evidence (included by api/urls.py)."""

urlpatterns: list = []
