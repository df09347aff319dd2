"""Dates and training records as the reminder mails word them."""
from __future__ import annotations

import datetime

from django import template

from registry.models import TrainingRecord

register = template.Library()


@register.filter
def days_from(day: datetime.date | None, today: datetime.date) -> str:
    """A date with how far it is from ``today``: "2030-06-11 (in 10 days)", "2030-05-27 (5 days ago)"."""
    if day is None:
        return "no date"
    days = (day - today).days
    when = {0: "today", 1: "tomorrow", -1: "yesterday"}.get(days) or (
        f"in {days} days" if days > 0 else f"{-days} days ago")
    return f"{day:%Y-%m-%d} ({when})"


@register.filter
def training_name(record: TrainingRecord) -> str:
    """The course as its certificate names it, with its kind and, for equipment training, the laser."""
    kind = str(record.get_course_display())
    if record.laser is not None:
        kind += f", {record.laser.asset_tag}"
    return f"{record.title} ({kind})" if record.title else kind[:1].upper() + kind[1:]
