"""Eyewear figures: required optical density, EN 207 scale numbers and markings, adequacy.

Sources (public guidance that restates EN 207:2009 Annex B, the standard itself being paid):
DGUV Information 203-042 (2018), sections 5.1-5.4 and Annex 8, for the test conditions, the
LB table, the N^(1/4) rule for pulse trains and the marking; EN 207 for the band edges.
"""
from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from typing import Literal, TypedDict

import numpy as np
from numpy.typing import ArrayLike, NDArray

from hazards.beam import FloatArray, peak_over_area
from hazards.errors import InputError
from hazards.units import bounded_text
from hazards.working import Working

# OD and LB numbers are rounded up; a ratio that lands on a whole decade up to float noise
# (1e-9 of a decade is far below any measured input) must not be pushed one step higher.
_ROUNDING_SLACK = 1e-9

BoolArray = NDArray[np.bool_]
Condition = Literal["D", "I", "R", "M"]
_CONDITIONS: tuple[Condition, ...] = ("D", "I", "R", "M")

# Test-condition boundaries, DGUV 203-042 section 5.1 Table 2 (EN 207 Table 1).
_CONTINUOUS_ABOVE_S = 0.25
_LONG_PULSE_ABOVE_S = 1e-6
_Q_SWITCHED_FROM_S = 1e-9

# LB table: the LBn limit is base * 10^n, n = 1..10. Bands as EN 207 writes them:
# 180-315 nm, >315-1400 nm, >1400 nm-1 mm. Quantity "E" is W/m^2, "H" is J/m^2.
# DGUV 203-042 section 5.1 / EN 207 Table B.2; the n = 0 values equal the simplified
# exposure limits of DGUV 203-042 Annex 6, a cross-check of the transcription.
# Rows: D, I and R, M; columns: the three bands.
_LB_BASE_VALUES = np.array([[1e-3, 1e1, 1e3], [3e1, 5e-3, 1e2], [3e10, 1.5e-4, 1e11]])
_LB_BASE_QUANTITIES = np.array([["E", "E", "E"], ["H", "H", "H"], ["E", "H", "E"]])
LB_MAX = 10

# Pulse grouping time T_i for the N^(1/4) correction (DGUV 203-042 section 5.3). Which
# IEC edition's T_i EN 207:2017 uses is open; the 2007 values (BGI 832) are the longer ones
# in 400-1400 nm, which group more pulses and so give the higher, safer scale number.
_PULSE_GROUPING_S: tuple[tuple[float, float, float], ...] = (
    (400e-9, 1050e-9, 18e-6),
    (1050e-9, 1400e-9, 50e-6),
    (1400e-9, 1500e-9, 1e-3),
    (1500e-9, 1800e-9, 10.0),
    (1800e-9, 2600e-9, 1e-3),
    (2600e-9, 1e-3, 1e-7),
)
_TRAIN_WINDOW_S = 5.0  # EN 207 stability test: 5 s or 50 pulses; N counts pulses in 5 s


def optical_density(ratio: ArrayLike) -> tuple[FloatArray, FloatArray]:
    """(exact, required) from exposure / limit: OD = log10(ratio) and its value rounded up, never below 0.

    The exposure is the irradiance or radiant exposure averaged over the limiting aperture at the
    worst reachable position (the exit), the limit the MPE in the same quantity and duration.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        exact = np.log10(np.asarray(ratio, dtype=np.float64))
    return exact, np.maximum(0.0, np.ceil(exact - _ROUNDING_SLACK))


def en207_conditions(pulse_duration_s: ArrayLike) -> NDArray[np.str_]:
    """EN 207 test condition from the pulse duration (NaN: continuous): D (> 0.25 s), I, R, M."""
    duration = np.asarray(pulse_duration_s, dtype=np.float64)
    return np.select([~(duration <= _CONTINUOUS_ABOVE_S), duration > _LONG_PULSE_ABOVE_S,
                      duration >= _Q_SWITCHED_FROM_S], ["D", "I", "R"], "M")


def en207_condition(pulse_duration_s: float | None) -> Condition:
    """The test condition of one emission (None: continuous)."""
    return en207_condition_letter(str(en207_conditions(np.nan if pulse_duration_s is None else pulse_duration_s)))


def en207_bands(wavelength_m: ArrayLike) -> NDArray[np.intp]:
    """0 for 180-315 nm, 1 for >315-1400 nm, 2 for >1400 nm (EN 207 band edges)."""
    wavelength = np.asarray(wavelength_m, dtype=np.float64)
    return np.where(wavelength <= 315e-9, 0, np.where(wavelength <= 1400e-9, 1, 2)).astype(np.intp)


def _columns(conditions: NDArray[np.str_]) -> NDArray[np.intp]:
    return np.where(conditions == "D", 0, np.where(conditions == "M", 2, 1)).astype(np.intp)


def lb_bases(conditions: ArrayLike, wavelength_m: ArrayLike) -> tuple[FloatArray, NDArray[np.str_]]:
    """The LB0 figure (value, "E" in W/m^2 or "H" in J/m^2) for each condition letter and wavelength."""
    column, band = _columns(np.asarray(conditions)), en207_bands(wavelength_m)
    return _LB_BASE_VALUES[column, band], _LB_BASE_QUANTITIES[column, band]


def lb_limit(condition: Condition, wavelength_m: float, scale_number: int) -> tuple[float, str]:
    """The LBn limit (value, "E" in W/m^2 or "H" in J/m^2) for a condition and wavelength."""
    base, quantity = lb_bases(condition, wavelength_m)
    return float(base) * 10.0**scale_number, str(quantity)


def scale_numbers(conditions: ArrayLike, wavelength_m: ArrayLike, density: ArrayLike) -> tuple[FloatArray, BoolArray]:
    """(smallest n >= 1 with density <= LBn limit, whether eyewear needs a rating at all: n >= 1 unrounded)."""
    base, _quantity = lb_bases(conditions, wavelength_m)
    with np.errstate(divide="ignore", invalid="ignore"):
        exact = np.ceil(np.log10(np.asarray(density) / base) - _ROUNDING_SLACK)
    return np.maximum(1.0, exact), exact >= 1


def pulse_grouping_times(wavelength_m: ArrayLike) -> FloatArray:
    """T_i of the N^(1/4) rule for each wavelength (NaN below 400 nm)."""
    wavelength = np.asarray(wavelength_m, dtype=np.float64)
    result = np.full(wavelength.shape, np.nan)
    for low, high, grouping in _PULSE_GROUPING_S:
        result = np.where((wavelength >= low) & ((wavelength < high) | ((high == 1e-3) & (wavelength == high))),
                          grouping, result)
    return result


@dataclass(frozen=True)
class TrainFactors:
    """The EN 207 multiplier of one pulse's energy density for a train (DGUV 203-042 section 5.3).

    ``case`` is "none" (not applied: needs 400 nm - 1 mm, t < 0.25 s, prf > 1 Hz), "a" (pulses
    further apart than T_i: N^(1/4), N = prf x 5 s) or "b" (pulses within T_i summed and counted
    as one: (prf T_i) (5 s / T_i)^(1/4)).
    """

    factor: FloatArray
    case: NDArray[np.str_]
    grouping_time_s: FloatArray
    pulses: FloatArray


def train_factors(wavelength_m: ArrayLike, pulse_duration_s: ArrayLike, prf_Hz: ArrayLike) -> TrainFactors:
    wavelength, duration, prf = np.broadcast_arrays(*(np.asarray(value, dtype=np.float64)
                                                     for value in (wavelength_m, pulse_duration_s, prf_Hz)))
    applies = (wavelength >= 400e-9) & (duration < _CONTINUOUS_ABOVE_S) & (prf > 1.0)
    grouping = pulse_grouping_times(wavelength)
    with np.errstate(divide="ignore", invalid="ignore"):
        apart = 1.0 / prf > grouping
        pulses = prf * _TRAIN_WINDOW_S
        case_a = pulses**0.25
        case_b = prf * np.minimum(grouping, _TRAIN_WINDOW_S) * np.maximum(1.0, _TRAIN_WINDOW_S / grouping) ** 0.25
    factor = np.where(applies, np.where(apart, case_a, case_b), 1.0)
    case = np.where(applies, np.where(apart, "a", "b"), "none")
    return TrainFactors(factor=factor, case=case, grouping_time_s=grouping, pulses=pulses)


def repetition_factor(wavelength_m: float, pulse_duration_s: float, prf_Hz: float) -> float:
    """The train multiplier of one emission (see train_factors)."""
    return float(train_factors(wavelength_m, pulse_duration_s, prf_Hz).factor)


class LbRequirementDict(TypedDict):
    condition: Condition
    wavelength_nm: float
    scale_number: int
    marking: str | None
    needed: bool
    within_scale: bool
    density: float
    density_unit: str


@dataclass(frozen=True)
class LbRequirement:
    """One required EN 207 rating: condition letter, wavelength, scale number."""

    condition: Condition
    wavelength_m: float
    scale_number: int
    density: float
    quantity: str
    needed: bool
    within_scale: bool

    @property
    def marking(self) -> str | None:
        """Mode-first EN 207 marking, e.g. "D 1064 LB6"; None beyond LB10 (no such eyewear)."""
        if not self.within_scale:
            return None
        return f"{self.condition} {_nanometres(self.wavelength_m)} LB{self.scale_number}"

    @classmethod
    def from_dict(cls, record: LbRequirementDict) -> LbRequirement:
        """The requirement ``to_dict`` wrote (as a register stores it)."""
        condition = record["condition"]
        if condition not in _CONDITIONS:
            raise ValueError(f"unknown EN 207 test condition {condition!r}")
        return cls(condition=condition, wavelength_m=record["wavelength_nm"] * 1e-9,
                   scale_number=record["scale_number"], density=record["density"],
                   quantity="E" if record["density_unit"] == "W/m2" else "H", needed=record["needed"],
                   within_scale=record["within_scale"])

    def to_dict(self) -> LbRequirementDict:
        return {"condition": self.condition, "wavelength_nm": self.wavelength_m * 1e9,
                "scale_number": self.scale_number, "marking": self.marking, "needed": self.needed,
                "within_scale": self.within_scale, "density": self.density,
                "density_unit": "W/m2" if self.quantity == "E" else "J/m2"}


def _nanometres(wavelength_m: float) -> str:
    return f"{wavelength_m * 1e9:.0f}" if abs(wavelength_m * 1e9 - round(wavelength_m * 1e9)) < 0.05 \
        else f"{wavelength_m * 1e9:.1f}"


class En207RatingDict(TypedDict):
    markings: list[str]
    requirements: list[LbRequirementDict]
    beam_diameter_1e_m: float
    large_beam_correction: str


@dataclass(frozen=True)
class En207Rating:
    """The EN 207 ratings one emission needs, with their working and warnings."""

    requirements: tuple[LbRequirement, ...]
    beam_diameter_1e_m: float
    working: Working = field(default_factory=Working)
    warnings: tuple[str, ...] = ()

    @property
    def markings(self) -> list[str]:
        return [r.marking for r in self.requirements if r.marking is not None]

    def to_dict(self) -> En207RatingDict:
        return {"markings": self.markings, "requirements": [r.to_dict() for r in self.requirements],
                "beam_diameter_1e_m": self.beam_diameter_1e_m, "large_beam_correction": "not applied"}


@dataclass(frozen=True)
class _Requirements:
    """One kind of rating for every emission: the continuous D rating, or the rating for one pulse."""

    present: BoolArray
    condition: NDArray[np.str_]
    density: FloatArray
    quantity: NDArray[np.str_]
    scale: FloatArray
    needed: BoolArray
    how: NDArray[np.str_]
    raised_from: FloatArray


@dataclass(frozen=True)
class En207Ratings:
    """The EN 207 ratings of many emissions (arrays); ``rating_at(i)`` is one emission's En207Rating.

    ``continuous`` is the D rating from the average power (continuous wave, and every repetitively
    pulsed laser); ``pulse`` the rating of one pulse (I, R, M, or D for a "pulse" above 0.25 s),
    with the train factor applied.
    """

    wavelength_m: FloatArray
    beam_diameter_1e_m: FloatArray
    average_power_W: FloatArray
    continuous: _Requirements
    pulse: _Requirements
    train: TrainFactors

    def floored(self, od_required: ArrayLike, on_pulse: ArrayLike) -> En207Ratings:
        """The ratings with the one that matches the governing exposure limit raised to at least ``od_required``.

        An LBn filter is only guaranteed a spectral OD of n (DGUV 203-042 section 5.1), so the rating
        that answers the governing limit (the pulse rating where a pulse rule governs, the D rating
        for continuous wave and the average-power rule) never asks for less than the required OD.
        """
        od = np.asarray(od_required, dtype=np.float64)
        pulse_governs = np.asarray(on_pulse, dtype=bool) & self.pulse.present
        continuous_governs = ~pulse_governs & self.continuous.present
        return replace(self, continuous=_floor(self.continuous, od, continuous_governs),
                       pulse=_floor(self.pulse, od, pulse_governs))

    def rating_at(self, index: int) -> En207Rating:
        wavelength = float(self.wavelength_m.reshape(-1)[index])
        diameter = float(self.beam_diameter_1e_m.reshape(-1)[index])
        requirements: list[LbRequirement] = []
        working = Working()
        working.add("EN 207: beam area", "A63 = pi d63^2 / 4", float(np.pi * diameter**2 / 4), "m^2",
                    "DGUV 203-042 section 5.2", d63=diameter)
        if self.train.case.reshape(-1)[index] != "none" and self.pulse.present.reshape(-1)[index]:
            _train_step(self.train, index, working)
        for kind in (self.continuous, self.pulse):
            if not kind.present.reshape(-1)[index]:
                continue
            requirement = _requirement_at(kind, index, wavelength, working)
            requirements.append(requirement)
        warnings: list[str] = []
        for requirement in requirements:
            if not requirement.within_scale:
                warnings.append(f"EN 207 {requirement.condition}: the beam needs more than LB{LB_MAX} "
                                f"(LB{requirement.scale_number}); no EN 207 eyewear is rated for it. Enclose "
                                "the beam or use other controls.")
        # DGUV 203-042 section 5.2 states the correction for d63 of 1-15 mm, yet its own Table 1 examples
        # (d63 of 23-80 mm) carry ratings above the base table, so any beam from 1 mm up is flagged.
        power = float(self.average_power_W.reshape(-1)[index])
        if wavelength > 315e-9 and diameter >= 1e-3 and (
                (math.isfinite(power) and power > 10.0)
                or any(r.quantity == "E" and r.density > 1e5 for r in requirements)):
            warnings.append("EN 207 large-beam correction (DGUV 203-042 section 5.2) may apply to this beam and was "
                            "not applied; confirm the LB number with the eyewear maker.")
        return En207Rating(tuple(requirements), diameter, working, tuple(warnings))


def _floor(kind: _Requirements, od: FloatArray, where: BoolArray) -> _Requirements:
    raise_it = where & (od > kind.scale)
    return replace(kind, scale=np.where(raise_it, od, kind.scale), needed=kind.needed | raise_it,
                   raised_from=np.where(raise_it, kind.scale, np.nan))


def _requirement_at(kind: _Requirements, index: int, wavelength: float, working: Working) -> LbRequirement:
    condition = str(kind.condition.reshape(-1)[index])
    density = float(kind.density.reshape(-1)[index])
    number = int(kind.scale.reshape(-1)[index])
    raised_from = float(kind.raised_from.reshape(-1)[index])
    base, quantity = lb_bases(condition, wavelength)
    if math.isfinite(raised_from):
        working.add(f"EN 207 {condition}: scale number", "smallest n with the density <= LBn limit", raised_from, "",
                    "EN 207 Table B.2 as restated in DGUV 203-042 section 5", density=density,
                    LBn_limit=float(base) * 10.0**raised_from)
        working.add(f"EN 207 {condition}: raised to the required OD", "n = max(n, OD required)", number, "",
                    "an LBn filter guarantees only OD n (DGUV 203-042 section 5.1)")
    else:
        working.add(f"EN 207 {condition}: scale number", f"smallest n with {kind.how.reshape(-1)[index]} <= LBn limit",
                    number, "", "EN 207 Table B.2 as restated in DGUV 203-042 section 5", density=density,
                    LBn_limit=float(base) * 10.0**number)
    return LbRequirement(condition=en207_condition_letter(condition), wavelength_m=wavelength, scale_number=number,
                         density=density, quantity=str(quantity), needed=bool(kind.needed.reshape(-1)[index]),
                         within_scale=number <= LB_MAX)


def en207_condition_letter(text: str) -> Condition:
    if text not in _CONDITIONS:
        raise ValueError(f"unknown EN 207 test condition {text!r}")
    return _CONDITIONS[_CONDITIONS.index(text)]


def _train_step(train: TrainFactors, index: int, working: Working) -> None:
    factor, case = float(train.factor.reshape(-1)[index]), str(train.case.reshape(-1)[index])
    if case == "a":
        working.add("EN 207 train correction", "N^(1/4), N = prf x 5 s", factor, "",
                    "DGUV 203-042 section 5.3 case a", N=float(train.pulses.reshape(-1)[index]))
    else:
        working.add("EN 207 train correction", "(prf T_i) (5 s / T_i)^(1/4): pulses within T_i summed", factor, "",
                    "DGUV 203-042 section 5.3 case b; T_i of IEC 60825-1:2007 (BGI 832)",
                    T_i_s=float(train.grouping_time_s.reshape(-1)[index]))


def en207_ratings(wavelength_m: ArrayLike, beam_diameter_1e_m: ArrayLike, *, average_power_W: ArrayLike,
                  pulse_energy_J: ArrayLike, pulse_duration_s: ArrayLike, prf_Hz: ArrayLike) -> En207Ratings:
    """The EN 207 ratings protectors need, at each beam's 1/e diameter (NaN: a figure not given).

    Continuous: D from P / A63. Pulsed: the letter from the pulse duration, from H = Q / A63
    (times the train correction), or for M outside 315-1400 nm, and for "pulses" above 0.25 s,
    from the peak power density Q / (t A63); repetitive lasers always also need D from the
    average power.
    """
    wavelength, diameter, power, energy, duration, prf = np.broadcast_arrays(
        *(np.asarray(value, dtype=np.float64)
          for value in (wavelength_m, beam_diameter_1e_m, average_power_W, pulse_energy_J, pulse_duration_s, prf_Hz)))
    pulsed = np.isfinite(energy) & np.isfinite(duration)
    letter = np.where(pulsed, en207_conditions(duration), "D")
    train = train_factors(wavelength, duration, np.where(np.isfinite(prf), prf, 0.0))
    by_peak = (letter == "D") | ((letter == "M") & (en207_bands(wavelength) != 1))
    with np.errstate(divide="ignore", invalid="ignore"):
        pulse_density = np.where(by_peak, peak_over_area(energy / duration, diameter),
                                 peak_over_area(energy, diameter) * train.factor)
    pulse_scale, pulse_needed = scale_numbers(letter, wavelength, pulse_density)
    pulse = _Requirements(present=pulsed, condition=letter, density=pulse_density,
                          quantity=np.where(by_peak, "E", "H"), scale=pulse_scale, needed=pulse_needed,
                          how=np.where(by_peak, np.where(letter == "D", "E = (Q / t) / A63", "E_peak = Q / (t A63)"),
                                       "H' = Q / A63 x train factor"),
                          raised_from=np.full(wavelength.shape, np.nan))
    continuous_present = np.isfinite(power) & (~pulsed | np.isfinite(prf))
    continuous_density = peak_over_area(power, diameter)
    continuous_scale, continuous_needed = scale_numbers(np.full(wavelength.shape, "D"), wavelength, continuous_density)
    continuous = _Requirements(present=continuous_present, condition=np.full(wavelength.shape, "D"),
                               density=continuous_density, quantity=np.full(wavelength.shape, "E"),
                               scale=continuous_scale, needed=continuous_needed,
                               how=np.where(pulsed, "E = P_avg / A63", "E = P / A63"),
                               raised_from=np.full(wavelength.shape, np.nan))
    return En207Ratings(wavelength_m=wavelength, beam_diameter_1e_m=diameter, average_power_W=power,
                        continuous=continuous, pulse=pulse, train=train)


def en207_rating(wavelength_m: float, beam_diameter_1e_m: float, *, average_power_W: float | None,
                 pulse_energy_J: float | None = None, pulse_duration_s: float | None = None,
                 prf_Hz: float | None = None) -> En207Rating:
    """The EN 207 ratings one emission needs (en207_ratings of one)."""
    def given(value: float | None) -> float:
        return np.nan if value is None else value

    return en207_ratings(wavelength_m, beam_diameter_1e_m, average_power_W=given(average_power_W),
                         pulse_energy_J=given(pulse_energy_J), pulse_duration_s=given(pulse_duration_s),
                         prf_Hz=given(prf_Hz)).rating_at(0)


# ---------------------------------------------------------------------------------------------
# Eyewear markings and adequacy

@dataclass(frozen=True)
class EyewearBand:
    """One wavelength band of an eyewear item with its optical density and/or LB ratings."""

    low_m: float
    high_m: float
    optical_density: float | None = None
    scale_numbers: dict[str, int] = field(default_factory=dict)  # condition letter -> LB n

    def covers(self, wavelength_m: float) -> bool:
        # Markings are written in whole nanometres; half a nanometre either side is the marking's own rounding.
        return self.low_m - 0.5e-9 <= wavelength_m <= self.high_m + 0.5e-9


# Possessive quantifiers throughout: each piece of a marking matches one way only, so a text
# that is not a marking fails at once instead of backtracking over every split of its digits.
_DECIMAL = r"\d++(?:\.\d++)?+"
_RANGE = rf"({_DECIMAL})(?:\s*+(?:-|–|to)\s*+({_DECIMAL}))?+"
_NM = r"(?:\s*+nm)?+"
_SCALE = r"L?+B?+\s*+(\d++)\s*+Y?+"
_MODE_FIRST = re.compile(rf"([DIRM]++)\s++{_RANGE}{_NM}\s++{_SCALE}", re.IGNORECASE)
_RATING = re.compile(rf"([DIRM]++)\s++{_SCALE}", re.IGNORECASE)
_WAVELENGTH_FIRST = re.compile(rf"{_RANGE}{_NM}\s++(.++)", re.IGNORECASE)
_OD = re.compile(rf"OD\s*+({_DECIMAL})\s*+(?:(?:@|at)\s*+)?+{_RANGE}{_NM}", re.IGNORECASE)
# What an eyewear maker can print: OD up to 20 (beyond any filter's measurable density, common
# practice, no source), LB1 to LB10 (EN 207), wavelengths within the limit sets' 180 nm - 1 mm.
_MAX_MARKED_OD = 20.0
_MARKED_NM = (180.0, 1e6)


def parse_marking(text: str, *, field_name: str = "eyewear") -> EyewearBand:
    """Read one marking: "D 1064 LB6", "IR 315-532 LB6", "1064 D LB7 + I LB8", "OD 6 190-532 nm".

    Both EN 207 orders (letters first, or wavelength first with "+"-joined ratings) are in use;
    "L6" (before EN 207:2009) is read as LB6, and the suffix Y is accepted. A text longer than
    hazards.units.MAX_TEXT_LENGTH, an LB number outside 1-10, an OD above 20 or a wavelength
    outside 180 nm - 1 mm is refused.
    """
    text = " ".join(bounded_text(text, field=field_name).split())
    match = _OD.fullmatch(text)
    if match:
        low, high = _band(match.group(2), match.group(3), field_name)
        density = float(match.group(1))
        if not 0.0 < density <= _MAX_MARKED_OD:
            raise InputError(field_name, f"OD {match.group(1)} in {text!r} is not a marked optical density "
                             f"(above 0, at most {_MAX_MARKED_OD:g})")
        return EyewearBand(low, high, optical_density=density)
    match = _MODE_FIRST.fullmatch(text)
    if match:
        low, high = _band(match.group(2), match.group(3), field_name)
        return EyewearBand(low, high, scale_numbers=_ratings(match.group(1), match.group(4), {}, field_name))
    match = _WAVELENGTH_FIRST.fullmatch(text)
    if match:
        low, high = _band(match.group(1), match.group(2), field_name)
        numbers: dict[str, int] = {}
        for part in match.group(3).split("+"):
            rating = _RATING.fullmatch(part.strip())
            if rating is None:
                break
            _ratings(rating.group(1), rating.group(2), numbers, field_name)
        else:
            return EyewearBand(low, high, scale_numbers=numbers)
    raise InputError(field_name, f"cannot read eyewear marking {text!r} (examples: 'D 1064 LB6', "
                                 "'1064 D LB7 + IR LB8', 'OD 6 190-532 nm')")


def _band(low_text: str, high_text: str | None, field_name: str) -> tuple[float, float]:
    low_nm = float(low_text)
    high_nm = float(high_text) if high_text else low_nm
    for value in (low_nm, high_nm):
        if not _MARKED_NM[0] <= value <= _MARKED_NM[1]:
            raise InputError(field_name, f"wavelength {value:g} nm is outside 180 nm - 1 mm")
    return min(low_nm, high_nm) * 1e-9, max(low_nm, high_nm) * 1e-9


def _ratings(letters: str, number_text: str, into: dict[str, int], field_name: str) -> dict[str, int]:
    number = int(number_text) if len(number_text) <= 2 else LB_MAX + 1
    if not 1 <= number <= LB_MAX:
        raise InputError(field_name, f"LB{number_text} is not an EN 207 scale number (LB1 to LB{LB_MAX})")
    for letter in letters.upper():
        into[letter] = max(number, into.get(letter, 0))
    return into


AdequacyStatus = Literal["adequate", "inadequate", "not_covered"]


@dataclass(frozen=True)
class Adequacy:
    status: AdequacyStatus
    od_shortfall: float | None = None
    lb_shortfall: dict[str, int] = field(default_factory=dict)
    reasons: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, object]:
        return {"status": self.status, "od_shortfall": self.od_shortfall, "lb_shortfall": dict(self.lb_shortfall),
                "reasons": list(self.reasons)}


def eyewear_adequacy(wavelength_m: float, od_required: int, requirements: Sequence[LbRequirement],
                     bands: Sequence[EyewearBand]) -> Adequacy:
    """Whether eyewear with ``bands`` protects against one emission.

    not_covered: no band includes the wavelength. Otherwise every marked figure must reach
    what is required: OD at least ``od_required`` where an OD is marked, and for each needed
    EN 207 rating a scale number at least as high under the same test letter. An item marked
    with neither OD nor the needed letter cannot be judged adequate.
    """
    covering = [band for band in bands if band.covers(wavelength_m)]
    if not covering:
        return Adequacy("not_covered", reasons=(f"no band of the eyewear includes {_nanometres(wavelength_m)} nm",))
    best_lb: dict[str, int] = {}
    for band in covering:
        for letter, number in band.scale_numbers.items():
            best_lb[letter] = max(number, best_lb.get(letter, 0))
    # An LBn filter has a spectral OD of at least n at its rated wavelengths (DGUV 203-042 section 5.1).
    densities = [b.optical_density for b in covering if b.optical_density is not None] + list(best_lb.values())
    if not densities:
        return Adequacy("inadequate", reasons=("the covering band carries neither an OD nor an LB rating",))
    reasons: list[str] = []
    od_shortfall: float | None = None
    best_od = max(densities)
    if best_od < od_required:
        od_shortfall = od_required - best_od
        reasons.append(f"OD {best_od:g} at {_nanometres(wavelength_m)} nm, OD {od_required} required")
    lb_shortfall: dict[str, int] = {}
    # Eyewear marked with an OD only (non-EN 207 markets) is judged on its OD alone.
    for requirement in requirements if best_lb else ():
        if not requirement.needed:
            continue
        have = best_lb.get(requirement.condition, 0)
        if have < requirement.scale_number:
            lb_shortfall[requirement.condition] = requirement.scale_number - have
            reasons.append(f"{requirement.condition} LB{have} marked, LB{requirement.scale_number} required"
                           if have else f"not rated for test condition {requirement.condition} "
                           f"(LB{requirement.scale_number} required)")
    if reasons:
        return Adequacy("inadequate", od_shortfall, lb_shortfall, tuple(reasons))
    return Adequacy("adequate")
