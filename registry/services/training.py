"""Writes for training records."""
from __future__ import annotations

import datetime
from typing import Any

from django.db import transaction

from registry.models import Laser, Person, Role, TrainingRecord
from registry.services._common import lock_for_change, require_role, save_changes, validated_save
from registry.services._logging import service_action

# What a training portal corrects; whose training it is and which laser it covers stay
# as recorded (a different person's training is a new record).
TRAINING_EDITABLE_FIELDS = frozenset({"course", "completed_on", "valid_until", "evidence"})


@service_action
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


@service_action
@transaction.atomic
def training_record_update(*, training_record: TrainingRecord, by: Person, **changes: Any) -> TrainingRecord:
    """Correct a training record (TRAINING_EDITABLE_FIELDS); the dates are checked together."""
    require_role(by, Role.LSO, action="correct a training record")
    lock_for_change(training_record)
    return save_changes(training_record, changes, editable=TRAINING_EDITABLE_FIELDS, what="a training record",
                        by=by)
