"""Hazard results: emissions mapped to the engine's Beam and Scenario, assessed under every
limit set in one vectorised pass, and the figures stored beside each emission.

Results are derived data. They are refreshed whenever an emission (or its laser's class)
changes, and an emission that cannot be assessed (no divergence, say) keeps no result, so
a stale figure is never shown for changed parameters; the reason is kept in
``emission.assessment_problem``.
"""
from __future__ import annotations

import logging
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field

from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from hazards import ENGINE_VERSION
from hazards.assessment import Assessment, AssessmentDict, Beam, Scenario, assess_many, check_beam, check_scenario
from hazards.classes import normalise_class
from hazards.errors import InputError
from hazards.limits import LIMIT_SETS
from hazards.limits.limit_set import load_limit_set
from hazards.units import format_wavelength
from registry.models import EMISSION_BEAM_FIELDS, Emission, HazardResult, Person
from registry.services._common import validated_save
from registry.services._logging import service_action
from registry.services.standings import room_standings_refresh

logger = logging.getLogger(__name__)

# A tunable range is also assessed at these points between its ends, so that the worst case is
# not missed between two samples.
_RANGE_SAMPLES = 7


def _model_field(engine_field: str) -> str:
    return {"laser_class": "laser", **EMISSION_BEAM_FIELDS}.get(engine_field, engine_field)


def emission_beam(emission: Emission, *, wavelength_m: float | None = None) -> Beam:
    """The engine's Beam for ``emission`` (at ``wavelength_m`` within a tunable range).

    Raises ValidationError keyed by the emission field that is missing.
    """
    missing = {name: f"needed to assess the hazard of {emission}" for name in ("beam_diameter_m", "divergence_rad")
               if getattr(emission, name) is None}
    if missing:
        raise ValidationError(missing)
    mode = emission.beam_mode
    assert emission.beam_diameter_m is not None and emission.divergence_rad is not None
    return Beam(
        wavelength_m=wavelength_m if wavelength_m is not None else emission.wavelength_m,
        power_W=emission.average_power_W,
        beam_diameter_m=emission.beam_diameter_m,
        divergence_rad=emission.divergence_rad,
        diameter_at=emission.diameter_definition,
        pulse_energy_J=None if mode == "continuous" else emission.pulse_energy_J,
        pulse_duration_s=None if mode == "continuous" else emission.pulse_duration_s,
        prf_Hz=emission.prf_Hz if mode == "pulse_train" else None,
        source_size_rad=emission.source_size_rad,
        # The beam's own hazard is that of the embedded laser when an enclosure relabels it.
        laser_class=normalise_class(emission.laser.effective_class),
    )


def emission_scenario(emission: Emission, *, limits: str) -> Scenario:
    """Common-practice viewing: default exposure duration, the fibre end where there is one."""
    fibre = emission.fibre_na is not None
    return Scenario(limits=limits, fibre_na=emission.fibre_na,
                    fibre_core_m=emission.beam_diameter_m if fibre else None)


def _band_edges() -> tuple[float, ...]:
    # Where any shipped limit set changes: a range is sampled at every edge inside it.
    return tuple(sorted({edge for name in LIMIT_SETS for edge in load_limit_set(name).wavelength_edges_m}))


def _wavelengths(emission: Emission) -> list[float]:
    low, high = emission.wavelength_m, emission.wavelength_max_m
    if high is None:
        return [low]
    inside = [edge for edge in _band_edges() if low < edge < high]
    spread = [low * (high / low) ** (step / (_RANGE_SAMPLES - 1)) for step in range(_RANGE_SAMPLES)]
    return sorted(set(spread + inside))


@dataclass(frozen=True)
class EmissionEvaluation:
    """What is stored for an emission under one limit set: the assessment standing for it, its
    record, the register's own warnings, and the optical density eyewear must reach (the highest
    over a tunable range)."""

    assessment: Assessment
    record: AssessmentDict
    warnings: list[str]
    od_required: float
    od_exact: float


@dataclass
class Evaluations:
    """Every emission's evaluation under every limit set asked for, and why the others were not assessed."""

    results: dict[tuple[int, str], EmissionEvaluation] = field(default_factory=dict)
    problems: dict[int, str] = field(default_factory=dict)


def evaluate_emissions(emissions: Sequence[Emission], *, limit_sets: Sequence[str] = LIMIT_SETS) -> Evaluations:
    """Assess ``emissions`` under ``limit_sets`` in one pass of the engine, writing nothing.

    Keys are (position in ``emissions``, limit set). For a tunable range the assessment with
    the longest NOHD stands for the emission, with the highest OD over the range.
    """
    evaluations = Evaluations()
    beams: list[Beam] = []
    scenarios: list[Scenario] = []
    owners: list[tuple[int, str]] = []
    for position, emission in enumerate(emissions):
        try:
            candidates = [(emission_beam(emission, wavelength_m=wavelength), emission_scenario(emission, limits=limits),
                           limits) for limits in limit_sets for wavelength in _wavelengths(emission)]
            for beam, scenario, _limits in candidates:
                check_beam(beam)
                check_scenario(scenario)
        except ValidationError as error:
            evaluations.problems[position] = _reason(error)
            continue
        except InputError as error:
            evaluations.problems[position] = _reason(ValidationError({_model_field(error.field): error.message}))
            continue
        for beam, scenario, limits in candidates:
            beams.append(beam)
            scenarios.append(scenario)
            owners.append((position, limits))
    try:
        batch = assess_many(beams, scenarios)
    except Exception as error:  # noqa: BLE001
        # A fault inside the engine must not stop the register from saving emissions: assess them
        # one by one, so that only the emission it belongs to is reported (and logged) without figures.
        if len({position for position, _limits in owners}) <= 1:
            for position, _limits in owners:
                logger.warning("hazards engine failed on emission %s (%s): %s: %s", emissions[position].pk,
                               emissions[position], type(error).__name__, error)
                evaluations.problems[position] = f"engine error: {type(error).__name__}: {error}"
            return evaluations
        for position, emission in enumerate(emissions):
            if position not in evaluations.problems:
                single = evaluate_emissions([emission], limit_sets=limit_sets)
                evaluations.results.update({(position, limits): value
                                            for (_zero, limits), value in single.results.items()})
                evaluations.problems.update({position: problem for problem in single.problems.values()})
        return evaluations
    grouped: dict[tuple[int, str], list[Assessment]] = {}
    for row, owner in enumerate(owners):
        grouped.setdefault(owner, []).append(Assessment(batch, row))
    for (position, limits), assessments in grouped.items():
        evaluations.results[(position, limits)] = _evaluation(emissions[position], assessments)
    return evaluations


def _evaluation(emission: Emission, assessments: list[Assessment]) -> EmissionEvaluation:
    worst = max(assessments, key=lambda item: (item.nohd_unbounded, item.nohd_m or 0.0, item.od_exact))
    densest = max(assessments, key=lambda item: item.od_exact)
    warnings: list[str] = []
    if len(assessments) > 1:
        assert emission.wavelength_max_m is not None
        warnings.append(
            f"Tunable from {format_wavelength(emission.wavelength_m, emission.wavelength_max_m)}: "
            f"assessed at {len(assessments)} wavelengths; the figures are for "
            f"{format_wavelength(worst.beam.wavelength_m)}, the longest NOHD. The required optical density reaches "
            f"OD {densest.od_required} at {format_wavelength(densest.beam.wavelength_m)}; eyewear must cover "
            "the whole range."
        )
    return EmissionEvaluation(assessment=worst, record=worst.to_dict(), warnings=warnings,
                              od_required=float(densest.od_required), od_exact=float(densest.od_exact))


def emission_evaluate(emission: Emission, *, limits: str) -> EmissionEvaluation:
    """Assess one (possibly unsaved) emission under ``limits`` without writing anything.

    Raises ValidationError keyed by the emission field the engine refused or needs.
    """
    evaluations = evaluate_emissions([emission], limit_sets=[limits])
    if 0 in evaluations.problems:
        raise ValidationError(evaluations.problems[0])
    return evaluations.results[(0, limits)]


def _reason(error: ValidationError) -> str:
    """The refusal in words, each message led by the emission field it names."""
    if not hasattr(error, "error_dict"):
        return "; ".join(error.messages)
    names = {field.name: str(field.verbose_name) for field in Emission._meta.get_fields() if hasattr(field, "verbose_name")}
    return "; ".join(f"{names.get(name, name)}: {message}" for name, messages in error.message_dict.items()
                     for message in messages)


def emission_preview(emission: Emission, *, limits: str) -> HazardResult:
    """The HazardResult ``emission`` would get under ``limits``, unsaved (for a preview before
    anything is written). Raises ValidationError keyed by the emission field the engine refused."""
    return HazardResult(emission=emission, limits=limits, computed_at=timezone.now(),
                        **_result_values(emission_evaluate(emission, limits=limits)))


def _result_values(evaluation: EmissionEvaluation) -> dict[str, object]:
    record = evaluation.record
    basis, skin = record["exposure_basis"], record["skin_limit"]
    pulsed = record["mode"] != "continuous"
    return {
        "exposure_s": basis["exposure_s"],
        "eye_mpe_J_m2": basis["mpe_J_m2"],
        "eye_mpe_W_m2": basis["mpe_W_m2"],
        "eye_mpe_per_pulse_J_m2": basis["mpe"] if pulsed else None,
        "pulse_rule": record["governing_pulse_rule"],
        "skin_exposure_s": basis["skin_exposure_s"],
        "skin_mpe_J_m2": skin["mpe_J_m2"],
        "skin_mpe_W_m2": skin["mpe_W_m2"],
        "nohd_m": record["nohd_m"],
        "nohd_unbounded": record["nohd_unbounded"],
        "diffuse_hazard_distance_m": record["diffuse_hazard_distance_m"],
        "skin_hazard_distance_m": record["skin_hazard_distance_m"],
        "od_required": evaluation.od_required,
        "od_exact": evaluation.od_exact,
        "en207_marking": " + ".join(record["en207"]["markings"]),
        "en207_requirements": record["en207"]["requirements"],
        "working": record.get("working", []),
        "warnings": list(record["warnings"]) + evaluation.warnings,
        "engine_version": ENGINE_VERSION,
    }


def _store(emission: Emission, limits: str, evaluation: EmissionEvaluation, by: Person | None,
           existing: HazardResult | None) -> tuple[HazardResult | None, HazardResult]:
    """Save the result, returning (what was stored before, if anything, as a detached copy; the new result)."""
    before = None
    if existing is not None:
        before = HazardResult(od_required=existing.od_required, nohd_m=existing.nohd_m,
                              nohd_unbounded=existing.nohd_unbounded)
    result = existing or HazardResult(emission=emission, limits=limits)
    for name, value in _result_values(evaluation).items():
        setattr(result, name, value)
    result.computed_at = timezone.now()
    return before, validated_save(result, by=by, validate_constraints=False)


@transaction.atomic
def emission_assess(*, emission: Emission, limits: str, by: Person | None = None) -> HazardResult:
    """Assess ``emission`` under ``limits`` and store (or replace) its HazardResult."""
    evaluation = emission_evaluate(emission, limits=limits)
    existing = HazardResult.objects.filter(emission=emission, limits=limits).first()
    return _store(emission, limits, evaluation, by, existing)[1]


@dataclass(frozen=True)
class FigureChange:
    """An emission whose required OD or NOHD moved when its results were recomputed."""

    emission: Emission
    limits: str
    od_before: float | None
    od_after: float | None
    nohd_before: float | None
    nohd_after: float | None
    unbounded_before: bool
    unbounded_after: bool


@dataclass
class RefreshSummary:
    assessed: int = 0
    not_assessed: list[tuple[Emission, str]] = field(default_factory=list)
    changes: list[FigureChange] = field(default_factory=list)


def _is_current(emission: Emission, results: dict[str, HazardResult]) -> bool:
    return all(
        limits in results and results[limits].engine_version == ENGINE_VERSION
        and results[limits].computed_at >= max(emission.updated_at, emission.laser.updated_at)
        for limits in LIMIT_SETS
    )


@service_action
@transaction.atomic
def hazard_results_refresh(*, emissions: Iterable[Emission], by: Person | None = None, only_stale: bool = False,
                           limit_sets: Sequence[str] = LIMIT_SETS,
                           progress: Callable[[int], None] | None = None) -> RefreshSummary:
    """Recompute the results of ``emissions`` under ``limit_sets`` (every shipped set by default).

    The engine runs once over all of them. With ``only_stale``, an emission whose results are
    newer than the emission and its laser and come from this engine version is left alone. An
    emission that cannot be assessed loses any old results and is listed with the reason, which
    is also kept in ``emission.assessment_problem`` (cleared once it assesses). ``changes`` lists
    every stored result whose required OD or NOHD moved; ``progress`` is called with the number
    of emissions stored since its last call. The standing of the rooms of the emissions' lasers
    is refreshed after (services.standings). Atomic: all or nothing.
    """
    summary = RefreshSummary()
    chosen = [emission for emission in emissions
              if not (only_stale and _is_current(emission, {r.limits: r for r in emission.hazard_results.all()}))]
    evaluations = evaluate_emissions(chosen, limit_sets=limit_sets)
    for position, emission in enumerate(chosen):
        if position in evaluations.problems:
            _not_assessed(emission, evaluations.problems[position], summary)
        else:
            existing = {result.limits: result for result in emission.hazard_results.all()}
            for limits in limit_sets:
                before, after = _store(emission, limits, evaluations.results[(position, limits)], by,
                                       existing.get(limits))
                if before is not None and _moved(before, after):
                    summary.changes.append(FigureChange(emission, limits, before.od_required, after.od_required,
                                                        before.nohd_m, after.nohd_m, before.nohd_unbounded,
                                                        after.nohd_unbounded))
            _set_problem(emission, "")
            summary.assessed += 1
        if progress is not None:
            progress(1)
    room_standings_refresh(locations={emission.laser.location_id for emission in chosen})
    return summary


def _moved(before: HazardResult, after: HazardResult) -> bool:
    def differs(old: float | None, new: float | None) -> bool:
        if old is None or new is None:
            return old is not new
        return abs(old - new) > 1e-9 * max(abs(old), abs(new), 1e-300)

    return (differs(before.od_required, after.od_required) or differs(before.nohd_m, after.nohd_m)
            or before.nohd_unbounded != after.nohd_unbounded)


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
