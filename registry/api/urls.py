"""/api/v1/: an index, the register's viewsets, evaluation, token sign-in, schema and docs."""
from __future__ import annotations

from django.urls import include, path
from rest_framework.routers import DefaultRouter

# Registers the OpenAPI description of quantity fields with drf-spectacular.
import registry.schema  # noqa: F401
from registry.api import docs
from registry.api.auth import TokenSignInView
from registry.api.documents import PDF_RENDERERS
from registry.api.evaluate import EvaluateView
from registry.api.audits import AuditViewSet, FindingViewSet, IncidentViewSet
from registry.api.lasers import EmissionViewSet, HazardResultViewSet, LaserViewSet
from registry.api.people import AuthorizationViewSet, PersonViewSet, SOPViewSet, TrainingRecordViewSet
from registry.api.places import EyewearViewSet, LocationViewSet

app_name = "api"

router = DefaultRouter()
router.include_root_view = False
router.register("locations", LocationViewSet, basename="location")
router.register("lasers", LaserViewSet, basename="laser")
router.register("emissions", EmissionViewSet, basename="emission")
router.register("hazard-results", HazardResultViewSet, basename="hazard-result")
router.register("people", PersonViewSet, basename="person")
router.register("training-records", TrainingRecordViewSet, basename="training-record")
router.register("authorizations", AuthorizationViewSet, basename="authorization")
router.register("sops", SOPViewSet, basename="sop")
router.register("eyewear", EyewearViewSet, basename="eyewear")
router.register("audits", AuditViewSet, basename="audit")
router.register("findings", FindingViewSet, basename="finding")
router.register("incidents", IncidentViewSet, basename="incident")

# /api/v1/ links each collection the router serves (by its list route), then the other entry points.
INDEX = {prefix: f"{basename}-list" for prefix, _viewset, basename in router.registry} | {
    "evaluate": "evaluate", "auth-token": "token", "schema": "schema", "docs": "docs", "redoc": "redoc"}

urlpatterns = [
    path("", docs.IndexView.as_view(api_root_dict=INDEX), name="index"),
    path("schema/", docs.SchemaView.as_view(), name="schema"),
    path("docs/", docs.SwaggerDocsView.as_view(url_name="api:schema"), name="docs"),
    path("docs/redoc/", docs.RedocDocsView.as_view(url_name="api:schema"), name="redoc"),
    path("auth/token/", TokenSignInView.as_view(), name="token"),
    path("evaluate/", EvaluateView.as_view(), name="evaluate"),
    # Printed documents (issue 11): the paths are a contract, with a file name and no trailing slash.
    path("locations/<str:pk>/sign.pdf", LocationViewSet.as_view({"get": "sign"}, renderer_classes=PDF_RENDERERS),
         name="location-sign"),
    path("lasers/<str:pk>/label.pdf", LaserViewSet.as_view({"get": "label"}, renderer_classes=PDF_RENDERERS),
         name="laser-label"),
    path("audits/<str:pk>/report.pdf", AuditViewSet.as_view({"get": "report_pdf"}, renderer_classes=PDF_RENDERERS),
         name="audit-report-pdf"),
    path("audits/<str:pk>/report.json", AuditViewSet.as_view({"get": "report_json"}), name="audit-report-json"),
    path("", include(router.urls)),
]
