"""Page-number pagination; every list is ordered deterministically by its view."""

from rest_framework.pagination import PageNumberPagination


class StablePagination(PageNumberPagination):
    page_size = 100
    page_size_query_param = "page_size"
    max_page_size = 1000
