"""Writes for training records."""
from __future__ import annotations

import datetime

from django.db import transaction

from registry.models import Laser, Person, TrainingRecord
from registry.services._common import validated_save


@transaction.atomic
def training_record(
    *,
    person: Person,
    course: str,
    completed_on: datetime.date,
    by: Person | None,
    valid_until: datetime.date | None = None,
    laser: Laser | None = None,
    title: str = "",
    evidence: str = "",
    verified_by: Person | None = None,
) -> TrainingRecord:
    """Record completed training. Equipment-specific training names its laser."""
    record = TrainingRecord(
        person=person, course=course, completed_on=completed_on, valid_until=valid_until, laser=laser,
        title=title, evidence=evidence, verified_by=verified_by,
    )
    return validated_save(record, by=by)
