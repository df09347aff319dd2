"""Writes to the register, one module per topic. Every service is keyword-only, runs
full_clean() before save() inside transaction.atomic, and refuses what the workflow does
not allow with a ValidationError keyed by the field at fault (TransitionError for status
changes, PrerequisiteError for missing prerequisites, StateError for a read-only record or
a state that moved under the caller) or PermissionDenied for the wrong role. A change to an
existing record locks its row first and saves only the columns it changed (_common.py).
"""
from __future__ import annotations

from registry.services.audits import (
    audit_answer,
    audit_plan,
    audit_sign_off,
    audit_start,
    audit_update,
    finding_close,
    finding_raise,
    finding_update,
)
from registry.services.authorizations import (
    authorization_approve,
    authorization_refuse,
    authorization_request,
    authorization_revoke,
    authorization_withdraw,
)
from registry.services._common import lock_for_decision, refuse_if_read_only
from registry.services.errors import PrerequisiteError, StateConflict, StateError, TransitionError
from registry.services.eyewear import (
    eyewear_create,
    eyewear_inspect,
    eyewear_set_markings,
    eyewear_update,
    location_create,
    location_update,
)
from registry.services.incidents import incident_close, incident_investigate, incident_report, incident_update
from registry.services.lasers import (
    emission_create,
    emission_update,
    laser_approve,
    laser_register,
    laser_retire,
    laser_return,
    laser_set_status,
    laser_submit,
    laser_update,
)
from registry.services.people import (
    person_create,
    person_sync_account,
    person_set_role,
    person_update,
    research_group_create,
    role_groups_ensure,
)
from registry.services.retirement import record_retire
from registry.services.sops import sop_acknowledge, sop_approve, sop_create, sop_update
from registry.services.training import training_record, training_record_update

__all__ = [
    "audit_answer", "audit_plan", "audit_sign_off", "audit_start", "audit_update", "finding_close", "finding_raise",
    "finding_update",
    "authorization_approve", "authorization_refuse", "authorization_request", "authorization_revoke",
    "authorization_withdraw", "lock_for_decision", "refuse_if_read_only", "PrerequisiteError", "StateConflict",
    "StateError", "TransitionError", "eyewear_create",
    "eyewear_inspect", "eyewear_set_markings", "eyewear_update", "location_create", "location_update",
    "incident_close", "incident_investigate", "incident_report", "incident_update",
    "emission_create", "emission_update", "laser_approve", "laser_register", "laser_retire", "laser_return",
    "laser_set_status", "laser_submit", "laser_update", "person_create", "person_sync_account", "person_set_role", "person_update",
    "research_group_create", "role_groups_ensure", "record_retire", "sop_acknowledge", "sop_approve",
    "sop_create", "sop_update", "training_record", "training_record_update",
]
