"""Top-level URLs: the admin (the LSO's workbench for now) and the home page."""
from __future__ import annotations

from django.contrib import admin
from django.urls import path
from django.views.generic import RedirectView

urlpatterns = [
    path("admin/", admin.site.urls),
    path("", RedirectView.as_view(pattern_name="admin:index", permanent=False), name="home"),
]
