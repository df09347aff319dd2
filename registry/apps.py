from __future__ import annotations

from typing import Any

from django.apps import AppConfig
from django.db import connections
from django.db.migrations.executor import MigrationExecutor
from django.db.models.signals import post_migrate
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
        post_migrate.connect(fill_missing_standings, sender=self)


def fill_missing_standings(sender: AppConfig, *, using: str, plan: list[Any] | None = None, **kwargs: Any) -> None:
    """After a ``migrate`` that applied migrations forward and left the register at its latest
    schema, give every room without a stored standing its standing (flush sends the signal with
    no plan, and a database migrated back or to an older target has tables the code's models do
    not match)."""
    if not plan or any(backwards for _migration, backwards in plan):
        return
    executor = MigrationExecutor(connections[using])
    if executor.migration_plan(executor.loader.graph.leaf_nodes()):
        return
    from registry.services.standings import room_standings_fill_missing

    room_standings_fill_missing()
