"""The API's index, the OpenAPI schema and the interactive documentation: open to anyone, served offline.

Swagger UI and Redoc come from drf-spectacular-sidecar's static files (installed from
PyPI), not from a CDN, so the pages work on a network without internet access.
"""
from __future__ import annotations

from drf_spectacular.views import SpectacularAPIView, SpectacularRedocView, SpectacularSwaggerView
from rest_framework.permissions import AllowAny
from rest_framework.routers import APIRootView


class IndexView(APIRootView):
    """/api/v1/: a link to every collection and to the other entry points (sign-in, schema, docs).

    Open to anyone like the schema: it names URLs, and each collection it links answers 401
    until the caller signs in. JSON for clients, DRF's browsable page for browsers.
    """

    permission_classes = [AllowAny]


class SchemaView(SpectacularAPIView):
    permission_classes = [AllowAny]


class SwaggerDocsView(SpectacularSwaggerView):
    permission_classes = [AllowAny]


class RedocDocsView(SpectacularRedocView):
    permission_classes = [AllowAny]
    # drf-spectacular's own template links a web-font stylesheet on the internet.
    template_name = "api/redoc.html"
