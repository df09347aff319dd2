"""System checks for settings that are legal but probably a mistake."""
from __future__ import annotations

from typing import Any

from django.conf import settings
from django.core.checks import CheckMessage, Tags, Warning, register


@register(Tags.security, deploy=True)
def check_mail_configured(app_configs: Any, **kwargs: Any) -> list[CheckMessage]:
    if settings.EMAIL_HOST:
        return []
    return [
        Warning(
            "EMAIL_HOST is not set, so mail (training expiry reminders, password resets) is only "
            "printed to the console.",
            hint="Set EMAIL_HOST, EMAIL_PORT, EMAIL_HOST_USER and EMAIL_HOST_PASSWORD(_FILE).",
            id="registry.W001",
        )
    ]
