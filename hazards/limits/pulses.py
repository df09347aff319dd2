"""Repetitive pulse trains: the three rules of the limit sets, every candidate reported.

For a regular train of pulses of duration t_p at a repetition frequency f over an exposure T:

* single_pulse: each pulse must stay below the limit for one pulse of duration t_p;
* average_power: the train as a whole must stay below the limit for T, so each of its
  N = ceil(f T) pulses gets 1/N of it (counting a started pulse as a whole one is cautious);
* reduced_single_pulse: on the rows the limit set marks (thermal injury), each pulse must stay
  below C_P times the single-pulse limit, C_P = N^exponent. Pulses closer together than the
  set's grouping time (T_i, T_min) count as one pulse of that duration: their exposures add,
  the group is compared with the limit for the grouping time, and N counts groups.

The lowest candidate governs. The photochemical limits have no reduced rule; their dose adds
up, which the average-power rule covers.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from hazards import ENGINE_VERSION
from hazards.caution import CAUTION
from hazards.errors import InputError
from hazards.limits.engine import FloatArray, Variables
from hazards.limits.exposure import (
    DEFAULT_LIMITS,
    ExposureLimit,
    as_checked_array,
    check_limits_and_tissue,
    check_points,
    evaluate_limit,
)
from hazards.limits.limit_set import LimitSet
from hazards.working import Working

PULSE_RULES = ("single_pulse", "average_power", "reduced_single_pulse")


@dataclass(frozen=True)
class PulseTrainLimit:
    """Per-pulse and whole-train limits of a regular pulse train (arrays; 0-d for scalars).

    ``candidates`` maps each rule of PULSE_RULES to its per-pulse H (NaN where the rule does not
    apply); ``rule_limits`` keeps the exposure limit each rule started from (for one pulse, for
    the whole exposure, for the pulse or group on the rows marked for C_P), so that every
    candidate can be traced to its row. ``aperture_m`` is the limiting aperture of the governing
    rule: the one for the whole exposure when the average-power rule governs, else the one for a
    single pulse (the two differ only where the aperture depends on duration, UV and IR-B/C).
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
    correction_C_P: FloatArray
    aperture_m: FloatArray
    rule_limits: dict[str, ExposureLimit]
    limits: str
    tissue: str
    duration_basis: str
    notes: tuple[str, ...]
    working: Working | None

    def to_dict(self) -> dict[str, Any]:
        """The JSON object of ``python -m hazards limit --pulse-duration ... --json`` for one train."""
        if self.per_pulse_J_m2.size != 1:
            raise ValueError("to_dict() describes one pulse train; use records() for arrays")
        record = self.record(0)
        record["notes"] = list(self.notes)
        record["working"] = self.working.to_json() if self.working is not None else []
        return record

    def record(self, index: int) -> dict[str, Any]:
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
    period or longer than the exposure, besides the checks of exposure_limit.
    """
    limit_set = check_limits_and_tissue(limits, tissue)
    wavelength, exposure, source_size = check_points(limit_set, wavelength_m, exposure_s, source_size_rad)
    pulse_duration = as_checked_array(pulse_duration_s, field="pulse_duration", unit="s",
                                      minimum=limit_set.duration_range_s[0], maximum=limit_set.duration_range_s[1])
    prf = as_checked_array(prf_Hz, field="prf", unit="Hz", minimum=0.0, maximum=1e15, inclusive_minimum=False)
    try:
        wavelength, exposure, source_size, pulse_duration, prf = np.broadcast_arrays(
            wavelength, exposure, source_size, pulse_duration, prf)
    except ValueError:
        raise InputError("pulse_duration", "pulse duration and prf arrays do not broadcast with the others") from None
    _check_train(pulse_duration, prf, exposure)
    return _evaluate_train(limit_set, tissue, wavelength, exposure, pulse_duration, prf, source_size, duration_basis)


def _check_train(pulse_duration: FloatArray, prf: FloatArray, exposure: FloatArray) -> None:
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


def _evaluate_train(limit_set: LimitSet, tissue: str, wavelength: FloatArray, exposure: FloatArray,
                    pulse_duration: FloatArray, prf: FloatArray, source_size: FloatArray,
                    duration_basis: str) -> PulseTrainLimit:
    rules = limit_set.pulse_trains
    pulses = np.maximum(1.0, np.ceil(prf * exposure - 1e-9))
    single = evaluate_limit(limit_set, tissue, wavelength, pulse_duration, source_size,
                            duration_basis="pulse duration")
    whole = evaluate_limit(limit_set, tissue, wavelength, exposure, source_size, duration_basis=duration_basis)

    grouping_time = _grouping_time(limit_set, wavelength, pulse_duration, source_size)
    grouped = (1.0 / prf) < grouping_time  # NaN (no grouping time defined) compares False
    window = np.where(grouped, np.minimum(grouping_time, exposure), pulse_duration)
    per_group = np.where(grouped, np.maximum(1.0, prf * window), 1.0)
    groups = np.maximum(1.0, pulses / per_group)
    correction = groups ** rules.reduction_exponent
    reducible = evaluate_limit(limit_set, tissue, wavelength, window, source_size,
                               duration_basis="pulse or pulse group duration", pulse_reduction_only=True)

    candidates = {
        "single_pulse": single.radiant_exposure_J_m2,
        "average_power": whole.radiant_exposure_J_m2 / pulses,
        "reduced_single_pulse": correction * reducible.radiant_exposure_J_m2 / per_group,
    }
    stacked = np.stack([np.where(np.isnan(values), np.inf, values) for values in candidates.values()])
    choice = np.argmin(stacked, axis=0)
    per_pulse = np.min(stacked, axis=0)
    governing = np.array(PULSE_RULES)[choice]
    total = per_pulse * pulses
    working = notes = None
    if wavelength.ndim == 0:
        working, notes = _working(limit_set, single, whole, reducible, candidates, governing, per_pulse, pulses,
                                  per_group, groups, correction, grouping_time, prf, pulse_duration, exposure)
    return PulseTrainLimit(
        wavelength_m=wavelength, exposure_s=exposure, pulse_duration_s=pulse_duration, prf_Hz=prf,
        source_size_rad=source_size, per_pulse_J_m2=per_pulse, radiant_exposure_J_m2=total,
        irradiance_W_m2=total / exposure, candidates=candidates, governing=governing, pulses_N=pulses,
        pulses_per_group=per_group, correction_C_P=correction,
        aperture_m=np.where(governing == "average_power", whole.aperture_m, single.aperture_m),
        rule_limits={"single_pulse": single, "average_power": whole, "reduced_single_pulse": reducible},
        limits=limit_set.name, tissue=tissue, duration_basis=duration_basis,
        notes=tuple(notes or limit_set.notes), working=working,
    )


def _grouping_time(limit_set: LimitSet, wavelength: FloatArray, pulse_duration: FloatArray,
                   source_size: FloatArray) -> FloatArray:
    variables = Variables(limit_set, {"wavelength_nm": np.round(wavelength.reshape(-1) * 1e9, 6),
                                      "t": pulse_duration.reshape(-1), "alpha_mrad": source_size.reshape(-1) * 1e3})
    return variables[limit_set.pulse_trains.grouping_time].reshape(wavelength.shape)


def _working(limit_set: LimitSet, single: ExposureLimit, whole: ExposureLimit, reducible: ExposureLimit,
             candidates: dict[str, FloatArray], governing: NDArray[np.str_], per_pulse: FloatArray, pulses: FloatArray,
             per_group: FloatArray, groups: FloatArray, correction: FloatArray, grouping_time: FloatArray,
             prf: FloatArray, pulse_duration: FloatArray, exposure: FloatArray) -> tuple[Working, list[str]]:
    rules = limit_set.pulse_trains
    working = Working()
    working.add("pulses in the exposure", "N = ceil(prf * T)", float(pulses), "", "counting a started pulse as whole",
                prf_Hz=float(prf), T_s=float(exposure))
    if single.working is not None:
        working.extend(single.working, prefix="single pulse: ")
    if whole.working is not None:
        working.extend(whole.working, prefix="whole train: ")
    time = float(grouping_time)
    if math.isfinite(time):
        grouped = float(per_group) > 1.0 or 1.0 / float(prf) < time
        working.add(f"grouping time {rules.grouping_time}", rules.grouping_time, time, "s", rules.citation)
        working.add("pulses counted as one group", "prf * grouping time if the period is shorter, else 1",
                    float(per_group), "", "grouped" if grouped else "period longer than the grouping time: not grouped")
    working.add("groups in the exposure", "N_groups = N / pulses per group", float(groups), "", rules.citation)
    working.add("correction C_P", f"C_P = N_groups^{rules.reduction_exponent:g}", float(correction), "",
                _note(rules.citation, rules.note))
    working.add("single_pulse candidate", "H_single(t_p)", float(candidates["single_pulse"]), "J/m^2",
                "rule 1: every pulse below the single-pulse limit", t_p_s=float(pulse_duration))
    working.add("average_power candidate", "H(T) / N", float(candidates["average_power"]), "J/m^2",
                "rule 2: the whole train below the limit for T")
    reduced = float(candidates["reduced_single_pulse"])
    if math.isfinite(reduced):
        working.add("reduced_single_pulse candidate", "C_P * H_thermal(t_p or grouping time) / pulses per group",
                    reduced, "J/m^2", f"rule 3: {reducible.rows[int(reducible.row_index)].citation}")
    else:
        working.add("reduced_single_pulse candidate", "not applicable", None, "",
                    "rule 3 applies only to the rows marked for it (thermal injury); none holds here")
    working.add("per-pulse limit (the lowest candidate)", f"governed by {governing.item()}", float(per_pulse),
                "J/m^2", "the most restrictive rule governs")
    notes = list(dict.fromkeys(single.notes + whole.notes + reducible.notes + ((rules.note,) if rules.note else ())))
    return working, notes


def _note(citation: str, note: str) -> str:
    return f"{citation} [{note}]" if note else citation
