"""The assessment of one emission: every hazard figure a safety officer needs, with its working.

``assess(beam, scenario)`` takes the emission's parameters (SI floats) and the viewing
scenario, asks the limits engine for the eye and skin MPE, and returns an Assessment whose
``to_dict()`` is the JSON of ``python -m hazards assess --json`` and of the register's API.
``parse_assessment_request(mapping)`` turns typed values ("5 W", "2 mm") into a Beam and a
Scenario, naming the key of any value it cannot use.
"""
from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np

from hazards import ENGINE_VERSION
from hazards.beam import DIAMETER_DEFINITIONS, DiameterDefinition, aperture_averaged, to_one_over_e, to_one_over_e2
from hazards.caution import CAUTION
from hazards.classes import ClassCheck, check_class, normalise_class
from hazards.distances import (
    HazardDistance,
    diffuse_hazard_distance,
    fibre_nohd,
    focused_beam_nohd,
    nohd,
    optical_aid_nohd,
)
from hazards.errors import InputError
from hazards.eyewear import Adequacy, En207Rating, EyewearBand, en207_rating, eyewear_adequacy, optical_density, parse_marking
from hazards.limits import (
    DEFAULT_LIMITS,
    check_limit_set,
    default_exposure_duration,
    exposure_duration_basis,
    exposure_limit,
    pulse_train_limit,
)
from hazards.units import format_si, parse_quantity
from hazards.working import Working


Mode = Literal["continuous", "single_pulse", "pulse_train"]

# Average power stated beside pulse energy x prf: data sheets round both, so only a larger
# disagreement means one of them is wrong (common practice, no source).
_POWER_CONSISTENCY = 0.2
_SKIN_DEFAULT_EXPOSURE_S = 10.0  # no aversion response protects the skin (common practice, no source)


@dataclass(frozen=True)
class Beam:
    """One emission at the laser's exit, in SI units.

    ``beam_diameter_m`` and ``divergence_rad`` (full angle) are both given at ``diameter_at``
    (1/e or 1/e^2 of peak irradiance). ``power_W`` is the average power; for a pulse train it
    may be None when ``pulse_energy_J`` and ``prf_Hz`` give it.
    """

    wavelength_m: float
    power_W: float | None
    beam_diameter_m: float
    divergence_rad: float
    diameter_at: DiameterDefinition = "1/e2"
    pulse_energy_J: float | None = None
    pulse_duration_s: float | None = None
    prf_Hz: float | None = None
    source_size_rad: float = 0.0
    laser_class: str | None = None

    @property
    def mode(self) -> Mode:
        if self.pulse_duration_s is None:
            return "continuous"
        return "single_pulse" if self.prf_Hz is None else "pulse_train"

    @property
    def average_power_W(self) -> float | None:
        if self.power_W is not None:
            return self.power_W
        if self.pulse_energy_J is not None and self.prf_Hz is not None:
            return self.pulse_energy_J * self.prf_Hz
        return None

    @property
    def energy_per_pulse_J(self) -> float | None:
        if self.pulse_energy_J is not None:
            return self.pulse_energy_J
        if self.power_W is not None and self.prf_Hz is not None:
            return self.power_W / self.prf_Hz
        return None


@dataclass(frozen=True)
class Scenario:
    """How the beam may reach a person.

    ``exposure_s`` None takes the common-practice default for the wavelength (reported).
    The diffuse case assumes a Lambertian surface of ``diffuse_reflectance`` seen at
    ``viewing_angle_rad`` from its normal. Optical aids default to a 50 mm objective with
    full transmission (the binocular case of IEC 60825-1 condition 1). A lens (focal length
    and beam diameter at the lens, at the beam's ``diameter_at``) and a fibre end (NA and
    core) are optional extras.
    """

    exposure_s: float | None = None
    limits: str = DEFAULT_LIMITS
    deliberate_viewing: bool = False
    diffuse_reflectance: float = 1.0
    viewing_angle_rad: float = 0.0
    skin_exposure_s: float | None = None
    objective_diameter_m: float = 0.05
    optics_transmission: float = 1.0
    focal_length_m: float | None = None
    lens_beam_diameter_m: float | None = None
    fibre_na: float | None = None
    fibre_core_m: float | None = None
    eyewear: tuple[EyewearBand, ...] = ()


@dataclass(frozen=True)
class _Limit:
    """The figure a distance is computed from: X (W or J) against L (W/m^2 or J/m^2)."""

    amount: float
    limit: float
    aperture_m: float
    quantity: str
    unit: str
    governing: str
    duration_s: float
    record: dict[str, Any]
    working: Working


@dataclass(frozen=True)
class Assessment:
    beam: Beam
    scenario: Scenario
    exposure_s: float
    exposure_basis: str
    eye: _Limit
    skin: _Limit
    exposure_at_aperture: float
    od_exact: float
    od_required: int
    nohd: HazardDistance
    nohd_optical_aid: HazardDistance
    diffuse: HazardDistance
    skin_distance: HazardDistance
    focused: HazardDistance | None
    fibre: HazardDistance | None
    en207: En207Rating
    class_check: ClassCheck | None
    eyewear_check: Adequacy | None
    warnings: tuple[str, ...]
    working: Working = field(default_factory=Working)

    def to_dict(self) -> dict[str, Any]:
        """The JSON object; every float is finite (an endless distance is null with a flag)."""
        beam = self.beam
        result: dict[str, Any] = {
            "engine_version": ENGINE_VERSION,
            "caution": CAUTION,
            "limits": self.scenario.limits,
            "mode": beam.mode,
            "beam": {
                "wavelength_m": beam.wavelength_m, "power_W": beam.power_W,
                "average_power_W": beam.average_power_W, "beam_diameter_m": beam.beam_diameter_m,
                "divergence_rad": beam.divergence_rad, "diameter_at": beam.diameter_at,
                "beam_diameter_1e_m": to_one_over_e(beam.beam_diameter_m, beam.diameter_at),
                "divergence_1e_rad": to_one_over_e(beam.divergence_rad, beam.diameter_at),
                "beam_diameter_1e2_m": to_one_over_e2(beam.beam_diameter_m, beam.diameter_at),
                "divergence_1e2_rad": to_one_over_e2(beam.divergence_rad, beam.diameter_at),
                "pulse_energy_J": beam.energy_per_pulse_J if beam.mode != "continuous" else None,
                "pulse_duration_s": beam.pulse_duration_s, "prf_Hz": beam.prf_Hz,
                "source_size_rad": beam.source_size_rad, "laser_class": beam.laser_class,
            },
            "exposure_basis": {
                "exposure_s": self.exposure_s, "how": self.exposure_basis, "quantity": self.eye.quantity,
                "mpe": self.eye.limit, "mpe_unit": self.eye.unit, "aperture_m": self.eye.aperture_m,
                "exposure_at_aperture": self.exposure_at_aperture, "skin_exposure_s": self.skin.duration_s,
            },
            "governing_pulse_rule": self.eye.governing,
            "eye_limit": self.eye.record,
            "skin_limit": self.skin.record,
            "nohd_m": self.nohd.distance_m,
            "nohd_unbounded": self.nohd.unbounded,
            "nohd_form": self.nohd.form,
            "nohd_forms_m": dict(self.nohd.alternatives),
            "nohd_optical_aid_m": self.nohd_optical_aid.distance_m,
            "nohd_optical_aid_unbounded": self.nohd_optical_aid.unbounded,
            "optical_aid": {"objective_diameter_m": self.scenario.objective_diameter_m,
                            "transmission": self.scenario.optics_transmission},
            "diffuse_hazard_distance_m": self.diffuse.distance_m,
            "diffuse_reflection": {"reflectance": self.scenario.diffuse_reflectance,
                                   "viewing_angle_rad": self.scenario.viewing_angle_rad},
            "skin_hazard_distance_m": self.skin_distance.distance_m,
            "skin_hazard_unbounded": self.skin_distance.unbounded,
            "focused_beam_nohd_m": None if self.focused is None else self.focused.distance_m,
            "fibre_nohd_m": None if self.fibre is None else self.fibre.distance_m,
            "od_exact": self.od_exact,
            "od_required": self.od_required,
            "en207": self.en207.to_dict(),
            "class_check": None if self.class_check is None else self.class_check.to_dict(),
            "eyewear_check": None if self.eyewear_check is None else self.eyewear_check.to_dict(),
            "warnings": list(self.warnings),
            "working": self.working.to_json(),
        }
        safe: dict[str, Any] = json_safe(result)
        return safe

    def as_text(self) -> str:
        """A readable summary with units, basis and sources, ending with the caution."""
        beam, eye = self.beam, self.eye
        lines = [
            f"Emission: {format_si(beam.wavelength_m, 'm')}, {beam.mode.replace('_', ' ')}"
            + (f", average power {format_si(beam.average_power_W, 'W')}" if beam.average_power_W else "")
            + (f", {format_si(beam.energy_per_pulse_J, 'J')} per pulse" if beam.mode != "continuous"
               and beam.energy_per_pulse_J else "")
            + (f", pulses of {format_si(beam.pulse_duration_s, 's')}" if beam.pulse_duration_s else "")
            + (f" at {format_si(beam.prf_Hz, 'Hz')}" if beam.prf_Hz else ""),
            f"Beam: {format_si(beam.beam_diameter_m, 'm')} diameter, {format_si(beam.divergence_rad, 'rad')} "
            f"divergence, given at {beam.diameter_at} (formulas use 1/e)",
            f"Limit set: {self.scenario.limits}; exposure {format_si(self.exposure_s, 's')} ({self.exposure_basis})",
            f"Eye MPE: {eye.limit:.4g} {eye.unit} ({eye.quantity}) over a {format_si(eye.aperture_m, 'm')} "
            f"aperture; governing rule: {eye.governing}",
            f"Exposure at the aperture: {self.exposure_at_aperture:.4g} {eye.unit}",
            f"NOHD: {_distance_text(self.nohd)} ({self.nohd.form} beam growth)",
            f"NOHD with optical aids ({format_si(self.scenario.objective_diameter_m, 'm')} objective): "
            f"{_distance_text(self.nohd_optical_aid)}",
            f"Diffuse-reflection hazard distance: {_distance_text(self.diffuse)} "
            f"(reflectance {self.scenario.diffuse_reflectance:g})",
            f"Skin hazard distance: {_distance_text(self.skin_distance)} (skin MPE {self.skin.limit:.4g} "
            f"{self.skin.unit}, {format_si(self.skin.duration_s, 's')})",
        ]
        if self.focused is not None:
            lines.append(f"NOHD beyond the lens focus: {_distance_text(self.focused)}")
        if self.fibre is not None:
            lines.append(f"NOHD from the fibre end: {_distance_text(self.fibre)}")
        lines.append(f"Required optical density: OD {self.od_required} (exact {self.od_exact:.2f})")
        lines.append("EN 207 rating: " + (" + ".join(self.en207.markings) or "beyond the LB scale"))
        if self.eyewear_check is not None:
            lines.append(f"Eyewear check: {self.eyewear_check.status.replace('_', ' ')}"
                         + (f" ({'; '.join(self.eyewear_check.reasons)})" if self.eyewear_check.reasons else ""))
        lines.extend(f"Warning: {warning}" for warning in self.warnings)
        lines.append("")
        lines.append("Working:")
        lines.append(self.working.as_text())
        lines.append("")
        lines.append(CAUTION)
        return "\n".join(lines)


def _distance_text(distance: HazardDistance) -> str:
    if distance.unbounded:
        return "unbounded (the beam stays above the limit at any range)"
    assert distance.distance_m is not None
    return format_si(distance.distance_m, "m")


def json_safe(value: Any) -> Any:
    """Plain JSON types only: numpy scalars and 0-d arrays become floats, inf and NaN become None."""
    if isinstance(value, dict):
        return {str(key): json_safe(item) for key, item in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_safe(item) for item in value]
    if isinstance(value, np.ndarray):
        return json_safe(value.item() if value.ndim == 0 else value.tolist())
    if isinstance(value, np.generic):
        return json_safe(value.item())
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    return value


def _scalar(value: Any) -> float:
    return float(np.asarray(value, dtype=float).reshape(()))


def _text(value: Any) -> str:
    return str(np.asarray(value).reshape(()).item()) if isinstance(value, np.ndarray) else str(value)


def _tissue_limit(beam: Beam, tissue: str, exposure_s: float, limits: str) -> _Limit:
    """The MPE a distance compares with, in the quantity that fits the emission's mode."""
    if beam.mode == "continuous":
        assert beam.power_W is not None
        result = exposure_limit(beam.wavelength_m, exposure_s, tissue=tissue, source_size_rad=beam.source_size_rad,
                                limits=limits)
        return _Limit(beam.power_W, _scalar(result.irradiance_W_m2), _scalar(result.aperture_m),
                      "irradiance", "W/m2", "continuous wave", exposure_s, result.to_dict(), result.working or Working())
    pulse_energy = beam.energy_per_pulse_J
    assert pulse_energy is not None and beam.pulse_duration_s is not None
    if beam.mode == "single_pulse":
        single = exposure_limit(beam.wavelength_m, beam.pulse_duration_s, tissue=tissue,
                                source_size_rad=beam.source_size_rad, limits=limits)
        return _Limit(pulse_energy, _scalar(single.radiant_exposure_J_m2), _scalar(single.aperture_m),
                      "radiant exposure of the pulse", "J/m2", "single pulse", beam.pulse_duration_s,
                      single.to_dict(), single.working or Working())
    assert beam.prf_Hz is not None
    train = pulse_train_limit(beam.wavelength_m, exposure_s, beam.pulse_duration_s, beam.prf_Hz, tissue=tissue,
                              source_size_rad=beam.source_size_rad, limits=limits)
    return _Limit(pulse_energy, _scalar(train.per_pulse_J_m2), _scalar(train.aperture_m),
                  "radiant exposure per pulse", "J/m2", _text(train.governing), exposure_s, train.to_dict(),
                  train.working or Working())


def _check_beam(beam: Beam) -> None:
    """The consistency a Beam built in code must have; parse_assessment_request checks ranges."""
    for field_name, value, allow_zero in (("beam_diameter", beam.beam_diameter_m, False),
                                          ("divergence", beam.divergence_rad, True),
                                          ("power", beam.power_W, False), ("pulse_energy", beam.pulse_energy_J, False),
                                          ("pulse_duration", beam.pulse_duration_s, False), ("prf", beam.prf_Hz, False),
                                          ("source_size", beam.source_size_rad, True)):
        if value is not None and not (math.isfinite(value) and (value >= 0 if allow_zero else value > 0)):
            raise InputError(field_name, f"must be a finite number {'>= 0' if allow_zero else '> 0'}, got {value!r}")
    if beam.diameter_at not in DIAMETER_DEFINITIONS:
        raise InputError("diameter_at", f"must be one of {', '.join(DIAMETER_DEFINITIONS)}, got {beam.diameter_at!r}")
    if beam.mode == "continuous":
        if beam.power_W is None:
            raise InputError("power", "required for a continuous-wave emission")
        if beam.pulse_energy_J is not None or beam.prf_Hz is not None:
            raise InputError("pulse_duration", "required when a pulse energy or a pulse repetition frequency is given")
        return
    if beam.mode == "single_pulse" and beam.pulse_energy_J is None:
        raise InputError("pulse_energy", "required for a single pulse (or give a pulse repetition frequency)")
    if beam.mode == "pulse_train":
        assert beam.prf_Hz is not None and beam.pulse_duration_s is not None
        if beam.energy_per_pulse_J is None:
            raise InputError("pulse_energy", "required for a pulse train unless the average power is given")
        if beam.pulse_duration_s * beam.prf_Hz > 1.0:
            raise InputError("pulse_duration", f"{format_si(beam.pulse_duration_s, 's')} is longer than the pulse "
                             f"period {format_si(1.0 / beam.prf_Hz, 's')} at {format_si(beam.prf_Hz, 'Hz')}")
        if beam.power_W is not None and beam.pulse_energy_J is not None:
            implied = beam.pulse_energy_J * beam.prf_Hz
            if abs(implied - beam.power_W) > _POWER_CONSISTENCY * max(implied, beam.power_W):
                raise InputError("power", f"average power {format_si(beam.power_W, 'W')} disagrees with pulse "
                                 f"energy x prf = {format_si(implied, 'W')}; give one of them or correct either")


def _check_scenario(scenario: Scenario) -> None:
    """Ranges a Scenario built in code must respect; parse_assessment_request checks the same."""
    check_limit_set(scenario.limits)
    checks = (("reflectance", scenario.diffuse_reflectance, 0.0 <= scenario.diffuse_reflectance <= 1.0),
              ("viewing_angle", scenario.viewing_angle_rad, 0.0 <= scenario.viewing_angle_rad <= math.pi / 2),
              ("objective_diameter", scenario.objective_diameter_m, scenario.objective_diameter_m > 0),
              ("optics_transmission", scenario.optics_transmission, 0.0 < scenario.optics_transmission <= 1.0),
              ("focal_length", scenario.focal_length_m, scenario.focal_length_m is None or scenario.focal_length_m > 0),
              ("fibre_na", scenario.fibre_na, scenario.fibre_na is None or 0.0 < scenario.fibre_na < 1.0),
              ("fibre_core", scenario.fibre_core_m, scenario.fibre_core_m is None or scenario.fibre_core_m >= 0))
    for field_name, value, valid in checks:
        if not valid:
            raise InputError(field_name, f"out of range, got {value!r}")


def assess(beam: Beam, scenario: Scenario) -> Assessment:
    """Every hazard figure for ``beam`` under ``scenario``, with warnings and working.

    Raises InputError for an inconsistent beam or scenario, naming the field.
    """
    _check_beam(beam)
    _check_scenario(scenario)
    working = Working()
    warnings: list[str] = []
    diameter = to_one_over_e(beam.beam_diameter_m, beam.diameter_at)
    divergence = to_one_over_e(beam.divergence_rad, beam.diameter_at)
    working.add("beam diameter at 1/e", "d63 = d / sqrt(2) for a 1/e^2 value" if beam.diameter_at == "1/e2"
                else "given at 1/e", diameter, "m", "Gaussian beam: I falls to 1/e at r = w / sqrt(2)",
                d=beam.beam_diameter_m)
    working.add("divergence at 1/e", "phi63 = phi / sqrt(2) for a 1/e^2 value" if beam.diameter_at == "1/e2"
                else "given at 1/e", divergence, "rad", "", phi=beam.divergence_rad)

    if beam.mode == "single_pulse":
        assert beam.pulse_duration_s is not None
        exposure_s = beam.pulse_duration_s
        basis = "a single pulse: the exposure lasts one pulse"
        if scenario.exposure_s is not None:
            warnings.append("The exposure duration given does not apply to a single pulse; the pulse duration is "
                            "used. Give a pulse repetition frequency to assess a train.")
    elif scenario.exposure_s is None:
        exposure_s = float(default_exposure_duration(beam.wavelength_m, deliberate=scenario.deliberate_viewing))
        basis = exposure_duration_basis(beam.wavelength_m, deliberate=scenario.deliberate_viewing)
    else:
        exposure_s = scenario.exposure_s
        basis = "given"
    working.add("exposure duration", basis, exposure_s, "s")
    eye = _tissue_limit(beam, "eye", exposure_s, scenario.limits)
    working.extend(eye.working, prefix="eye MPE: ")
    working.add("eye MPE used", f"{eye.quantity}; governing: {eye.governing}", eye.limit, eye.unit,
                f"limit set {scenario.limits}", aperture_m=eye.aperture_m)
    if scenario.skin_exposure_s is not None:
        skin_exposure = scenario.skin_exposure_s
    else:
        skin_exposure = max(exposure_s, _SKIN_DEFAULT_EXPOSURE_S) if scenario.exposure_s is None else exposure_s
    skin = _tissue_limit(beam, "skin", skin_exposure, scenario.limits)
    working.extend(skin.working, prefix="skin MPE: ")
    working.add("skin MPE used", f"{skin.quantity}; governing: {skin.governing}", skin.limit, skin.unit,
                f"limit set {scenario.limits}", exposure_s=skin_exposure, aperture_m=skin.aperture_m)

    at_aperture = aperture_averaged(eye.amount, diameter, eye.aperture_m)
    working.add("exposure at the limiting aperture (at the exit, the worst reachable position)",
                "X x share through D_ap / (pi D_ap^2 / 4); a beam no wider than D_ap counts whole", at_aperture,
                eye.unit, "averaging over the limiting aperture as the MPE tables define it",
                X=eye.amount, d63=diameter, D_ap=eye.aperture_m)
    od_exact, od_required = optical_density(at_aperture, eye.limit)
    working.add("required optical density", "OD = log10(exposure / MPE), rounded up, not below 0", od_exact, "",
                "EN 207 Annex B / DGUV 203-042 section 5.1", rounded_up=od_required)

    hazard = nohd(eye.amount, eye.limit, diameter, divergence, eye.aperture_m)
    working.extend(hazard.working)
    if hazard.unbounded:
        warnings.append("The beam is collimated (zero divergence) and above the eye MPE: the NOHD is unbounded. "
                        "Terminate the beam and treat the whole beam path as hazardous.")
    aided = optical_aid_nohd(eye.amount, eye.limit, diameter, divergence, eye.aperture_m,
                             objective_diameter_m=scenario.objective_diameter_m,
                             transmission=scenario.optics_transmission, wavelength_m=beam.wavelength_m)
    working.extend(aided.working)
    diffuse = diffuse_hazard_distance(eye.amount, eye.limit, scenario.diffuse_reflectance, scenario.viewing_angle_rad)
    working.extend(diffuse.working)
    skin_distance = nohd(skin.amount, skin.limit, diameter, divergence, skin.aperture_m, what="skin hazard distance")
    working.extend(skin_distance.working)
    focused = fibre = None
    if scenario.focal_length_m is not None:
        lens_diameter = (diameter if scenario.lens_beam_diameter_m is None
                         else to_one_over_e(scenario.lens_beam_diameter_m, beam.diameter_at))
        focused = focused_beam_nohd(eye.amount, eye.limit, lens_diameter, scenario.focal_length_m, eye.aperture_m)
        working.extend(focused.working)
    if scenario.fibre_na is not None:
        fibre = fibre_nohd(eye.amount, eye.limit, scenario.fibre_na, scenario.fibre_core_m or 0.0, eye.aperture_m)
        working.extend(fibre.working)

    en207 = en207_rating(beam.wavelength_m, diameter, average_power_W=beam.average_power_W,
                         pulse_energy_J=beam.energy_per_pulse_J if beam.mode != "continuous" else None,
                         pulse_duration_s=beam.pulse_duration_s, prf_Hz=beam.prf_Hz)
    working.extend(en207.working)
    warnings.extend(en207.warnings)
    class_result = None
    if beam.laser_class is not None:
        class_result = check_class(beam.laser_class, beam.wavelength_m, diameter,
                                   average_power_W=beam.average_power_W,
                                   pulse_energy_J=beam.energy_per_pulse_J if beam.mode != "continuous" else None,
                                   pulse_duration_s=beam.pulse_duration_s)
        warnings.extend(class_result.warnings)
    adequacy = None
    if scenario.eyewear:
        adequacy = eyewear_adequacy(beam.wavelength_m, od_required, en207.requirements, scenario.eyewear)
        if adequacy.status != "adequate":
            warnings.append(f"The eyewear given is {adequacy.status.replace('_', ' ')} for this emission: "
                            + "; ".join(adequacy.reasons))
    if scenario.exposure_s is None and beam.mode != "single_pulse":
        warnings.append(f"Exposure duration {format_si(exposure_s, 's')} is the common-practice default; "
                        "the LSO may require a longer one (for example for deliberate or prolonged viewing).")
    return Assessment(beam, scenario, exposure_s, basis, eye, skin, at_aperture, od_exact, od_required, hazard, aided,
                      diffuse, skin_distance, focused, fibre, en207, class_result, adequacy, tuple(warnings), working)


# ---------------------------------------------------------------------------------------------
# Requests with typed values

_KEYS = ("wavelength", "power", "beam_diameter", "divergence", "diameter_at", "pulse_energy", "pulse_duration",
         "prf", "exposure", "limits", "source_size", "laser_class", "deliberate", "reflectance", "viewing_angle",
         "skin_exposure", "objective_diameter", "optics_transmission", "focal_length", "lens_beam_diameter",
         "fibre_na", "fibre_core", "eyewear")


def _optional(mapping: Mapping[str, object], key: str, unit: str, **bounds: Any) -> float | None:
    value = mapping.get(key)
    if value is None or value == "":
        return None
    return parse_quantity(value, field=key, unit=unit, **bounds)


def _or(value: float | None, default: float) -> float:
    return default if value is None else value


def _required(mapping: Mapping[str, object], key: str, unit: str, **bounds: Any) -> float:
    value = _optional(mapping, key, unit, **bounds)
    if value is None:
        raise InputError(key, f"missing; give a number in {unit} or a value with units")
    return value


def _flag(mapping: Mapping[str, object], key: str) -> bool:
    value = mapping.get(key, False)
    if isinstance(value, bool):
        return value
    if value in ("true", "false"):
        return value == "true"
    raise InputError(key, f"must be true or false, got {value!r}")


def parse_assessment_request(mapping: Mapping[str, object]) -> tuple[Beam, Scenario]:
    """Beam and Scenario from typed values (numbers in SI units or strings with units).

    Keys are the command-line options with underscores (wavelength, power, beam_diameter,
    divergence, diameter_at, pulse_energy, pulse_duration, prf, exposure, limits, and the
    viewing options). Unknown keys, unreadable or out-of-range values and inconsistent
    combinations raise InputError naming the key.
    """
    unknown = sorted(set(mapping) - set(_KEYS))
    if unknown:
        raise InputError(unknown[0], f"unknown key; known keys are {', '.join(_KEYS)}")
    diameter_at = mapping.get("diameter_at") or "1/e2"
    if diameter_at not in DIAMETER_DEFINITIONS:
        raise InputError("diameter_at", f"must be one of {', '.join(DIAMETER_DEFINITIONS)}, got {diameter_at!r}")
    limits = mapping.get("limits") or DEFAULT_LIMITS
    check_limit_set(limits)
    laser_class = mapping.get("laser_class")
    eyewear_value = mapping.get("eyewear") or ()
    markings = (eyewear_value,) if isinstance(eyewear_value, str) else eyewear_value
    if not isinstance(markings, (list, tuple)) or not all(isinstance(m, str) for m in markings):
        raise InputError("eyewear", "expected a marking or a list of markings such as 'D 1064 LB6'")
    beam = Beam(
        wavelength_m=_required(mapping, "wavelength", "m", minimum=180e-9, maximum=1e-3),
        power_W=_optional(mapping, "power", "W", minimum=0.0, inclusive_minimum=False, maximum=1e9),
        beam_diameter_m=_required(mapping, "beam_diameter", "m", minimum=0.0, inclusive_minimum=False, maximum=10.0),
        divergence_rad=_required(mapping, "divergence", "rad", minimum=0.0, maximum=math.pi),
        diameter_at=diameter_at,
        pulse_energy_J=_optional(mapping, "pulse_energy", "J", minimum=0.0, inclusive_minimum=False, maximum=1e6),
        pulse_duration_s=_optional(mapping, "pulse_duration", "s", minimum=1e-13, maximum=3e4),
        prf_Hz=_optional(mapping, "prf", "Hz", minimum=0.0, inclusive_minimum=False, maximum=1e12),
        source_size_rad=_or(_optional(mapping, "source_size", "rad", minimum=0.0, maximum=math.pi), 0.0),
        laser_class=None if laser_class in (None, "") else normalise_class(laser_class),
    )
    if beam.power_W is None and beam.mode != "single_pulse" and not (
            beam.pulse_energy_J is not None and beam.prf_Hz is not None):
        raise InputError("power", "missing; give the average power (or pulse_energy and prf for a pulse train)")
    _check_beam(beam)
    focal_length = _optional(mapping, "focal_length", "m", minimum=0.0, inclusive_minimum=False, maximum=100.0)
    fibre_core = _optional(mapping, "fibre_core", "m", minimum=0.0, maximum=0.01)
    fibre_na = _optional(mapping, "fibre_na", "", minimum=0.0, inclusive_minimum=False, maximum=0.99)
    if fibre_core is not None and fibre_na is None:
        raise InputError("fibre_na", "required when a fibre core is given")
    scenario = Scenario(
        exposure_s=_optional(mapping, "exposure", "s", minimum=1e-13, maximum=3e4),
        limits=str(limits),
        deliberate_viewing=_flag(mapping, "deliberate"),
        diffuse_reflectance=_or(_optional(mapping, "reflectance", "", minimum=0.0, maximum=1.0), 1.0),
        viewing_angle_rad=_or(_optional(mapping, "viewing_angle", "rad", minimum=0.0, maximum=math.pi / 2), 0.0),
        skin_exposure_s=_optional(mapping, "skin_exposure", "s", minimum=1e-13, maximum=3e4),
        objective_diameter_m=_or(_optional(mapping, "objective_diameter", "m", minimum=0.0,
                                           inclusive_minimum=False, maximum=1.0), 0.05),
        optics_transmission=_or(_optional(mapping, "optics_transmission", "", minimum=0.0, inclusive_minimum=False,
                                          maximum=1.0), 1.0),
        focal_length_m=focal_length,
        lens_beam_diameter_m=_optional(mapping, "lens_beam_diameter", "m", minimum=0.0, inclusive_minimum=False,
                                       maximum=10.0),
        fibre_na=fibre_na,
        fibre_core_m=fibre_core,
        eyewear=tuple(parse_marking(marking) for marking in markings),
    )
    if scenario.lens_beam_diameter_m is not None and focal_length is None:
        raise InputError("focal_length", "required when a beam diameter at the lens is given")
    return beam, scenario
