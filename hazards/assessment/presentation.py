"""One emission of an assessed batch as people and programs read it: the record, the text, the working.

Nothing here computes a figure. ``Assessment(batch, i)`` reads the arrays hazards.assessment.
evaluate left, so the JSON of ``python -m hazards assess --json``, its text and the working
of each step come from the very values a whole register's pass produced.
"""
from __future__ import annotations

import math
from functools import cached_property
from typing import Any, TypedDict

import numpy as np

from hazards import ENGINE_VERSION
from hazards.assessment.evaluate import Assessments, Distances, Origin, TissueAssessment
from hazards.assessment.inputs import Beam, Mode, Scenario
from hazards.beam import to_one_over_e2
from hazards.caution import CAUTION
from hazards.classes import ClassCheck
from hazards.distances import EYE_PUPIL_M, Reach, diffuse_steps, optical_aid_gain, reach_steps
from hazards.eyewear import Adequacy, En207Rating, En207RatingDict
from hazards.limits import PulseTrainLimit, exposure_duration_basis
from hazards.limits.exposure import LimitRecord
from hazards.limits.pulses import TrainRecord
from hazards.units import format_for_people
from hazards.working import Step, StepDict, Working

_UNVERIFIED = ("from memory", "unverified")


class BeamDict(TypedDict):
    wavelength_m: float
    power_W: float | None
    average_power_W: float | None
    beam_diameter_m: float
    divergence_rad: float
    diameter_at: str
    beam_diameter_1e_m: float
    divergence_1e_rad: float
    beam_diameter_1e2_m: float
    divergence_1e2_rad: float
    pulse_energy_J: float | None
    pulse_duration_s: float | None
    prf_Hz: float | None
    source_size_rad: float
    laser_class: str | None


class ExposureBasisDict(TypedDict):
    """The governing eye limit: ``mpe`` in the quantity the beam is compared in (W/m^2 for continuous
    wave, J/m^2 per pulse otherwise), and over the whole exposure as both quantities."""

    exposure_s: float
    how: str
    quantity: str
    mpe: float
    mpe_unit: str
    mpe_J_m2: float
    mpe_W_m2: float
    aperture_m: float
    exposure_at_aperture: float
    skin_exposure_s: float


class SkinLimitDict(TypedDict):
    """The skin's lookup record with its governing limit (``mpe``, as the beam is compared) and its exposure."""

    record: LimitRecord | TrainRecord
    mpe: float
    mpe_J_m2: float
    mpe_W_m2: float
    aperture_m: float
    exposure_at_aperture: float


class ComparisonDict(TypedDict):
    """One limit the exposure was compared with, over its own aperture."""

    rule: str
    aperture_m: float
    limit: float
    limit_unit: str
    exposure: float
    ratio: float
    citation: str
    status: str
    governs: bool


class AssessmentDict(TypedDict, total=False):
    """The JSON of ``python -m hazards assess --json``; ``working`` only when asked for."""

    engine_version: str
    caution: str
    limits: str
    mode: Mode
    beam: BeamDict
    exposure_basis: ExposureBasisDict
    governing_pulse_rule: str
    eye_limit: LimitRecord | TrainRecord
    skin_limit: SkinLimitDict
    eye_comparison: list[ComparisonDict]
    skin_comparison: list[ComparisonDict]
    nohd_m: float | None
    nohd_unbounded: bool
    nohd_form: str
    nohd_forms_m: dict[str, float | None]
    nohd_optical_aid_m: float | None
    nohd_optical_aid_unbounded: bool
    optical_aid: dict[str, float | None]
    diffuse_hazard_distance_m: float | None
    diffuse_reflection: dict[str, float]
    skin_hazard_distance_m: float | None
    skin_hazard_unbounded: bool
    focused_beam_nohd_m: float | None
    fibre_nohd_m: float | None
    od_exact: float | None
    od_required: int
    en207: En207RatingDict
    class_check: dict[str, object] | None
    eyewear_check: dict[str, object] | None
    warnings: list[str]
    working: list[StepDict]


def _finite(value: float) -> float | None:
    return value if math.isfinite(value) else None


class Assessment:
    """One emission of a batch: its figures, its record, its text and its working."""

    def __init__(self, batch: Assessments, index: int) -> None:
        self.batch = batch
        self.index = index

    def _at(self, array: np.ndarray[Any, Any]) -> float:
        return float(array.reshape(-1)[self.index])

    @property
    def beam(self) -> Beam:
        return self.batch.beams[self.index]

    @property
    def scenario(self) -> Scenario:
        return self.batch.scenarios[self.index]

    @property
    def exposure_s(self) -> float:
        return self._at(self.batch.exposure_s)

    @property
    def exposure_basis(self) -> str:
        if self.beam.mode == "single_pulse":
            return "a single pulse: the exposure lasts one pulse"
        if self.batch.exposure_given[self.index]:
            return "given"
        return exposure_duration_basis(self.beam.wavelength_m, deliberate=self.scenario.deliberate_viewing)

    @property
    def governing_rule(self) -> str:
        return self.batch.eye.option_at(self.index).rule

    @property
    def od_exact(self) -> float:
        return self._at(self.batch.od_exact)

    @property
    def od_required(self) -> int:
        return int(self._at(self.batch.od_required))

    @property
    def nohd_m(self) -> float | None:
        return _finite(self._at(self.batch.eye.distances.distance_m))

    @property
    def nohd_unbounded(self) -> bool:
        return bool(self.batch.eye.distances.unbounded[self.index])

    @cached_property
    def en207(self) -> En207Rating:
        return self.batch.en207.rating_at(self.index)

    @cached_property
    def class_check(self) -> ClassCheck | None:
        return self.batch.classes.check_at(self.index)

    @property
    def eyewear_check(self) -> Adequacy | None:
        return self.batch.eyewear[self.index]

    def over_exposure(self, tissue: TissueAssessment) -> tuple[float, float]:
        """The governing limit of ``tissue`` over its whole exposure: (J/m^2, W/m^2)."""
        limit = self._at(tissue.option_at(self.index).limit)
        exposure = self._at(tissue.exposure_s)
        if self.beam.mode == "continuous":
            return limit * exposure, limit
        if self.beam.mode == "single_pulse":
            return limit, limit / exposure
        origin, position = tissue.origin_of(self.index)
        assert isinstance(origin.result, PulseTrainLimit)
        whole = limit * float(origin.result.pulses_N.reshape(-1)[position])
        return whole, whole / exposure

    def limit_record(self, tissue: TissueAssessment) -> LimitRecord | TrainRecord:
        """The limits engine's summary for this emission (the table lookup, before any beam is compared)."""
        origin, position = tissue.origin_of(self.index)
        return origin.result.record(position)

    def comparison(self, tissue: TissueAssessment) -> list[ComparisonDict]:
        unit = "W/m2" if self.beam.mode == "continuous" else "J/m2"
        governing = int(tissue.governing[self.index])
        found: list[ComparisonDict] = []
        for number, option in enumerate(tissue.options):
            limit = self._at(option.limit)
            if not math.isfinite(limit):
                continue
            found.append(ComparisonDict(rule=option.rule, aperture_m=self._at(option.aperture_m), limit=limit,
                                        limit_unit=unit, exposure=float(tissue.exposure[number, self.index]),
                                        ratio=float(tissue.ratio[number, self.index]),
                                        citation=str(option.row_citation[self.index]),
                                        status=str(option.row_status[self.index]), governs=number == governing))
        return found

    def warnings(self) -> list[str]:
        """What the LSO must read beside the figures, most pressing first."""
        batch, beam, index = self.batch, self.beam, self.index
        warnings: list[str] = []
        if self.nohd_unbounded:
            warnings.append("The beam is collimated (zero divergence) and above the eye MPE: the NOHD is unbounded. "
                            "Terminate the beam and treat the whole beam path as hazardous.")
        origin, position = batch.eye.origin_of(index)
        warnings.extend(origin.result.warnings_at(position))
        for tissue in (batch.eye, batch.skin):
            option = tissue.option_at(index)
            status = str(option.row_status[index])
            if status.startswith(_UNVERIFIED):
                warnings.append(f"The governing {tissue.tissue} limit ({option.row_citation[index]}) is marked "
                                f"'{status}' in the {self.scenario.limits} data, not checked against the published "
                                "table; confirm it before relying on the figures.")
        rating = self.en207
        warnings.extend(rating.warnings)
        check = self.class_check
        if check is not None:
            warnings.extend(check.warnings)
        adequacy = self.eyewear_check
        if adequacy is not None and adequacy.status != "adequate":
            warnings.append(f"The eyewear given is {adequacy.status.replace('_', ' ')} for this emission: "
                            + "; ".join(adequacy.reasons))
        if beam.mode == "single_pulse" and self.scenario.exposure_s is not None:
            warnings.append("The exposure duration given does not apply to a single pulse; the pulse duration is "
                            "used. Give a pulse repetition frequency to assess a train.")
        if beam.mode != "single_pulse" and not batch.exposure_given[index]:
            warnings.append(f"Exposure duration {format_for_people(self.exposure_s, 's')} is the common-practice default; "
                            "the LSO may require a longer one (for example for deliberate or prolonged viewing).")
        return list(dict.fromkeys(warnings))

    def to_dict(self, *, working: bool = True) -> AssessmentDict:
        """The JSON object; every float is finite (an endless distance is null with a flag)."""
        batch, beam, scenario, index = self.batch, self.beam, self.scenario, self.index
        eye, skin = batch.eye, batch.skin
        eye_option, skin_option = eye.option_at(index), skin.option_at(index)
        governing, skin_governing = int(eye.governing[index]), int(skin.governing[index])
        aided = batch.optical_aid
        eye_whole, skin_whole = self.over_exposure(eye), self.over_exposure(skin)
        result: AssessmentDict = {
            "engine_version": ENGINE_VERSION,
            "caution": CAUTION,
            "limits": scenario.limits,
            "mode": beam.mode,
            "beam": _beam_dict(beam, self._at(batch.beam_diameter_1e_m), self._at(batch.divergence_1e_rad)),
            "exposure_basis": {
                "exposure_s": self.exposure_s, "how": self.exposure_basis,
                "quantity": _quantity(beam.mode), "mpe": self._at(eye_option.limit),
                "mpe_unit": "W/m2" if beam.mode == "continuous" else "J/m2",
                "mpe_J_m2": eye_whole[0], "mpe_W_m2": eye_whole[1],
                "aperture_m": self._at(eye_option.aperture_m),
                "exposure_at_aperture": float(eye.exposure[governing, index]),
                "skin_exposure_s": self._at(skin.exposure_s),
            },
            "governing_pulse_rule": eye_option.rule,
            "eye_limit": self.limit_record(eye),
            "skin_limit": {"record": self.limit_record(skin), "mpe": self._at(skin_option.limit),
                           "mpe_J_m2": skin_whole[0], "mpe_W_m2": skin_whole[1],
                           "aperture_m": self._at(skin_option.aperture_m),
                           "exposure_at_aperture": float(skin.exposure[skin_governing, index])},
            "eye_comparison": self.comparison(eye),
            "skin_comparison": self.comparison(skin),
            "nohd_m": self.nohd_m,
            "nohd_unbounded": self.nohd_unbounded,
            "nohd_form": "quadrature",
            "nohd_forms_m": _forms(eye.distances, index),
            "nohd_optical_aid_m": max(_finite(self._at(aided.distance_m)) or 0.0, self.nohd_m or 0.0)
            if not (aided.unbounded[index] or self.nohd_unbounded) else None,
            "nohd_optical_aid_unbounded": bool(aided.unbounded[index] or self.nohd_unbounded),
            "optical_aid": {"objective_diameter_m": _finite(self._at(batch.objective_diameter_m)),
                            "transmission": self._at(batch.transmission),
                            "gain": _finite(self._at(batch.transmission)
                                            * (self._at(batch.objective_diameter_m) / EYE_PUPIL_M) ** 2)},
            "diffuse_hazard_distance_m": _finite(self._at(batch.diffuse)),
            "diffuse_reflection": {"reflectance": scenario.diffuse_reflectance,
                                   "viewing_angle_rad": scenario.viewing_angle_rad},
            "skin_hazard_distance_m": _finite(self._at(skin.distances.distance_m)),
            "skin_hazard_unbounded": bool(skin.distances.unbounded[index]),
            "focused_beam_nohd_m": None if scenario.focal_length_m is None else _distance(batch.focused, index),
            "fibre_nohd_m": None if scenario.fibre_na is None else _distance(batch.fibre, index),
            "od_exact": _finite(self.od_exact),
            "od_required": self.od_required,
            "en207": self.en207.to_dict(),
            "class_check": None if self.class_check is None else self.class_check.to_dict(),
            "eyewear_check": None if self.eyewear_check is None else self.eyewear_check.to_dict(),
            "warnings": self.warnings(),
        }
        if working:
            result["working"] = self.working().to_json()
        safe: AssessmentDict = json_safe(result)
        return safe

    def working(self) -> Working:
        """Every step behind the figures, numbered in the order they build on each other."""
        batch, beam, index = self.batch, self.beam, self.index
        working = Working()
        working.add("beam diameter at 1/e", "d63 = d / sqrt(2) for a 1/e^2 value" if beam.diameter_at == "1/e2"
                    else "given at 1/e", self._at(batch.beam_diameter_1e_m), "m",
                    "Gaussian beam: I falls to 1/e at r = w / sqrt(2)", d=beam.beam_diameter_m)
        working.add("divergence at 1/e", "phi63 = phi / sqrt(2) for a 1/e^2 value" if beam.diameter_at == "1/e2"
                    else "given at 1/e", self._at(batch.divergence_1e_rad), "rad", "", phi=beam.divergence_rad)
        working.add("exposure duration", self.exposure_basis, self.exposure_s, "s")
        amount_name = "P" if beam.mode == "continuous" else "Q"
        self._tissue_steps(working, batch.eye, "eye", amount_name)
        working.add("required optical density", "OD = log10(exposure / MPE) of the governing limit, rounded up, "
                    "not below 0", self.od_exact, "", "EN 207 Annex B / DGUV 203-042 section 5.1",
                    rounded_up=float(self.od_required))
        self._distance_steps(working, batch.eye, "NOHD")
        self._aided_steps(working)
        # The diffuse distance is set by the lowest limit: a reflection's irradiance is the same over any aperture.
        lowest = np.nanmin([float(option.limit[index]) for option in batch.eye.options])
        for step in diffuse_steps(self._at(batch.amount), float(lowest),
                                  self.scenario.diffuse_reflectance, self.scenario.viewing_angle_rad,
                                  self._at(batch.diffuse)):
            working.steps.append(step)
        self._tissue_steps(working, batch.skin, "skin", amount_name)
        self._distance_steps(working, batch.skin, "skin hazard distance")
        if self.scenario.focal_length_m is not None:
            working.add("focused-beam NOHD: divergence after the focus", "phi = b / f",
                        self._at(batch.focused.reach.divergence_rad[int(batch.focused.farthest[index])]), "rad",
                        "thin lens, waist << pupil", f=self.scenario.focal_length_m)
            _extend(working, reach_steps(_row(batch.focused.reach, int(batch.focused.farthest[index])), index,
                                         "focused-beam NOHD"))
        if self.scenario.fibre_na is not None:
            working.add("fibre NOHD: 1/e full angle from NA", "phi = 2 NA / 1.7",
                        self._at(batch.fibre.reach.divergence_rad[int(batch.fibre.farthest[index])]), "rad",
                        "multimode fibre form, ANSI Z136.2 (from memory)", NA=self.scenario.fibre_na)
            _extend(working, reach_steps(_row(batch.fibre.reach, int(batch.fibre.farthest[index])), index,
                                         "fibre NOHD"))
        working.extend(self.en207.working)
        return working

    def _tissue_steps(self, working: Working, tissue: TissueAssessment, name: str, amount_name: str) -> None:
        origin, position = tissue.origin_of(self.index)
        working.extend(_origin_working(origin, position), prefix=f"{name} MPE: ")
        governing = int(tissue.governing[self.index])
        for number, option in enumerate(tissue.options):
            limit = self._at(option.limit)
            if not math.isfinite(limit):
                continue
            working.add(f"{name}: {_rule_words(option.rule)} over a {format_for_people(self._at(option.aperture_m), 'm')} "
                        "aperture", f"exposure = {amount_name} / max(beam area, aperture area); ratio = exposure / L",
                        float(tissue.ratio[number, self.index]), "",
                        "the exposure averaged as the limit defines it (IEC TR 60825-14 beam-hazard form)",
                        exposure=float(tissue.exposure[number, self.index]), L=limit)
        option = tissue.options[governing]
        working.add(f"{name}: governing limit", "the limit with the highest exposure / limit ratio",
                    self._at(option.limit), "W/m^2" if self.beam.mode == "continuous" else "J/m^2 per pulse",
                    f"{_rule_words(option.rule)}; {option.row_citation[self.index]}",
                    aperture_m=self._at(option.aperture_m))

    def _distance_steps(self, working: Working, tissue: TissueAssessment, what: str) -> None:
        farthest = int(tissue.distances.farthest[self.index])
        if farthest != int(tissue.governing[self.index]):
            option = tissue.options[farthest]
            working.add(f"{what}: the longest distance", "the limit with a lower value over a larger aperture "
                        "reaches farther than the governing one", None, "", _rule_words(option.rule))
        _extend(working, reach_steps(_row(tissue.distances.reach, farthest), self.index, what))

    def _aided_steps(self, working: Working) -> None:
        batch, index = self.batch, self.index
        objective = self._at(batch.objective_diameter_m)
        if not math.isfinite(objective):
            working.add("NOHD with optical aids", "outside 302.5-4000 nm viewing optics do not transmit: the unaided "
                        "NOHD", None, "", "", lambda_m=self.beam.wavelength_m)
            return
        working.steps.append(optical_aid_gain(objective, self._at(batch.transmission)))
        farthest = int(batch.optical_aid.farthest[index])
        _extend(working, reach_steps(_row(batch.optical_aid.reach, farthest), index,
                                     "NOHD with optical aids (beam seen through the instrument)"))

    def as_text(self) -> str:
        """A readable summary with units, basis and sources, ending with the caution."""
        record = self.to_dict(working=False)
        beam = self.beam
        basis = record["exposure_basis"]
        lines = [
            f"Emission: {format_for_people(beam.wavelength_m, 'm')}, {beam.mode.replace('_', ' ')}"
            + (f", average power {format_for_people(beam.average_power_W, 'W')}" if beam.average_power_W else "")
            + (f", {format_for_people(beam.energy_per_pulse_J, 'J')} per pulse" if beam.mode != "continuous"
               and beam.energy_per_pulse_J else "")
            + (f", pulses of {format_for_people(beam.pulse_duration_s, 's')}" if beam.pulse_duration_s else "")
            + (f" at {format_for_people(beam.prf_Hz, 'Hz')}" if beam.prf_Hz else ""),
            f"Beam: {format_for_people(beam.beam_diameter_m, 'm')} diameter, {format_for_people(beam.divergence_rad, 'rad')} "
            f"divergence, given at {beam.diameter_at} (formulas use 1/e)",
            f"Limit set: {self.scenario.limits}; exposure {format_for_people(self.exposure_s, 's')} ({self.exposure_basis})",
            f"Eye MPE: {basis['mpe']:.4g} {basis['mpe_unit']} ({basis['quantity']}) over a "
            f"{format_for_people(basis['aperture_m'], 'm')} aperture; governing rule: {_rule_words(self.governing_rule)}",
            f"Exposure at the aperture: {basis['exposure_at_aperture']:.4g} {basis['mpe_unit']}",
            f"NOHD: {_distance_text(record['nohd_m'], record['nohd_unbounded'])} (quadrature beam growth)",
            f"NOHD with optical aids: {_distance_text(record['nohd_optical_aid_m'], record['nohd_optical_aid_unbounded'])}",
            f"Diffuse-reflection hazard distance: {_distance_text(record['diffuse_hazard_distance_m'], False)} "
            f"(reflectance {self.scenario.diffuse_reflectance:g})",
            f"Skin hazard distance: {_distance_text(record['skin_hazard_distance_m'], record['skin_hazard_unbounded'])} "
            f"({format_for_people(basis['skin_exposure_s'], 's')} exposure)",
        ]
        if record["focused_beam_nohd_m"] is not None:
            lines.append(f"NOHD beyond the lens focus: {_distance_text(record['focused_beam_nohd_m'], False)}")
        if record["fibre_nohd_m"] is not None:
            lines.append(f"NOHD from the fibre end: {_distance_text(record['fibre_nohd_m'], False)}")
        lines.append(f"Required optical density: OD {self.od_required} (exact {self.od_exact:.2f})")
        lines.append("EN 207 rating: " + (" + ".join(self.en207.markings) or "beyond the LB scale"))
        adequacy = self.eyewear_check
        if adequacy is not None:
            lines.append(f"Eyewear check: {adequacy.status.replace('_', ' ')}"
                         + (f" ({'; '.join(adequacy.reasons)})" if adequacy.reasons else ""))
        lines.extend(f"Warning: {warning}" for warning in record["warnings"])
        lines += ["", "Working:", self.working().as_text(), "", CAUTION]
        return "\n".join(lines)


def _row(result: Reach, option: int) -> Reach:
    """One option's row of a Reach over (options, emissions)."""
    return Reach(*(np.asarray(getattr(result, name))[option] for name in Reach.__dataclass_fields__))


def _extend(working: Working, steps: list[Step]) -> None:
    working.steps.extend(steps)


def _origin_working(origin: Origin, position: int) -> Working:
    return origin.result.working_at(position)


def _forms(distances: Distances, index: int) -> dict[str, float | None]:
    if distances.unbounded[index]:
        return {"quadrature": None, "linear": None}
    farthest = int(distances.farthest[index])
    return {"quadrature": _finite(float(distances.reach.distance_m[farthest, index])),
            "linear": _finite(float(distances.reach.linear_m[farthest, index]))}


def _distance(distances: Distances, index: int) -> float | None:
    return None if distances.unbounded[index] else _finite(float(distances.distance_m[index]))


def _quantity(mode: Mode) -> str:
    return {"continuous": "irradiance", "single_pulse": "radiant exposure of the pulse"}.get(
        mode, "radiant exposure per pulse")


def _rule_words(rule: str) -> str:
    return {"single_pulse": "single-pulse rule", "average_power": "average-power rule",
            "reduced_single_pulse": "reduced single-pulse rule (C_P)"}.get(rule, rule)


def _distance_text(distance_m: float | None, unbounded: bool) -> str:
    if unbounded:
        return "unbounded (the beam stays above the limit at any range)"
    return "not computed" if distance_m is None else format_for_people(distance_m, "m")


def _beam_dict(beam: Beam, diameter_1e: float, divergence_1e: float) -> BeamDict:
    return {
        "wavelength_m": beam.wavelength_m, "power_W": beam.power_W, "average_power_W": beam.average_power_W,
        "beam_diameter_m": beam.beam_diameter_m, "divergence_rad": beam.divergence_rad,
        "diameter_at": beam.diameter_at, "beam_diameter_1e_m": diameter_1e, "divergence_1e_rad": divergence_1e,
        "beam_diameter_1e2_m": to_one_over_e2(diameter_1e, "1/e"),
        "divergence_1e2_rad": to_one_over_e2(divergence_1e, "1/e"),
        "pulse_energy_J": beam.energy_per_pulse_J if beam.mode != "continuous" else None,
        "pulse_duration_s": beam.pulse_duration_s, "prf_Hz": beam.prf_Hz, "source_size_rad": beam.source_size_rad,
        "laser_class": beam.laser_class,
    }


def json_safe(value: Any) -> Any:
    """Plain JSON types only: numpy scalars and 0-d arrays become floats, inf and NaN become None."""
    kind = type(value)
    if kind is float:
        return value if math.isfinite(value) else None
    if kind is dict:
        return {str(key): json_safe(item) for key, item in value.items()}
    if kind is str or kind is int or kind is bool or value is None:
        return value
    if isinstance(value, (list, tuple)):
        return [json_safe(item) for item in value]
    if isinstance(value, np.ndarray):
        return json_safe(value.item() if value.ndim == 0 else value.tolist())
    if isinstance(value, (np.floating, float)):
        return json_safe(float(value))
    if isinstance(value, np.generic):
        return json_safe(value.item())
    if isinstance(value, dict):
        return {str(key): json_safe(item) for key, item in value.items()}
    return value

