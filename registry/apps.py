from __future__ import annotations

from django.apps import AppConfig
from django.utils.translation import gettext_lazy as _


class RegistryConfig(AppConfig):
    name = "registry"
    verbose_name = _("Laser register")
    default_auto_field = "django.db.models.BigAutoField"

    def ready(self) -> None:
        # Registers the system checks; importing here, not at module level, keeps
        # settings unread until Django is set up.
        from registry import checks  # noqa: F401
        from registry.log_context import install_record_factory

        install_record_factory()
