"""Repetitive pulse trains: the three rules of the limit sets, every candidate reported.

For a regular train of pulses of duration t_p at a repetition frequency f over an exposure T:

* single_pulse: each pulse must stay below the limit for one pulse of duration t_p;
* average_power: the train as a whole must stay below the limit for T, so each of its
  N = ceil(f T) pulses gets 1/N of it (counting a started pulse as a whole one is cautious);
* reduced_single_pulse: on the rows the limit set marks (thermal injury), each pulse must stay
  below C_P times the single-pulse limit, C_P = N^exponent. Pulses closer together than the
  set's grouping time (T_i, T_min) count as one pulse of that duration: their exposures add,
  the group is compared with the limit for the grouping time, and N counts groups.

As a table lookup the lowest candidate is reported. Against a beam each rule is compared over
its own limiting aperture (hazards.assessment): the exposure-to-limit ratio, not the limit
alone, decides which rule governs. The photochemical limits have no reduced rule; their dose
adds up, which the average-power rule covers.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TypedDict

import numpy as np
from numpy.typing import ArrayLike, NDArray

from hazards import ENGINE_VERSION
from hazards.caution import CAUTION
from hazards.errors import InputError
from hazards.limits.engine import FloatArray, Variables
from hazards.limits.exposure import (
    DEFAULT_LIMITS,
    ExposureLimit,
    as_checked_array,
    check_duration,
    check_limits_and_tissue,
    check_points,
    evaluate_limit,
    limit_working,
)
from hazards.limits.limit_set import LimitSet, load_limit_set
from hazards.working import StepDict, Working

PULSE_RULES = ("single_pulse", "average_power", "reduced_single_pulse")


@dataclass(frozen=True)
class LimitOption:
    """One rule's limit for one pulse, averaged over one aperture: what one pulse's exposure is compared with.

    ``per_pulse_J_m2`` is NaN where the rule does not apply (rule 3 off the rows marked for it)
    or where no row of ``table`` holds. ``source`` is the evaluation the value came from, for
    its working and citations.
    """

    rule: str
    table: str
    per_pulse_J_m2: FloatArray
    aperture_m: FloatArray
    source: ExposureLimit


class OptionRecord(TypedDict):
    rule: str
    per_pulse_J_m2: float | None
    aperture_m: float | None


class TrainRecord(TypedDict):
    """One train of a PulseTrainLimit: the per-pulse limit of each rule, the lowest, and where they come from."""

    wavelength_m: float | None
    duration_s: float | None
    duration_basis: str
    pulse_duration_s: float | None
    prf_Hz: float | None
    source_size_rad: float | None
    tissue: str
    limits: str
    per_pulse_J_m2: float | None
    radiant_exposure_J_m2: float | None
    irradiance_W_m2: float | None
    candidates: dict[str, float | None]
    options: list[OptionRecord]
    governing: str
    pulses_N: float | None
    pulses_per_group: float | None
    correction_C_P: float | None
    aperture_m: float | None
    citations: dict[str, str | None]
    caution: str
    engine_version: str


class TrainJson(TrainRecord):
    """The JSON of ``python -m hazards limit --pulse-duration ... --json`` for one train."""

    notes: list[str]
    warnings: list[str]
    working: list[StepDict]


@dataclass(frozen=True)
class PulseTrainLimit:
    """Per-pulse and whole-train limits of a regular pulse train (arrays; 0-d for scalars).

    ``options`` holds every rule of PULSE_RULES averaged over every aperture its rows use:
    they cannot be ranked without the beam, since a rule averaged over a smaller aperture
    (a single pulse over 1 mm in the ultraviolet and beyond 1400 nm) can be the stricter one
    for a narrow beam although its limit is higher. hazards.assessment compares each with the
    exposure over its own aperture. The headline figures (``per_pulse_J_m2``, ``governing``,
    ``aperture_m``, ``candidates``) are the lowest limits, as a table lookup gives them;
    ``rule_limits`` keeps the exposure limit each rule started from.
    """

    wavelength_m: FloatArray
    exposure_s: FloatArray
    pulse_duration_s: FloatArray
    prf_Hz: FloatArray
    source_size_rad: FloatArray
    per_pulse_J_m2: FloatArray
    radiant_exposure_J_m2: FloatArray
    irradiance_W_m2: FloatArray
    candidates: dict[str, FloatArray]
    governing: NDArray[np.str_]
    pulses_N: FloatArray
    pulses_per_group: FloatArray
    groups_N: FloatArray
    correction_C_P: FloatArray
    grouping_time_s: FloatArray
    aperture_m: FloatArray
    rule_limits: dict[str, ExposureLimit]
    options: tuple[LimitOption, ...]
    limits: str
    tissue: str
    duration_basis: str

    @property
    def working(self) -> Working | None:
        """The working of a single train (None for arrays: use working_at)."""
        return self.working_at(0) if self.per_pulse_J_m2.size == 1 else None

    @property
    def notes(self) -> tuple[str, ...]:
        return self.notes_at(0) if self.per_pulse_J_m2.size == 1 else load_limit_set(self.limits).notes

    def warnings_at(self, index: int) -> list[str]:
        """What a reader must know about one train's inputs (a pulse below the tables' first column)."""
        return list(dict.fromkeys(self.rule_limits["single_pulse"].warnings_at(index)
                                  + self.rule_limits["average_power"].warnings_at(index)))

    def working_at(self, index: int) -> Working:
        return _working(load_limit_set(self.limits), self, index)[0]

    def notes_at(self, index: int) -> tuple[str, ...]:
        return tuple(_working(load_limit_set(self.limits), self, index)[1])

    def to_dict(self) -> TrainJson:
        """The JSON object of ``python -m hazards limit --pulse-duration ... --json`` for one train."""
        if self.per_pulse_J_m2.size != 1:
            raise ValueError("to_dict() describes one pulse train; use records() for arrays")
        working, notes = _working(load_limit_set(self.limits), self, 0)
        return TrainJson(**self.record(0), notes=notes, warnings=self.warnings_at(0), working=working.to_json())

    def record(self, index: int) -> TrainRecord:
        def item(array: FloatArray) -> float | None:
            value = float(array.reshape(-1)[index])
            return value if math.isfinite(value) else None

        return {
            "wavelength_m": item(self.wavelength_m),
            "duration_s": item(self.exposure_s),
            "duration_basis": self.duration_basis,
            "pulse_duration_s": item(self.pulse_duration_s),
            "prf_Hz": item(self.prf_Hz),
            "source_size_rad": item(self.source_size_rad),
            "tissue": self.tissue,
            "limits": self.limits,
            "per_pulse_J_m2": item(self.per_pulse_J_m2),
            "radiant_exposure_J_m2": item(self.radiant_exposure_J_m2),
            "irradiance_W_m2": item(self.irradiance_W_m2),
            "candidates": {rule: item(values) for rule, values in self.candidates.items()},
            "options": [OptionRecord(rule=option.rule, per_pulse_J_m2=item(option.per_pulse_J_m2),
                                     aperture_m=item(option.aperture_m))
                        for option in self.options if math.isfinite(float(option.per_pulse_J_m2.reshape(-1)[index]))],
            "governing": str(self.governing.reshape(-1)[index]),
            "pulses_N": item(self.pulses_N),
            "pulses_per_group": item(self.pulses_per_group),
            "correction_C_P": item(self.correction_C_P),
            "aperture_m": item(self.aperture_m),
            "citations": {rule: _citation(limit, index) for rule, limit in self.rule_limits.items()},
            "caution": CAUTION,
            "engine_version": ENGINE_VERSION,
        }


def _citation(limit: ExposureLimit, index: int) -> str | None:
    """The citation of the row behind one rule's limit at one point (None: no row holds)."""
    row = int(limit.row_index.reshape(-1)[index])
    return limit.rows[row].citation if row >= 0 else None


def pulse_train_limit(
    wavelength_m: object,
    exposure_s: object,
    pulse_duration_s: object,
    prf_Hz: object,
    *,
    tissue: str = "eye",
    source_size_rad: object = 0.0,
    limits: str = DEFAULT_LIMITS,
    duration_basis: str = "as given",
) -> PulseTrainLimit:
    """Limits for a regular pulse train; inputs broadcast like exposure_limit's.

    Raises InputError naming "pulse_duration" or "prf" when a pulse is not shorter than its
    period or longer than the exposure, besides the checks of exposure_limit. A pulse shorter
    than the tables' first column is assessed at that column and flagged (``warnings_at``).
    """
    limit_set = check_limits_and_tissue(limits, tissue)
    wavelength, exposure, source_size, short_exposure, given_exposure = check_points(
        limit_set, wavelength_m, exposure_s, source_size_rad)
    pulse_duration, short_pulse, given_pulse = check_duration(limit_set, pulse_duration_s, field="pulse_duration")
    prf = as_checked_array(prf_Hz, field="prf", unit="Hz", minimum=0.0, maximum=1e15, inclusive_minimum=False)
    try:
        (wavelength, exposure, source_size, short_exposure, given_exposure, pulse_duration, short_pulse, given_pulse,
         prf) = np.broadcast_arrays(wavelength, exposure, source_size, short_exposure, given_exposure, pulse_duration,
                                    short_pulse, given_pulse, prf)
    except ValueError:
        raise InputError("pulse_duration", "pulse duration and prf arrays do not broadcast with the others") from None
    check_train(given_pulse, prf, given_exposure)
    return evaluate_train(limit_set, tissue, wavelength, exposure, pulse_duration, prf, source_size, duration_basis,
                          short=(short_exposure, given_exposure, short_pulse, given_pulse))


def check_train(pulse_duration: ArrayLike, prf: ArrayLike, exposure: ArrayLike) -> None:
    """InputError naming "pulse_duration" unless every pulse is shorter than its period and than the exposure."""
    pulse_duration, prf, exposure = (np.asarray(value, dtype=np.float64) for value in (pulse_duration, prf, exposure))
    too_long = pulse_duration * prf >= 1.0
    if too_long.any():
        position = int(np.flatnonzero(too_long.reshape(-1))[0])
        t_p, f = float(pulse_duration.reshape(-1)[position]), float(prf.reshape(-1)[position])
        raise InputError("pulse_duration", f"{t_p:g} s is not shorter than the pulse period 1/prf = {1 / f:g} s "
                         "(a train needs gaps between pulses)")
    beyond = pulse_duration > exposure
    if beyond.any():
        position = int(np.flatnonzero(beyond.reshape(-1))[0])
        raise InputError("pulse_duration", f"{float(pulse_duration.reshape(-1)[position]):g} s is longer than the "
                         f"exposure duration {float(exposure.reshape(-1)[position]):g} s")


ShortFlags = tuple[NDArray[np.bool_], FloatArray, NDArray[np.bool_], FloatArray]


def evaluate_train(limit_set: LimitSet, tissue: str, wavelength: FloatArray, exposure: FloatArray,
                   pulse_duration: FloatArray, prf: FloatArray, source_size: FloatArray, duration_basis: str,
                   *, short: ShortFlags | None = None) -> PulseTrainLimit:
    """The engine behind pulse_train_limit for inputs that are already checked and broadcast.

    ``short`` carries (short exposure, given exposure, short pulse, given pulse duration) for
    inputs below the tables' first column.
    """
    rules = limit_set.pulse_trains
    short_exposure, given_exposure, short_pulse, given_pulse = short or (None, None, None, None)
    pulses = np.maximum(1.0, np.ceil(prf * exposure - 1e-9))
    single = evaluate_limit(limit_set, tissue, wavelength, pulse_duration, source_size,
                            duration_basis="pulse duration", short_duration=short_pulse, given_duration_s=given_pulse)
    whole = evaluate_limit(limit_set, tissue, wavelength, exposure, source_size, duration_basis=duration_basis,
                           short_duration=short_exposure, given_duration_s=given_exposure)

    grouping_time = _grouping_time(limit_set, wavelength, pulse_duration, source_size)
    grouped = (1.0 / prf) < grouping_time  # NaN (no grouping time defined) compares False
    window = np.where(grouped, np.minimum(grouping_time, exposure), pulse_duration)
    per_group = np.where(grouped, np.maximum(1.0, prf * window), 1.0)
    groups = np.maximum(1.0, pulses / per_group)
    correction = groups ** rules.reduction_exponent
    reducible = evaluate_limit(limit_set, tissue, wavelength, window, source_size,
                               duration_basis="pulse or pulse group duration", pulse_reduction_only=True)

    per_rule: dict[str, tuple[ExposureLimit, FloatArray]] = {
        "single_pulse": (single, np.ones_like(pulses)), "average_power": (whole, 1.0 / pulses),
        "reduced_single_pulse": (reducible, correction / per_group)}
    options = tuple(LimitOption(rule=rule, table=table, per_pulse_J_m2=limit.radiant_exposure_J_m2 * scale,
                                aperture_m=limit.aperture_m, source=source)
                    for rule, (source, scale) in per_rule.items() for table, limit in source.by_aperture.items())
    candidates = {rule: source.radiant_exposure_J_m2 * scale for rule, (source, scale) in per_rule.items()}
    stacked = np.stack([np.where(np.isnan(option.per_pulse_J_m2), np.inf, option.per_pulse_J_m2)
                        for option in options])
    choice = np.argmin(stacked, axis=0)
    per_pulse = np.min(stacked, axis=0)
    governing = np.array([option.rule for option in options])[choice]
    aperture = np.take_along_axis(np.stack([option.aperture_m for option in options]), choice[np.newaxis], axis=0)[0]
    total = per_pulse * pulses
    return PulseTrainLimit(
        wavelength_m=wavelength, exposure_s=exposure, pulse_duration_s=pulse_duration, prf_Hz=prf,
        source_size_rad=source_size, per_pulse_J_m2=per_pulse, radiant_exposure_J_m2=total,
        irradiance_W_m2=total / exposure, candidates=candidates, governing=governing, pulses_N=pulses,
        pulses_per_group=per_group, groups_N=groups, correction_C_P=correction, grouping_time_s=grouping_time,
        aperture_m=aperture, rule_limits={"single_pulse": single, "average_power": whole,
                                          "reduced_single_pulse": reducible},
        options=options, limits=limit_set.name, tissue=tissue, duration_basis=duration_basis,
    )


def _grouping_time(limit_set: LimitSet, wavelength: FloatArray, pulse_duration: FloatArray,
                   source_size: FloatArray) -> FloatArray:
    variables = Variables(limit_set, {"wavelength_nm": np.round(wavelength.reshape(-1) * 1e9, 6),
                                      "t": pulse_duration.reshape(-1), "alpha_mrad": source_size.reshape(-1) * 1e3})
    return variables[limit_set.pulse_trains.grouping_time].reshape(wavelength.shape)


def _working(limit_set: LimitSet, train: PulseTrainLimit, index: int) -> tuple[Working, list[str]]:
    rules = limit_set.pulse_trains
    single, whole, reducible = (train.rule_limits[rule] for rule in PULSE_RULES)

    def at(array: FloatArray) -> float:
        return float(array.reshape(-1)[index])

    pulses, per_group, prf = at(train.pulses_N), at(train.pulses_per_group), at(train.prf_Hz)
    working = Working()
    working.add("pulses in the exposure", "N = ceil(prf * T)", pulses, "", "counting a started pulse as whole",
                prf_Hz=prf, T_s=at(train.exposure_s))
    single_working, single_notes = limit_working(limit_set, single, index)
    whole_working, whole_notes = limit_working(limit_set, whole, index)
    working.extend(single_working, prefix="single pulse: ")
    working.extend(whole_working, prefix="whole train: ")
    time = at(train.grouping_time_s)
    if math.isfinite(time):
        grouped = per_group > 1.0 or 1.0 / prf < time
        working.add(f"grouping time {rules.grouping_time}", rules.grouping_time, time, "s", rules.citation)
        working.add("pulses counted as one group", "prf * grouping time if the period is shorter, else 1",
                    per_group, "", "grouped" if grouped else "period longer than the grouping time: not grouped")
    working.add("groups in the exposure", "N_groups = N / pulses per group", at(train.groups_N), "", rules.citation)
    working.add("correction C_P", f"C_P = N_groups^{rules.reduction_exponent:g}", at(train.correction_C_P), "",
                _note(rules.citation, rules.note))
    working.add("single_pulse candidate", "H_single(t_p)", at(train.candidates["single_pulse"]), "J/m^2",
                "rule 1: every pulse below the single-pulse limit", t_p_s=at(train.pulse_duration_s))
    working.add("average_power candidate", "H(T) / N", at(train.candidates["average_power"]), "J/m^2",
                "rule 2: the whole train below the limit for T")
    reduced = at(train.candidates["reduced_single_pulse"])
    row = int(reducible.row_index.reshape(-1)[index])
    if math.isfinite(reduced) and row >= 0:
        working.add("reduced_single_pulse candidate", "C_P * H_thermal(t_p or grouping time) / pulses per group",
                    reduced, "J/m^2", f"rule 3: {reducible.rows[row].citation}")
    else:
        working.add("reduced_single_pulse candidate", "not applicable", None, "",
                    "rule 3 applies only to the rows marked for it (thermal injury); none holds here")
    working.add("per-pulse limit (the lowest candidate)", f"governed by {train.governing.reshape(-1)[index]}",
                at(train.per_pulse_J_m2), "J/m^2", "the lowest limit; with the beam, each rule is compared over "
                "its own aperture")
    reducible_notes = limit_working(limit_set, reducible, index)[1] if row >= 0 else []
    notes = list(dict.fromkeys(single_notes + whole_notes + reducible_notes + ([rules.note] if rules.note else [])))
    return working, notes


def _note(citation: str, note: str) -> str:
    return f"{citation} [{note}]" if note else citation
