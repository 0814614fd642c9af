"""Pages of a list: ``?page=N&page_size=M`` (default 50, at most 500 per page)."""

from rest_framework.pagination import PageNumberPagination


class Pages(PageNumberPagination):
    page_size_query_param = "page_size"
    max_page_size = 500

    def get_paginated_response_schema(self, schema):
        paginated = super().get_paginated_response_schema(schema)
        paginated["properties"]["count"]["description"] = (
            "Records matching the query, on every page. Unit: count.")
        return paginated
