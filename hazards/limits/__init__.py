"""Exposure limits (MPE) for the eye and the skin under published limit sets.

Limit sets are data files in ``hazards/limits/data/`` (one per edition); the engine selects
rows from them and shows its working. Every function broadcasts over numpy arrays.
"""
from __future__ import annotations

from hazards.limits.exposure import (
    DEFAULT_LIMITS,
    LIMIT_SETS,
    ApertureLimit,
    ExposureLimit,
    check_limit_set,
    default_exposure_duration,
    default_exposure_durations,
    exposure_duration_basis,
    exposure_limit,
    short_duration_warning,
)
from hazards.limits.pulses import PULSE_RULES, LimitOption, PulseTrainLimit, pulse_train_limit

__all__ = [
    "DEFAULT_LIMITS",
    "LIMIT_SETS",
    "PULSE_RULES",
    "ApertureLimit",
    "ExposureLimit",
    "LimitOption",
    "PulseTrainLimit",
    "check_limit_set",
    "default_exposure_duration",
    "default_exposure_durations",
    "exposure_duration_basis",
    "exposure_limit",
    "pulse_train_limit",
    "short_duration_warning",
]
