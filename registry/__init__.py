"""The register: Django project and app (settings, models, services, admin, commands)."""
