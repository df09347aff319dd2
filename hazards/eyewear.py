"""Eyewear figures: required optical density, EN 207 scale numbers and markings, adequacy.

Sources (public guidance that restates EN 207:2009 Annex B, the standard itself being paid):
DGUV Information 203-042 (2018), sections 5.1-5.4 and Annex 8, for the test conditions, the
LB table, the N^(1/4) rule for pulse trains and the marking; EN 207 for the band edges.
"""
from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Literal, TypedDict

from hazards.beam import circle_area, peak_over_area
from hazards.errors import InputError
from hazards.units import bounded_text
from hazards.working import Working

# OD and LB numbers are rounded up; a ratio that lands on a whole decade up to float noise
# (1e-9 of a decade is far below any measured input) must not be pushed one step higher.
_ROUNDING_SLACK = 1e-9

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
_LB_BASE: dict[tuple[str, int], tuple[float, str]] = {
    ("D", 0): (1e-3, "E"), ("D", 1): (1e1, "E"), ("D", 2): (1e3, "E"),
    ("IR", 0): (3e1, "H"), ("IR", 1): (5e-3, "H"), ("IR", 2): (1e2, "H"),
    ("M", 0): (3e10, "E"), ("M", 1): (1.5e-4, "H"), ("M", 2): (1e11, "E"),
}
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


def optical_density(exposure: float, limit: float) -> tuple[float, int]:
    """(exact, required): OD = log10(exposure / limit) and its value rounded up, never below 0.

    ``exposure`` is the irradiance or radiant exposure averaged over the limiting aperture at
    the worst reachable position, ``limit`` the MPE in the same quantity and duration.
    """
    if not (exposure > 0 and limit > 0):
        raise ValueError("exposure and limit must be positive")
    exact = math.log10(exposure / limit)
    return exact, max(0, math.ceil(exact - _ROUNDING_SLACK))


def en207_condition(pulse_duration_s: float | None) -> Condition:
    """EN 207 test condition from the pulse duration: D (> 0.25 s or continuous), I, R, M."""
    if pulse_duration_s is None or pulse_duration_s > _CONTINUOUS_ABOVE_S:
        return "D"
    if pulse_duration_s > _LONG_PULSE_ABOVE_S:
        return "I"
    if pulse_duration_s >= _Q_SWITCHED_FROM_S:
        return "R"
    return "M"


def en207_band(wavelength_m: float) -> int:
    """0 for 180-315 nm, 1 for >315-1400 nm, 2 for >1400 nm (EN 207 band edges)."""
    if wavelength_m <= 315e-9:
        return 0
    if wavelength_m <= 1400e-9:
        return 1
    return 2


def lb_limit(condition: Condition, wavelength_m: float, scale_number: int) -> tuple[float, str]:
    """The LBn limit (value, "E" in W/m^2 or "H" in J/m^2) for a condition and wavelength."""
    base, quantity = _LB_BASE[(_column(condition), en207_band(wavelength_m))]
    return base * 10.0**scale_number, quantity


def _column(condition: Condition) -> str:
    return "IR" if condition in ("I", "R") else condition


def pulse_grouping_time(wavelength_m: float) -> float | None:
    for low, high, grouping in _PULSE_GROUPING_S:
        if low <= wavelength_m < high or (high == 1e-3 and wavelength_m == high):
            return grouping
    return None


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


def scale_number(condition: Condition, wavelength_m: float, density: float) -> tuple[int, bool]:
    """(smallest n with density <= LBn limit, whether any eyewear needs to be rated at all)."""
    base, _quantity = lb_limit(condition, wavelength_m, 0)
    exact = math.ceil(math.log10(density / base) - _ROUNDING_SLACK)
    return max(1, exact), exact >= 1


def _requirement(condition: Condition, wavelength_m: float, density: float, quantity: str,
                 working: Working, how: str) -> LbRequirement:
    number, needed = scale_number(condition, wavelength_m, density)
    limit, _ = lb_limit(condition, wavelength_m, number)
    working.add(f"EN 207 {condition}: scale number", f"smallest n with {how} <= LBn limit", number, "",
                "EN 207 Table B.2 as restated in DGUV 203-042 section 5", density=density, LBn_limit=limit)
    return LbRequirement(condition, wavelength_m, number, density, quantity, needed, number <= LB_MAX)


def repetition_factor(wavelength_m: float, pulse_duration_s: float, prf_Hz: float,
                      working: Working) -> float:
    """Multiplier applied to one pulse's energy density for a train (DGUV 203-042 section 5.3).

    Applies in 400 nm-1 mm for pulses shorter than 0.25 s above 1 Hz. With N = prf * 5 s,
    the factor is N^(1/4) when pulses are further apart than T_i; when closer, the pulses in
    T_i are summed and counted as one, giving (prf T_i) (5 s / T_i)^(1/4).
    """
    if not (wavelength_m >= 400e-9 and pulse_duration_s < 0.25 and prf_Hz > 1.0):
        working.add("EN 207 train correction", "not applied (needs 400 nm-1 mm, t < 0.25 s, prf > 1 Hz)", 1.0)
        return 1.0
    grouping = pulse_grouping_time(wavelength_m)
    assert grouping is not None  # every wavelength from 400 nm up has a grouping time
    if 1.0 / prf_Hz > grouping:
        pulses = prf_Hz * _TRAIN_WINDOW_S
        factor = float(pulses**0.25)
        working.add("EN 207 train correction", "N^(1/4), N = prf x 5 s", factor, "",
                    "DGUV 203-042 section 5.3 case a", N=pulses, prf_Hz=prf_Hz)
        return factor
    window = min(grouping, _TRAIN_WINDOW_S)
    grouped = prf_Hz * window
    groups = max(1.0, _TRAIN_WINDOW_S / grouping)
    factor = float(grouped * groups**0.25)
    working.add("EN 207 train correction", "(prf T_i) (5 s / T_i)^(1/4): pulses within T_i summed", factor, "",
                "DGUV 203-042 section 5.3 case b; T_i of IEC 60825-1:2007 (BGI 832)",
                T_i_s=grouping, prf_Hz=prf_Hz)
    return factor


@dataclass(frozen=True)
class En207Rating:
    requirements: tuple[LbRequirement, ...]
    beam_diameter_1e_m: float
    working: Working = field(default_factory=Working)
    warnings: tuple[str, ...] = ()

    @property
    def markings(self) -> list[str]:
        return [r.marking for r in self.requirements if r.marking is not None]

    def to_dict(self) -> dict[str, object]:
        return {"markings": self.markings, "requirements": [r.to_dict() for r in self.requirements],
                "beam_diameter_1e_m": self.beam_diameter_1e_m,
                "large_beam_correction": "not applied"}


def en207_rating(wavelength_m: float, beam_diameter_1e_m: float, *, average_power_W: float | None,
                 pulse_energy_J: float | None = None, pulse_duration_s: float | None = None,
                 prf_Hz: float | None = None) -> En207Rating:
    """The EN 207 ratings a protector needs for one emission, at the beam's 1/e diameter.

    Continuous: D from P / A63. Pulsed: the letter from the pulse duration, from H = Q / A63
    (times the train correction), or for M outside 315-1400 nm from the peak power density
    Q / (t A63); repetitive lasers always also need D from the average power.
    """
    working = Working()
    warnings: list[str] = []
    working.add("EN 207: beam area", "A63 = pi d63^2 / 4", circle_area(beam_diameter_1e_m), "m^2",
                "DGUV 203-042 section 5.2", d63=beam_diameter_1e_m)
    requirements: list[LbRequirement] = []
    pulsed = pulse_energy_J is not None and pulse_duration_s is not None
    if pulsed:
        assert pulse_energy_J is not None and pulse_duration_s is not None
        condition = en207_condition(pulse_duration_s)
        if condition == "D":
            # A "pulse" longer than 0.25 s is tested as continuous emission at its own power.
            peak = peak_over_area(pulse_energy_J / pulse_duration_s, beam_diameter_1e_m)
            requirements.append(_requirement("D", wavelength_m, peak, "E", working, "E = (Q / t) / A63"))
        elif condition == "M" and en207_band(wavelength_m) != 1:
            peak = peak_over_area(pulse_energy_J / pulse_duration_s, beam_diameter_1e_m)
            requirements.append(_requirement("M", wavelength_m, peak, "E", working, "E_peak = Q / (t A63)"))
        else:
            factor = 1.0 if prf_Hz is None else repetition_factor(wavelength_m, pulse_duration_s, prf_Hz, working)
            density = peak_over_area(pulse_energy_J, beam_diameter_1e_m) * factor
            requirements.append(_requirement(condition, wavelength_m, density, "H", working,
                                             "H' = Q / A63 x train factor"))
    if average_power_W is not None and (not pulsed or prf_Hz is not None):
        density = peak_over_area(average_power_W, beam_diameter_1e_m)
        requirements.insert(0, _requirement("D", wavelength_m, density, "E", working,
                                            "E = P_avg / A63" if pulsed else "E = P / A63"))
    for requirement in requirements:
        if not requirement.within_scale:
            warnings.append(f"EN 207 {requirement.condition}: the beam needs more than LB{LB_MAX} "
                            f"(LB{requirement.scale_number}); no EN 207 eyewear is rated for it. Enclose "
                            "the beam or use other controls.")
    # DGUV 203-042 section 5.2 states the correction for d63 of 1-15 mm, yet its own Table 1 examples
    # (d63 of 23-80 mm) carry ratings above the base table, so any beam from 1 mm up is flagged.
    if wavelength_m > 315e-9 and beam_diameter_1e_m >= 1e-3 and (
            (average_power_W or 0.0) > 10.0 or any(r.quantity == "E" and r.density > 1e5 for r in requirements)):
        warnings.append("EN 207 large-beam correction (DGUV 203-042 section 5.2) may apply to this beam and was "
                        "not applied; confirm the LB number with the eyewear maker.")
    return En207Rating(tuple(requirements), beam_diameter_1e_m, working, tuple(warnings))


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
