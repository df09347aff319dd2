"""Page-number pagination whose page size a client may choose, up to a bound."""
from __future__ import annotations

from rest_framework.pagination import PageNumberPagination

from registry.pagination import KeysFirstPaginator


class BoundedPagination(PageNumberPagination):
    django_paginator_class = KeysFirstPaginator
    page_size = 50
    page_size_query_param = "page_size"
    # Keeps one request's cost bounded however large the register grows.
    max_page_size = 200
