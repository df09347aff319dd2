"""Top-level URLs: the admin (the LSO's workbench for now) and the home page."""
from __future__ import annotations

from django.contrib import admin
from django.urls import include, path
from django.views.generic import RedirectView

urlpatterns = [
    path("admin/", admin.site.urls),
    path("api/v1/", include("registry.api.urls", namespace="api")),
    path("", RedirectView.as_view(pattern_name="admin:index", permanent=False), name="home"),
]
