"""The assessment of many emissions in one vectorised pass; one emission is a batch of one.

``assess_many(beams, scenarios)`` asks the limits engine once per limit set, tissue and
temporal mode for every limit that applies (each pulse rule, each aperture its rows are
averaged over), compares every emission's exposure with each over its own aperture, and
keeps the figures as arrays. The governing limit is the one with the highest exposure /
limit ratio: the OD follows it, the EN 207 rating is raised to that OD where it falls short,
and each hazard distance is the longest over the limits (a limit with a lower value but a
larger aperture can reach farther than the one that governs at the exit). Workings,
warnings and records are written per emission only when asked for (hazards.assessment.
presentation), from the same arrays.
"""
from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from hazards.assessment.inputs import Beam, Mode, Scenario, check_beam, check_scenario
from hazards.beam import FloatArray, averaged_exposure, one_over_e_factor
from hazards.classes import ClassChecks, check_classes
from hazards.distances import (
    Reach,
    condition_1_aperture,
    diffuse_reach,
    fibre_divergence,
    focused_divergence,
    optical_aid_reach,
    reach,
)
from hazards.errors import InputError
from hazards.eyewear import Adequacy, En207Ratings, en207_ratings, eyewear_adequacy, optical_density
from hazards.limits import ExposureLimit, PulseTrainLimit, default_exposure_durations, exposure_limit, pulse_train_limit

IndexArray = NDArray[np.intp]
BoolArray = NDArray[np.bool_]

SKIN_DEFAULT_EXPOSURE_S = 10.0  # no aversion response protects the skin (common practice, no source)
# The rules under which one pulse (not the average power) governs; the EN 207 pulse rating answers them.
PULSE_RULE_NAMES = frozenset({"single pulse", "single_pulse", "reduced_single_pulse"})
_MODES: tuple[Mode, ...] = ("continuous", "single_pulse", "pulse_train")
_RULE_ORDER = ("continuous wave", "single pulse", "single_pulse", "average_power", "reduced_single_pulse")


class BatchInputError(InputError):
    """An emission of a batch that cannot be assessed; ``row`` is its position (0-based)."""

    def __init__(self, row: int, error: InputError) -> None:
        super().__init__(error.field, error.message)
        self.row = row


@dataclass(frozen=True)
class Origin:
    """Where some emissions' limits came from: one call of the limits engine and the emissions it covered."""

    result: ExposureLimit | PulseTrainLimit
    rows: IndexArray

    def position(self, row: int) -> int | None:
        """The position of batch emission ``row`` in ``result`` (None: not covered)."""
        found = int(np.searchsorted(self.rows, row))
        return found if found < self.rows.size and self.rows[found] == row else None


@dataclass(frozen=True)
class Option:
    """One limit a tissue's exposure is compared with: a rule, averaged over one aperture table.

    ``limit`` (W/m^2 for continuous wave, J/m^2 per pulse otherwise) and ``aperture_m`` are
    NaN for emissions it does not apply to. ``row_index``/``rows`` point into the limits engine's
    rows for the citation and status of the governing row.
    """

    rule: str
    table: str
    limit: FloatArray
    aperture_m: FloatArray
    row_citation: NDArray[np.object_]
    row_status: NDArray[np.object_]


@dataclass(frozen=True)
class TissueAssessment:
    """One tissue's comparison for every emission: each option's exposure and ratio, and the outcome."""

    tissue: str
    exposure_s: FloatArray
    options: tuple[Option, ...]
    exposure: FloatArray  # (options, emissions)
    ratio: FloatArray  # (options, emissions)
    governing: IndexArray  # index into options
    distances: Distances  # every option at once, the longest reported
    origins: tuple[Origin, ...]

    def option_at(self, index: int) -> Option:
        return self.options[int(self.governing[index])]

    def origin_of(self, index: int) -> tuple[Origin, int]:
        for origin in self.origins:
            position = origin.position(index)
            if position is not None:
                return origin, position
        raise LookupError(f"emission {index} has no {self.tissue} limit")


@dataclass(frozen=True)
class Distances:
    """A hazard distance over every option: the longest (NaN where unbounded), and which option gave it."""

    distance_m: FloatArray
    unbounded: BoolArray
    reach: Reach
    farthest: IndexArray


@dataclass(frozen=True)
class Assessments:
    """The figures of every emission of a batch (arrays, in input order); see the module docstring.

    ``assessment(i)`` is a view of one emission with its record, text and working.
    """

    beams: tuple[Beam, ...]
    scenarios: tuple[Scenario, ...]
    mode: NDArray[np.str_]
    wavelength_m: FloatArray
    amount: FloatArray
    average_power_W: FloatArray
    beam_diameter_1e_m: FloatArray
    divergence_1e_rad: FloatArray
    exposure_s: FloatArray
    exposure_given: BoolArray
    eye: TissueAssessment
    skin: TissueAssessment
    od_exact: FloatArray
    od_required: FloatArray
    optical_aid: Distances
    objective_diameter_m: FloatArray
    transmission: FloatArray
    diffuse: FloatArray
    focused: Distances
    fibre: Distances
    en207: En207Ratings
    classes: ClassChecks
    eyewear: tuple[Adequacy | None, ...]

    def __len__(self) -> int:
        return len(self.beams)


def _pick(values: FloatArray, choice: IndexArray) -> FloatArray:
    picked: FloatArray = np.take_along_axis(values, choice[np.newaxis], axis=0)[0]
    return picked


def _farthest(result: Reach, preferred: IndexArray | None) -> IndexArray:
    """The option reaching farthest for each emission; ``preferred`` (the governing one) wins every tie."""
    ranked = np.where(result.unbounded, np.inf, np.nan_to_num(result.distance_m, nan=-1.0))
    farthest: IndexArray = np.argmax(ranked, axis=0).astype(np.intp)
    if preferred is not None and ranked.shape[0]:
        ties = _pick(ranked, preferred) >= _pick(ranked, farthest)
        farthest = np.where(ties, preferred, farthest).astype(np.intp)
    return farthest


def _longest(result: Reach, preferred: IndexArray | None = None) -> Distances:
    farthest = _farthest(result, preferred)
    unbounded: BoolArray = np.asarray(result.unbounded.any(axis=0))
    distance = np.where(unbounded, np.nan, np.maximum(_pick(result.distance_m, farthest), 0.0))
    return Distances(distance_m=distance, unbounded=unbounded, reach=result, farthest=farthest)


def _given(values: Sequence[float | None]) -> FloatArray:
    return np.array([np.nan if value is None else value for value in values], dtype=np.float64)


def assess_many(beams: Sequence[Beam], scenarios: Scenario | Sequence[Scenario]) -> Assessments:
    """Assess every beam under its scenario (one Scenario for all, or one per beam).

    Raises BatchInputError (an InputError with the ``row``) for the first beam or scenario a
    check refuses; nothing is computed then.
    """
    beams = tuple(beams)
    scenarios = (scenarios,) * len(beams) if isinstance(scenarios, Scenario) else tuple(scenarios)
    if len(scenarios) != len(beams):
        raise ValueError(f"{len(beams)} beams but {len(scenarios)} scenarios")
    for row, (beam, scenario) in enumerate(zip(beams, scenarios, strict=True)):
        try:
            check_beam(beam)
            check_scenario(scenario)
        except InputError as error:
            raise BatchInputError(row, error) from None
    size = len(beams)
    mode = np.array([beam.mode for beam in beams]) if size else np.array([], dtype=str)
    wavelength = np.array([beam.wavelength_m for beam in beams], dtype=np.float64)
    to_1e = one_over_e_factor([beam.diameter_at for beam in beams]) if size else np.array([])
    diameter = np.array([beam.beam_diameter_m for beam in beams], dtype=np.float64) * to_1e
    divergence = np.array([beam.divergence_rad for beam in beams], dtype=np.float64) * to_1e
    source_size = np.array([beam.source_size_rad for beam in beams], dtype=np.float64)
    duration = _given([beam.pulse_duration_s for beam in beams])
    prf = _given([beam.prf_Hz for beam in beams])
    pulse_energy = _given([beam.energy_per_pulse_J if beam.mode != "continuous" else None for beam in beams])
    average_power = _given([beam.average_power_W for beam in beams])
    amount = np.where(mode == "continuous", average_power, pulse_energy)
    limits = np.array([scenario.limits for scenario in scenarios])
    given_exposure = _given([scenario.exposure_s for scenario in scenarios])
    deliberate = np.array([scenario.deliberate_viewing for scenario in scenarios], dtype=bool)
    exposure = np.where(mode == "single_pulse", duration,
                        np.where(np.isnan(given_exposure), default_exposure_durations(wavelength, deliberate),
                                 given_exposure))
    skin_given = _given([scenario.skin_exposure_s for scenario in scenarios])
    skin_exposure = np.where(np.isfinite(skin_given), skin_given,
                             np.where(np.isnan(given_exposure), np.maximum(exposure, SKIN_DEFAULT_EXPOSURE_S),
                                      exposure))
    skin_exposure = np.where(mode == "single_pulse", np.where(np.isfinite(skin_given), skin_given, duration),
                             skin_exposure)
    inputs = _Inputs(mode=mode, wavelength=wavelength, source_size=source_size, duration=duration, prf=prf,
                     limits=limits)
    eye = _tissue("eye", inputs, exposure, amount, diameter, divergence)
    skin = _tissue("skin", inputs, skin_exposure, amount, diameter, divergence)
    best = _pick(eye.ratio, eye.governing)
    od_exact, od_required = optical_density(best)

    objective = _given([scenario.objective_diameter_m for scenario in scenarios])
    objective = np.where(np.isnan(objective), condition_1_aperture(wavelength), objective)
    objective = np.where(np.isnan(condition_1_aperture(wavelength)), np.nan, objective)
    transmission = np.array([scenario.optics_transmission for scenario in scenarios], dtype=np.float64)
    option_limits = np.stack([option.limit for option in eye.options]) if eye.options else np.empty((0, size))
    option_apertures = np.stack([option.aperture_m for option in eye.options]) if eye.options else np.empty((0, size))
    aided = _longest(optical_aid_reach(amount, option_limits, diameter, divergence, option_apertures,
                                       objective_diameter_m=objective, transmission=transmission), eye.governing)
    reflectance = np.array([scenario.diffuse_reflectance for scenario in scenarios], dtype=np.float64)
    angle = np.array([scenario.viewing_angle_rad for scenario in scenarios], dtype=np.float64)
    diffuse = np.nanmax(diffuse_reach(amount, option_limits, reflectance, angle), axis=0, initial=0.0)
    focal = _given([scenario.focal_length_m for scenario in scenarios])
    lens = _given([scenario.lens_beam_diameter_m for scenario in scenarios]) * to_1e
    lens = np.where(np.isnan(lens), diameter, lens)
    focused = _longest(reach(amount, option_limits, 0.0, focused_divergence(lens, focal), option_apertures),
                       eye.governing)
    fibre_na = _given([scenario.fibre_na for scenario in scenarios])
    core = np.nan_to_num(_given([scenario.fibre_core_m for scenario in scenarios]), nan=0.0)
    fibre = _longest(reach(amount, option_limits, core, fibre_divergence(fibre_na), option_apertures), eye.governing)

    pulse_options = np.array([option.rule in PULSE_RULE_NAMES for option in eye.options] or [False])
    on_pulse = pulse_options[eye.governing]
    pulsed = mode != "continuous"
    en207 = en207_ratings(wavelength, diameter, average_power_W=average_power,
                          pulse_energy_J=np.where(pulsed, pulse_energy, np.nan),
                          pulse_duration_s=np.where(pulsed, duration, np.nan), prf_Hz=prf).floored(od_required,
                                                                                                on_pulse)
    classes = check_classes([beam.laser_class for beam in beams], wavelength, diameter, divergence,
                            average_power_W=average_power, pulse_energy_J=np.where(pulsed, pulse_energy, np.nan),
                            pulse_duration_s=np.where(pulsed, duration, np.nan))
    eyewear = tuple(eyewear_adequacy(beam.wavelength_m, int(od_required[row]), en207.rating_at(row).requirements,
                                     scenario.eyewear) if scenario.eyewear else None
                    for row, (beam, scenario) in enumerate(zip(beams, scenarios, strict=True)))
    return Assessments(
        beams=beams, scenarios=scenarios, mode=mode, wavelength_m=wavelength, amount=amount,
        average_power_W=average_power, beam_diameter_1e_m=diameter, divergence_1e_rad=divergence,
        exposure_s=exposure, exposure_given=np.isfinite(given_exposure) & (mode != "single_pulse"), eye=eye,
        skin=skin, od_exact=od_exact, od_required=od_required, optical_aid=aided, objective_diameter_m=objective,
        transmission=transmission, diffuse=diffuse, focused=focused, fibre=fibre, en207=en207, classes=classes,
        eyewear=eyewear,
    )


@dataclass(frozen=True)
class _Inputs:
    mode: NDArray[np.str_]
    wavelength: FloatArray
    source_size: FloatArray
    duration: FloatArray
    prf: FloatArray
    limits: NDArray[np.str_]


def _tissue(tissue: str, inputs: _Inputs, exposure: FloatArray, amount: FloatArray, diameter: FloatArray,
            divergence: FloatArray) -> TissueAssessment:
    """Every limit of ``tissue`` for every emission, grouped by limit set and temporal mode, compared at once."""
    size = exposure.shape[0]
    columns: dict[tuple[str, str], dict[str, FloatArray | NDArray[np.object_]]] = {}
    origins: list[Origin] = []

    def column(rule: str, table: str) -> dict[str, FloatArray | NDArray[np.object_]]:
        if (rule, table) not in columns:
            columns[(rule, table)] = {"limit": np.full(size, np.nan), "aperture": np.full(size, np.nan),
                                      "citation": np.full(size, "", dtype=object),
                                      "status": np.full(size, "", dtype=object)}
        return columns[(rule, table)]

    for limits in dict.fromkeys(inputs.limits.tolist()):
        for mode in _MODES:
            rows = np.flatnonzero((inputs.limits == limits) & (inputs.mode == mode))
            if rows.size == 0:
                continue
            wavelength, source_size = inputs.wavelength[rows], inputs.source_size[rows]
            if mode == "pulse_train":
                train = pulse_train_limit(wavelength, exposure[rows], inputs.duration[rows], inputs.prf[rows],
                                          tissue=tissue, source_size_rad=source_size, limits=limits,
                                          duration_basis="the assessment's exposure duration")
                origins.append(Origin(train, rows))
                for option in train.options:
                    _fill(column(option.rule, option.table), rows, option.per_pulse_J_m2, option.aperture_m,
                          option.source, option.table)
                continue
            single = mode == "single_pulse"
            result = exposure_limit(wavelength, inputs.duration[rows] if single else exposure[rows], tissue=tissue,
                                    source_size_rad=source_size, limits=limits,
                                    duration_basis="pulse duration" if single
                                    else "the assessment's exposure duration")
            origins.append(Origin(result, rows))
            for table, limit in result.by_aperture.items():
                _fill(column("single pulse" if single else "continuous wave", table), rows,
                      limit.radiant_exposure_J_m2 if single else limit.irradiance_W_m2, limit.aperture_m, result,
                      table)
    # A fixed order, whatever mix of emissions the batch holds: an emission's figures and working
    # never depend on its neighbours.
    order = sorted(columns, key=lambda key: (_RULE_ORDER.index(key[0]), key[1] != tissue, key[1]))
    options = tuple(Option(rule=rule, table=table, limit=np.asarray(columns[(rule, table)]["limit"], dtype=np.float64),
                           aperture_m=np.asarray(columns[(rule, table)]["aperture"], dtype=np.float64),
                           row_citation=np.asarray(columns[(rule, table)]["citation"]),
                           row_status=np.asarray(columns[(rule, table)]["status"]))
                    for rule, table in order)
    option_limits = np.stack([option.limit for option in options]) if options else np.empty((0, size))
    option_apertures = np.stack([option.aperture_m for option in options]) if options else np.empty((0, size))
    exposure_at = averaged_exposure(amount, diameter, option_apertures)
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio = exposure_at / option_limits
    governing = np.argmax(np.nan_to_num(ratio, nan=-np.inf), axis=0).astype(np.intp) if options \
        else np.zeros(size, dtype=np.intp)
    distances = _longest(reach(amount, option_limits, diameter, divergence, option_apertures), governing)
    return TissueAssessment(tissue=tissue, exposure_s=exposure, options=options, exposure=exposure_at, ratio=ratio,
                            governing=governing, distances=distances, origins=tuple(origins))


def _fill(column: dict[str, FloatArray | NDArray[np.object_]], rows: IndexArray, limit: FloatArray,
          aperture: FloatArray, source: ExposureLimit, table: str) -> None:
    column["limit"][rows] = limit.reshape(-1)
    column["aperture"][rows] = aperture.reshape(-1)
    row_index = source.by_aperture[table].row_index.reshape(-1)
    citations = np.array([row.citation for row in source.rows] + [""], dtype=object)
    statuses = np.array([row.status + (f": {row.note}" if row.note else "") for row in source.rows] + [""],
                        dtype=object)
    column["citation"][rows] = citations[row_index]
    column["status"][rows] = statuses[row_index]
