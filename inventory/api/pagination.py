"""Pages of a list: ``?page=N&page_size=M`` (default 50, at most 500 per page)."""

from rest_framework.pagination import PageNumberPagination


class Pages(PageNumberPagination):
    page_size_query_param = "page_size"
    max_page_size = 500
