"""The register's data model, one module per topic; import models from here."""
from __future__ import annotations

from registry.models.audit import (
    Audit,
    AuditChecklistItem,
    AuditScope,
    AuditStatus,
    ChecklistAnswer,
    Finding,
    FindingSeverity,
    FindingStatus,
)
from registry.models.authorization import OPEN_AUTHORIZATION_STATUSES, Authorization, AuthorizationStatus
from registry.models.base import FREE_TEXT_MAX_LENGTH, RecordRetainedError
from registry.models.eyewear import Eyewear, EyewearCondition, EyewearMarking
from registry.models.hazard import HazardResult
from registry.models.incident import Incident, IncidentKind, IncidentStatus
from registry.models.laser import (
    EMISSION_BEAM_FIELDS,
    HAZARDOUS_CLASSES,
    MAX_WAVELENGTH_M,
    MIN_WAVELENGTH_M,
    PULSED_MODES,
    RETIRED_STATUSES,
    DiameterDefinition,
    Emission,
    Laser,
    LaserClass,
    LaserStatus,
    LaserType,
    TemporalMode,
    class_rank,
    effective_class,
)
from registry.models.location import InterlockKind, Location
from registry.models.people import Person, ResearchGroup, Role
from registry.models.reminder import ReminderKind, SentReminder
from registry.models.sop import SOP, SOPAcknowledgement, SOPStatus
from registry.models.standing import STANDING_FIRST_EMISSIONS, RoomStanding
from registry.models.training import GENERAL_COURSES, CourseKind, TrainingRecord

__all__ = [
    "Audit", "AuditChecklistItem", "AuditScope", "AuditStatus", "ChecklistAnswer", "Finding", "FindingSeverity",
    "FindingStatus", "FREE_TEXT_MAX_LENGTH", "OPEN_AUTHORIZATION_STATUSES", "Authorization", "AuthorizationStatus", "RecordRetainedError",
    "Eyewear", "EyewearCondition", "EyewearMarking", "HazardResult", "Incident", "IncidentKind", "IncidentStatus",
    "EMISSION_BEAM_FIELDS", "HAZARDOUS_CLASSES", "MAX_WAVELENGTH_M", "MIN_WAVELENGTH_M", "PULSED_MODES", "RETIRED_STATUSES",
    "DiameterDefinition", "Emission", "Laser", "LaserClass", "LaserStatus", "LaserType", "TemporalMode", "class_rank", "effective_class",
    "InterlockKind", "Location", "Person", "ResearchGroup", "Role", "ReminderKind", "SentReminder", "SOP", "SOPAcknowledgement", "SOPStatus",
    "STANDING_FIRST_EMISSIONS", "RoomStanding",
    "GENERAL_COURSES", "CourseKind", "TrainingRecord",
]
