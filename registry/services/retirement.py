"""Retiring compliance records: they stay in the register, marked with when and why."""
from __future__ import annotations

from django.db import transaction
from django.utils import timezone

from registry.models import Person, Role
from registry.models.base import ComplianceRecord
from registry.services._common import lock_for_change, require_role, require_text, validated_save
from registry.services._logging import service_action
from registry.services.standings import room_standings_refresh, standing_rooms


@service_action
@transaction.atomic
def record_retire(*, record: ComplianceRecord, by: Person, reason: str) -> ComplianceRecord:
    """Retire a training record, SOP, authorization, eyewear item, audit, finding or incident."""
    require_role(by, Role.LSO, action=f"retire a {record._meta.verbose_name}")
    text = require_text(reason, field="retirement_reason", what="A reason")
    # Refuses a record retired already (or an SOP or authorization of a retired laser).
    lock_for_change(record)
    record.retirement_reason = text
    record.retired_at = timezone.now()
    validated_save(record, by=by)
    room_standings_refresh(locations=standing_rooms(record))  # a retired eyewear item protects nobody
    return record
