"""The register over HTTP: DRF viewsets under /api/v1/ (see registry.api.urls)."""
