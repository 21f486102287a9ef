"""Project-nested routes for the order check, the diagram and the exports."""

from django.urls import path, re_path

from api.views import checks

urlpatterns = [
    path("checks/", checks.CheckListView.as_view(), name="check-list"),
    re_path(r"^checks/(?P<revision>latest|\d+)/$", checks.CheckDetailView.as_view(), name="check-detail"),
    path("order/diagram.svg", checks.DiagramView.as_view(), name="order-diagram"),
    path("order/export.<str:fmt>", checks.ExportView.as_view(), name="order-export"),
    path("relationships/<int:relationship>/implied-by/", checks.ImpliedByView.as_view(), name="relationship-implied-by"),
]
