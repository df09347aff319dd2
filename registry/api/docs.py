"""The API's index, the OpenAPI schema and the interactive documentation: open to anyone, served offline.

Swagger UI and Redoc come from drf-spectacular-sidecar's static files (installed from
PyPI), not from a CDN, so the pages work on a network without internet access.

The site's Content-Security-Policy (settings.CONTENT_SECURITY_POLICY) allows no inline
script or style. The templates here carry none (Swagger UI's start-up script is fetched
from its own URL, SpectacularSwaggerSplitView), and the policy is widened, view by view,
only for what the bundled code does itself: DOCS_CSP and BROWSABLE_API_CSP.
"""
from __future__ import annotations

from csp.constants import UNSAFE_INLINE
from csp.decorators import csp_update
from django.utils.decorators import method_decorator
from drf_spectacular.views import SpectacularAPIView, SpectacularRedocView, SpectacularSwaggerSplitView
from rest_framework.permissions import AllowAny
from rest_framework.routers import APIRootView

# Swagger UI draws its icons from data: URLs; Redoc styles itself by inserting <style>
# elements from script and runs its search in a worker made from a blob: URL.
SWAGGER_CSP = {"img-src": ["data:"]}
REDOC_CSP = {"img-src": ["data:"], "style-src": [UNSAFE_INLINE], "worker-src": ["blob:"]}
# DRF's browsable pages (an API URL opened in a browser) carry style attributes.
BROWSABLE_API_CSP = {"style-src": [UNSAFE_INLINE]}

browsable_api_csp = method_decorator(csp_update(BROWSABLE_API_CSP), name="dispatch")


@browsable_api_csp
class IndexView(APIRootView):
    """/api/v1/: a link to every collection and to the other entry points (sign-in, schema, docs).

    Open to anyone like the schema: it names URLs, and each collection it links answers 401
    until the caller signs in. JSON for clients, DRF's browsable page for browsers.
    """

    permission_classes = [AllowAny]


class SchemaView(SpectacularAPIView):
    permission_classes = [AllowAny]


@method_decorator(csp_update(SWAGGER_CSP), name="dispatch")
class SwaggerDocsView(SpectacularSwaggerSplitView):
    permission_classes = [AllowAny]
    # drf-spectacular's own template has an inline <style>.
    template_name = "api/swagger_ui.html"


@method_decorator(csp_update(REDOC_CSP), name="dispatch")
class RedocDocsView(SpectacularRedocView):
    permission_classes = [AllowAny]
    # drf-spectacular's own template links a web-font stylesheet on the internet and starts
    # Redoc with an inline script.
    template_name = "api/redoc.html"
