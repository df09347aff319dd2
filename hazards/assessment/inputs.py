"""What an assessment takes: the beam, the viewing scenario, and the one home of every input rule.

``BEAM_FIELDS`` and ``SCENARIO_FIELDS`` hold each physical input's unit and bounds (the
wavelength and duration bounds read from the shipped limit sets); ``check_beam_values``
holds every rule that ties inputs together (a pulse shorter than its period, the average
power against pulse energy x prf, a range's ends). The command line, the API, the register's
services, its admin forms and the spreadsheet import all call these, so a value one of them
refuses, every other refuses too, with the same words.
"""
from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from functools import cache
from typing import Literal

from hazards.beam import DIAMETER_DEFINITIONS, DiameterDefinition
from hazards.classes import normalise_class
from hazards.errors import InputError
from hazards.eyewear import EyewearBand, parse_marking
from hazards.limits import DEFAULT_LIMITS, LIMIT_SETS, check_limit_set
from hazards.limits.limit_set import load_limit_set
from hazards.units import format_for_people, parse_quantity

Mode = Literal["continuous", "single_pulse", "pulse_train"]

# Average power stated beside pulse energy x prf: data sheets round both, so only a larger
# disagreement means one of them is wrong (common practice, no source).
POWER_CONSISTENCY = 0.2


@dataclass(frozen=True)
class FieldSpec:
    """A physical input: its unit and the range a value must fall in (``inclusive_minimum`` False: above it)."""

    unit: str
    minimum: float
    maximum: float
    inclusive_minimum: bool = True
    why: str = ""

    def read(self, value: object, *, field: str) -> float:
        """``value`` (a number in ``unit`` or a string with units) as an SI float; InputError naming ``field``."""
        return parse_quantity(value, field=field, unit=self.unit, minimum=self.minimum, maximum=self.maximum,
                              inclusive_minimum=self.inclusive_minimum)

    def check(self, value: float, *, field: str) -> None:
        """An SI float built in code must be finite and in range, like a typed one."""
        if not math.isfinite(value):
            raise InputError(field, f"must be a finite number, got {value!r}")
        self.read(value, field=field)


@cache
def _domain() -> tuple[tuple[float, float], tuple[float, float]]:
    """The wavelengths and durations every shipped limit set covers (the register assesses under all)."""
    sets = [load_limit_set(name) for name in LIMIT_SETS]
    wavelengths = (max(s.wavelength_range_m[0] for s in sets), min(s.wavelength_range_m[1] for s in sets))
    durations = (max(s.duration_range_s[0] for s in sets), min(s.duration_range_s[1] for s in sets))
    return wavelengths, durations


def shortest_tabulated_duration() -> float:
    """Durations below this are assessed at it, with a warning (hazards.limits.short_duration_warning)."""
    return _domain()[1][0]


@cache
def beam_fields() -> dict[str, FieldSpec]:
    """Every beam input by its engine name (the assess command's options with underscores).

    Bounds other than the limit sets' domain are plausibility bounds of common practice, no
    source: no laboratory beam comes near them, and they keep every formula finite.
    """
    (shortest_m, longest_m), (_, longest_s) = _domain()
    return {
        "wavelength": FieldSpec("m", shortest_m, longest_m, why="the limit sets' wavelength range"),
        "wavelength_max": FieldSpec("m", shortest_m, longest_m, why="the limit sets' wavelength range"),
        "power": FieldSpec("W", 0.0, 1e9, inclusive_minimum=False),
        "pulse_energy": FieldSpec("J", 0.0, 1e6, inclusive_minimum=False),
        # Shorter than the tables' first column (100 fs) is accepted and assessed at that column.
        "pulse_duration": FieldSpec("s", 0.0, longest_s, inclusive_minimum=False,
                                    why="up to the limit sets' longest exposure"),
        "prf": FieldSpec("Hz", 0.0, 1e12, inclusive_minimum=False),
        "beam_diameter": FieldSpec("m", 1e-6, 10.0, why="a beam narrower than 1 um at the exit is not physical"),
        "divergence": FieldSpec("rad", 0.0, math.pi, why="a full angle of at most pi"),
        "source_size": FieldSpec("rad", 0.0, math.pi, why="an angle of at most pi"),
        "fibre_na": FieldSpec("", 0.0, 0.99, inclusive_minimum=False),
    }


@cache
def scenario_fields() -> dict[str, FieldSpec]:
    """Every viewing-scenario input by its engine name."""
    _, (_, longest_s) = _domain()
    return {
        "exposure": FieldSpec("s", 0.0, longest_s, inclusive_minimum=False),
        "skin_exposure": FieldSpec("s", 0.0, longest_s, inclusive_minimum=False),
        "reflectance": FieldSpec("", 0.0, 1.0),
        "viewing_angle": FieldSpec("rad", 0.0, math.pi / 2),
        "objective_diameter": FieldSpec("m", 0.0, 1.0, inclusive_minimum=False),
        "optics_transmission": FieldSpec("", 0.0, 1.0, inclusive_minimum=False),
        "focal_length": FieldSpec("m", 0.0, 100.0, inclusive_minimum=False),
        "lens_beam_diameter": FieldSpec("m", 1e-6, 10.0),
        "fibre_core": FieldSpec("m", 0.0, 0.01),
    }


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

    def values(self) -> dict[str, float | None]:
        """The beam's inputs by engine name, as check_beam_values takes them."""
        return {"wavelength": self.wavelength_m, "power": self.power_W, "pulse_energy": self.pulse_energy_J,
                "pulse_duration": self.pulse_duration_s, "prf": self.prf_Hz, "beam_diameter": self.beam_diameter_m,
                "divergence": self.divergence_rad, "source_size": self.source_size_rad}


@dataclass(frozen=True)
class Scenario:
    """How the beam may reach a person.

    ``exposure_s`` None takes the common-practice default for the wavelength (reported).
    The diffuse case assumes a Lambertian surface of ``diffuse_reflectance`` seen at
    ``viewing_angle_rad`` from its normal. Optical aids default to the collecting aperture
    of IEC 60825-1 measurement condition 1 for the wavelength (``objective_diameter_m``
    None: 50 mm, or 25 mm in 302.5-400 nm and 1400-4000 nm) with full transmission. A lens
    (focal length and beam diameter at the lens, at the beam's ``diameter_at``) and a fibre
    end (NA and core) are optional extras.
    """

    exposure_s: float | None = None
    limits: str = DEFAULT_LIMITS
    deliberate_viewing: bool = False
    diffuse_reflectance: float = 1.0
    viewing_angle_rad: float = 0.0
    skin_exposure_s: float | None = None
    objective_diameter_m: float | None = None
    optics_transmission: float = 1.0
    focal_length_m: float | None = None
    lens_beam_diameter_m: float | None = None
    fibre_na: float | None = None
    fibre_core_m: float | None = None
    eyewear: tuple[EyewearBand, ...] = ()


def check_beam_values(values: Mapping[str, float | None], *, mode: Mode) -> None:
    """Every rule a beam's values must keep, for whichever of them are given (None: not given).

    ``values`` are SI floats by engine name (BEAM_FIELDS keys). Each given value must be in
    range; then a pulse train's pulses must be shorter than their period, its average power
    must agree with pulse energy x prf, a continuous beam carries no pulse figures, and a
    range's longest wavelength lies beyond its shortest. Raises InputError naming the field.
    Completeness (a diameter, a divergence, a power) is the caller's question: a register may
    hold an emission it cannot assess yet.
    """
    fields = beam_fields()
    for name, value in values.items():
        if value is not None:
            fields[name].check(value, field=name)
    low, high = values.get("wavelength"), values.get("wavelength_max")
    if low is not None and high is not None and high <= low:
        raise InputError("wavelength_max", f"{format_for_people(high, 'm')} is not longer than the wavelength "
                         f"{format_for_people(low, 'm')}; give the range from its shortest to its longest wavelength")
    duration, prf = values.get("pulse_duration"), values.get("prf")
    if mode == "continuous":
        for name in ("pulse_duration", "pulse_energy", "prf"):
            if values.get(name) is not None:
                raise InputError(name, "a continuous-wave emission has no pulses; leave it out, or give the emission "
                                 "a pulsed mode")
        return
    if mode != "pulse_train" or duration is None or prf is None:
        return
    if duration * prf >= 1.0:
        raise InputError("pulse_duration", f"{format_for_people(duration, 's')} is not shorter than the pulse period "
                         f"{format_for_people(1.0 / prf, 's')} at {format_for_people(prf, 'Hz')} (a train needs gaps between pulses)")
    power, energy = values.get("power"), values.get("pulse_energy")
    if power is not None and energy is not None:
        implied = energy * prf
        if abs(implied - power) > POWER_CONSISTENCY * max(implied, power):
            raise InputError("power", f"average power {format_for_people(power, 'W')} disagrees with pulse energy x prf = "
                             f"{format_for_people(implied, 'W')} by more than {POWER_CONSISTENCY:.0%}; give one of them or "
                             "correct either")


def check_beam(beam: Beam) -> None:
    """The rules of check_beam_values, and what an assessment needs of a beam to be complete."""
    if beam.diameter_at not in DIAMETER_DEFINITIONS:
        raise InputError("diameter_at", f"must be one of {', '.join(DIAMETER_DEFINITIONS)}, got {beam.diameter_at!r}")
    if beam.mode == "continuous":
        if beam.pulse_energy_J is not None or beam.prf_Hz is not None:
            raise InputError("pulse_duration", "required when a pulse energy or a pulse repetition frequency is given")
        if beam.power_W is None:
            raise InputError("power", "required for a continuous-wave emission")
    check_beam_values(beam.values(), mode=beam.mode)
    if beam.mode == "single_pulse" and beam.pulse_energy_J is None:
        raise InputError("pulse_energy", "required for a single pulse (or give a pulse repetition frequency)")
    if beam.mode == "pulse_train" and beam.energy_per_pulse_J is None:
        raise InputError("pulse_energy", "required for a pulse train unless the average power is given")


def check_scenario(scenario: Scenario) -> None:
    """The ranges of a scenario built in code, as parse_assessment_request checks them."""
    check_limit_set(scenario.limits)
    fields = scenario_fields()
    for name, value in (("exposure", scenario.exposure_s), ("skin_exposure", scenario.skin_exposure_s),
                        ("reflectance", scenario.diffuse_reflectance), ("viewing_angle", scenario.viewing_angle_rad),
                        ("objective_diameter", scenario.objective_diameter_m),
                        ("optics_transmission", scenario.optics_transmission),
                        ("focal_length", scenario.focal_length_m), ("lens_beam_diameter", scenario.lens_beam_diameter_m),
                        ("fibre_core", scenario.fibre_core_m)):
        if value is not None:
            fields[name].check(value, field=name)
    if scenario.fibre_na is not None:
        beam_fields()["fibre_na"].check(scenario.fibre_na, field="fibre_na")
    if scenario.fibre_core_m is not None and scenario.fibre_na is None:
        raise InputError("fibre_na", "required when a fibre core is given")
    if scenario.lens_beam_diameter_m is not None and scenario.focal_length_m is None:
        raise InputError("focal_length", "required when a beam diameter at the lens is given")


# ---------------------------------------------------------------------------------------------
# Requests with typed values

REQUEST_KEYS = ("wavelength", "power", "beam_diameter", "divergence", "diameter_at", "pulse_energy", "pulse_duration",
                "prf", "exposure", "limits", "source_size", "laser_class", "deliberate", "reflectance",
                "viewing_angle", "skin_exposure", "objective_diameter", "optics_transmission", "focal_length",
                "lens_beam_diameter", "fibre_na", "fibre_core", "eyewear")


def _given(value: object) -> bool:
    return value is not None and value != ""


def _optional(mapping: Mapping[str, object], key: str, spec: FieldSpec) -> float | None:
    value = mapping.get(key)
    return spec.read(value, field=key) if _given(value) else None


def _required(mapping: Mapping[str, object], key: str, spec: FieldSpec) -> float:
    value = _optional(mapping, key, spec)
    if value is None:
        raise InputError(key, f"missing; give a number in {spec.unit} or a value with units")
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

    Keys are REQUEST_KEYS, the command-line options with underscores. Unknown keys, unreadable
    or out-of-range values and inconsistent combinations raise InputError naming the key.
    """
    unknown = sorted(set(mapping) - set(REQUEST_KEYS))
    if unknown:
        raise InputError(unknown[0], f"unknown key; known keys are {', '.join(REQUEST_KEYS)}")
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
    beam_spec, scenario_spec = beam_fields(), scenario_fields()
    source_size = _optional(mapping, "source_size", beam_spec["source_size"])
    beam = Beam(
        wavelength_m=_required(mapping, "wavelength", beam_spec["wavelength"]),
        power_W=_optional(mapping, "power", beam_spec["power"]),
        beam_diameter_m=_required(mapping, "beam_diameter", beam_spec["beam_diameter"]),
        divergence_rad=_required(mapping, "divergence", beam_spec["divergence"]),
        diameter_at=diameter_at,
        pulse_energy_J=_optional(mapping, "pulse_energy", beam_spec["pulse_energy"]),
        pulse_duration_s=_optional(mapping, "pulse_duration", beam_spec["pulse_duration"]),
        prf_Hz=_optional(mapping, "prf", beam_spec["prf"]),
        source_size_rad=0.0 if source_size is None else source_size,
        laser_class=normalise_class(laser_class) if _given(laser_class) else None,
    )
    if beam.power_W is None and beam.mode != "single_pulse" and not (
            beam.pulse_energy_J is not None and beam.prf_Hz is not None):
        raise InputError("power", "missing; give the average power (or pulse_energy and prf for a pulse train)")
    check_beam(beam)
    reflectance = _optional(mapping, "reflectance", scenario_spec["reflectance"])
    viewing_angle = _optional(mapping, "viewing_angle", scenario_spec["viewing_angle"])
    transmission = _optional(mapping, "optics_transmission", scenario_spec["optics_transmission"])
    scenario = Scenario(
        exposure_s=_optional(mapping, "exposure", scenario_spec["exposure"]),
        limits=str(limits),
        deliberate_viewing=_flag(mapping, "deliberate"),
        diffuse_reflectance=1.0 if reflectance is None else reflectance,
        viewing_angle_rad=0.0 if viewing_angle is None else viewing_angle,
        skin_exposure_s=_optional(mapping, "skin_exposure", scenario_spec["skin_exposure"]),
        objective_diameter_m=_optional(mapping, "objective_diameter", scenario_spec["objective_diameter"]),
        optics_transmission=1.0 if transmission is None else transmission,
        focal_length_m=_optional(mapping, "focal_length", scenario_spec["focal_length"]),
        lens_beam_diameter_m=_optional(mapping, "lens_beam_diameter", scenario_spec["lens_beam_diameter"]),
        fibre_na=_optional(mapping, "fibre_na", beam_spec["fibre_na"]),
        fibre_core_m=_optional(mapping, "fibre_core", scenario_spec["fibre_core"]),
        eyewear=tuple(parse_marking(marking) for marking in markings),
    )
    check_scenario(scenario)
    return beam, scenario
