"""Hazard results: an emission mapped to the engine's Beam and Scenario, assessed under every
limit set, and the figures stored beside the emission.

Results are derived data. They are refreshed whenever an emission (or its laser's class)
changes, and an emission that cannot be assessed (no divergence, say) keeps no result, so
a stale figure is never shown for changed parameters.
"""
from __future__ import annotations

import logging
import math
from collections.abc import Iterable
from dataclasses import dataclass, field

from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from hazards import ENGINE_VERSION
from hazards.assessment import Assessment, Beam, Scenario, assess
from hazards.classes import normalise_class
from hazards.errors import InputError
from hazards.limits import LIMIT_SETS
from hazards.units import format_si
from registry.models import Emission, HazardResult, Person, TemporalMode
from registry.services._common import validated_save

logger = logging.getLogger(__name__)

# Engine input names (the assess command's options) -> the emission field a person edits.
_ENGINE_FIELDS = {
    "wavelength": "wavelength_m", "power": "average_power_W", "pulse_energy": "pulse_energy_J",
    "pulse_duration": "pulse_duration_s", "prf": "prf_Hz", "beam_diameter": "beam_diameter_m",
    "divergence": "divergence_rad", "diameter_at": "diameter_definition", "source_size": "source_size_rad",
    "fibre_na": "fibre_na", "laser_class": "laser",
}

# Band edges of the limit tables inside which a tunable range is also sampled, so that the
# worst case is not missed between the two ends of the range.
_BAND_EDGES_M = (315e-9, 400e-9, 600e-9, 700e-9, 1050e-9, 1150e-9, 1400e-9, 1500e-9, 1800e-9, 2600e-9)
_RANGE_SAMPLES = 7

# The limit tables start at 100 fs. A shorter pulse is assessed as a 100 fs pulse, with a
# warning, because the tables hold their values constant down to that edge (from memory;
# confirm with the LSO for few-cycle pulses).
_SHORTEST_TABULATED_PULSE_S = 1e-13


@dataclass
class RefreshSummary:
    assessed: int = 0
    not_assessed: list[tuple[Emission, str]] = field(default_factory=list)


def emission_beam(emission: Emission, *, wavelength_m: float | None = None) -> Beam:
    """The engine's Beam for ``emission`` (at ``wavelength_m`` within a tunable range).

    Raises ValidationError keyed by the emission field that is missing or inconsistent.
    """
    missing = {name: f"needed to assess the hazard of {emission}" for name in ("beam_diameter_m", "divergence_rad")
               if getattr(emission, name) is None}
    if missing:
        raise ValidationError(missing)
    continuous = emission.temporal_mode == TemporalMode.CONTINUOUS
    single = emission.temporal_mode == TemporalMode.SINGLE_PULSE
    assert emission.beam_diameter_m is not None and emission.divergence_rad is not None
    pulse_duration = emission.pulse_duration_s
    if pulse_duration is not None:
        pulse_duration = max(pulse_duration, _SHORTEST_TABULATED_PULSE_S)
    return Beam(
        wavelength_m=wavelength_m if wavelength_m is not None else emission.wavelength_m,
        power_W=emission.average_power_W,
        beam_diameter_m=emission.beam_diameter_m,
        divergence_rad=emission.divergence_rad,
        diameter_at=emission.diameter_definition,
        pulse_energy_J=None if continuous else emission.pulse_energy_J,
        pulse_duration_s=None if continuous else pulse_duration,
        prf_Hz=None if continuous or single else emission.prf_Hz,
        source_size_rad=emission.source_size_rad,
        # The beam's own hazard is that of the embedded laser when an enclosure relabels it.
        laser_class=normalise_class(emission.laser.effective_class),
    )


def emission_scenario(emission: Emission, *, limits: str) -> Scenario:
    """Common-practice viewing: default exposure duration, the fibre end where there is one."""
    fibre = emission.fibre_na is not None
    return Scenario(limits=limits, fibre_na=emission.fibre_na,
                    fibre_core_m=emission.beam_diameter_m if fibre else None)


def _wavelengths(emission: Emission) -> list[float]:
    low, high = emission.wavelength_m, emission.wavelength_max_m
    if high is None:
        return [low]
    inside = [edge for edge in _BAND_EDGES_M if low < edge < high]
    spread = [low * (high / low) ** (step / (_RANGE_SAMPLES - 1)) for step in range(_RANGE_SAMPLES)]
    return sorted(set(spread + inside))


def _severity(assessment: Assessment) -> tuple[bool, float, float]:
    return (assessment.nohd.unbounded, assessment.nohd.distance_m or 0.0, assessment.od_exact)


@dataclass(frozen=True)
class EmissionEvaluation:
    """What is stored for an emission: the assessment standing for it, the register's own
    warnings, and the optical density eyewear must reach (the highest over a tunable range)."""

    assessment: Assessment
    warnings: list[str]
    od_required: float
    od_exact: float


def emission_evaluate(emission: Emission, *, limits: str) -> EmissionEvaluation:
    """Assess ``emission`` under ``limits`` without writing anything. For a tunable range the
    assessment with the longest NOHD stands for the emission. Raises ValidationError keyed
    by the emission field the engine refused."""
    scenario = emission_scenario(emission, limits=limits)
    try:
        assessments = [assess(emission_beam(emission, wavelength_m=wavelength), scenario)
                       for wavelength in _wavelengths(emission)]
    except InputError as error:
        raise ValidationError({_ENGINE_FIELDS.get(error.field, error.field): error.message}) from None
    worst = max(assessments, key=_severity)
    densest = max(assessments, key=lambda item: item.od_exact)
    warnings: list[str] = []
    if emission.pulse_duration_s is not None and emission.pulse_duration_s < _SHORTEST_TABULATED_PULSE_S:
        warnings.append(f"Pulse duration {format_si(emission.pulse_duration_s, 's')} is shorter than the 100 fs "
                        "where the limit tables start; the pulses were assessed as 100 fs pulses. Confirm with "
                        "the LSO.")
    if len(assessments) > 1:
        assert emission.wavelength_max_m is not None
        warnings.append(
            f"Tunable from {format_si(emission.wavelength_m, 'm')} to {format_si(emission.wavelength_max_m, 'm')}: "
            f"assessed at {len(assessments)} wavelengths; the figures are for "
            f"{format_si(worst.beam.wavelength_m, 'm')}, the longest NOHD. The required optical density reaches "
            f"OD {densest.od_required} at {format_si(densest.beam.wavelength_m, 'm')}; eyewear must cover "
            "the whole range."
        )
    return EmissionEvaluation(assessment=worst, warnings=warnings, od_required=float(densest.od_required),
                              od_exact=float(densest.od_exact))


def emission_preview(emission: Emission, *, limits: str) -> HazardResult:
    """The HazardResult ``emission`` would get under ``limits``, unsaved (for a preview before
    anything is written). Raises ValidationError keyed by the emission field the engine refused."""
    return HazardResult(emission=emission, limits=limits, computed_at=timezone.now(),
                        **_result_values(emission_evaluate(emission, limits=limits)))


def _finite(value: object) -> float | None:
    if value is None:
        return None
    number = float(value)  # type: ignore[arg-type]
    return number if math.isfinite(number) else None


def _result_values(evaluation: EmissionEvaluation) -> dict[str, object]:
    assessment = evaluation.assessment
    eye, skin = assessment.eye.record, assessment.skin.record
    return {
        "exposure_s": assessment.exposure_s,
        "eye_mpe_J_m2": float(eye["radiant_exposure_J_m2"]),
        "eye_mpe_W_m2": float(eye["irradiance_W_m2"]),
        "eye_mpe_per_pulse_J_m2": None if assessment.beam.mode == "continuous" else assessment.eye.limit,
        "pulse_rule": assessment.eye.governing,
        "skin_exposure_s": assessment.skin.duration_s,
        "skin_mpe_J_m2": _finite(skin.get("radiant_exposure_J_m2")),
        "skin_mpe_W_m2": _finite(skin.get("irradiance_W_m2")),
        "nohd_m": None if assessment.nohd.unbounded else _finite(assessment.nohd.distance_m),
        "nohd_unbounded": assessment.nohd.unbounded,
        "diffuse_hazard_distance_m": _finite(assessment.diffuse.distance_m),
        "skin_hazard_distance_m": _finite(assessment.skin_distance.distance_m),
        "od_required": evaluation.od_required,
        "od_exact": evaluation.od_exact,
        "en207_marking": " + ".join(assessment.en207.markings),
        "en207_requirements": [requirement.to_dict() for requirement in assessment.en207.requirements],
        "working": assessment.working.to_json(),
        "warnings": list(assessment.warnings) + evaluation.warnings,
        "engine_version": ENGINE_VERSION,
    }


@transaction.atomic
def emission_assess(*, emission: Emission, limits: str, by: Person | None = None) -> HazardResult:
    """Assess ``emission`` under ``limits`` and store (or replace) its HazardResult."""
    values = _result_values(emission_evaluate(emission, limits=limits))
    result = HazardResult.objects.filter(emission=emission, limits=limits).first() or HazardResult(
        emission=emission, limits=limits)
    for name, value in values.items():
        setattr(result, name, value)
    result.computed_at = timezone.now()
    return validated_save(result, by=by)


def _is_current(emission: Emission, results: dict[str, HazardResult]) -> bool:
    return all(
        limits in results and results[limits].engine_version == ENGINE_VERSION
        and results[limits].computed_at >= max(emission.updated_at, emission.laser.updated_at)
        for limits in LIMIT_SETS
    )


@transaction.atomic
def hazard_results_refresh(*, emissions: Iterable[Emission], by: Person | None = None,
                           only_stale: bool = False) -> RefreshSummary:
    """Recompute the results of ``emissions`` under every limit set.

    With ``only_stale``, an emission whose results are newer than the emission and its
    laser and come from this engine version is left alone. An emission that cannot be
    assessed loses any old results and is listed with the reason, which is also kept in
    ``emission.assessment_problem`` (cleared once it assesses).
    """
    summary = RefreshSummary()
    for emission in emissions:
        if only_stale and _is_current(emission, {result.limits: result for result in emission.hazard_results.all()}):
            continue
        try:
            with transaction.atomic():
                for limits in LIMIT_SETS:
                    emission_assess(emission=emission, limits=limits, by=by)
        except ValidationError as error:
            _not_assessed(emission, _reason(error), summary)
            continue
        except Exception as error:  # noqa: BLE001
            # A fault inside the engine for one emission must not stop the register from
            # saving the emission; it is logged and reported, and no figure is shown.
            logger.warning("hazards engine failed on emission %s (%s): %s: %s", emission.pk, emission,
                           type(error).__name__, error)
            _not_assessed(emission, f"engine error: {type(error).__name__}: {error}", summary)
            continue
        _set_problem(emission, "")
        summary.assessed += 1
    return summary


def _reason(error: ValidationError) -> str:
    """The refusal in words, each message led by the emission field it names."""
    if not hasattr(error, "error_dict"):
        return "; ".join(error.messages)
    names = {field.name: str(field.verbose_name) for field in Emission._meta.get_fields() if hasattr(field, "verbose_name")}
    return "; ".join(f"{names.get(name, name)}: {message}" for name, messages in error.message_dict.items()
                     for message in messages)


def _not_assessed(emission: Emission, reason: str, summary: RefreshSummary) -> None:
    emission.hazard_results.all().delete()
    _set_problem(emission, reason)
    summary.not_assessed.append((emission, reason))


def _set_problem(emission: Emission, problem: str) -> None:
    # Derived, like the results: written without touching updated_at (which dates the
    # inputs the results were computed from) and without a history row of its own.
    if emission.assessment_problem != problem:
        Emission.objects.filter(pk=emission.pk).update(assessment_problem=problem)
        emission.assessment_problem = problem
