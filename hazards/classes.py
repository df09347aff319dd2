"""Class plausibility: does an emission plainly exceed the accessible emission limit of its label?

This never reclassifies a product. A plain excess becomes a warning for the LSO to take up
with the manufacturer (a wrong data sheet, a wrong label, or a product modified since).

The limits are the continuous-wave accessible emission limits (AEL) of IEC 60825-1 for a
small source (C6 = 1) at the standard's time bases: 0.25 s for class 2 and visible 3R,
100 s for class 1 and invisible 3R above 400 nm, 30 000 s at and below 400 nm. The AEL
tables themselves are paid; the boundary values here are those public guidance quotes
(1 mW, 5 mW, 0.5 W, "5 x class 1", 30 mJ, 125 mJ), the class 1 formulas are from memory and
cross-checked against the MPE times the aperture area. Bands where the editions disagree
(class 1 in 1200-1400 nm) or where no value could be confirmed are not checked, and say so.
"""
from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field

from hazards.beam import fraction_through_aperture
from hazards.errors import InputError

LASER_CLASSES: tuple[str, ...] = ("1", "1C", "1M", "2", "2M", "3R", "3B", "4")

# Nominal data-sheet powers carry tolerances of this order; only an excess beyond it is "plain"
# (common practice, no source).
PLAIN_EXCESS_RATIO = 1.1

_GUIDANCE = "IEC 60825-1 boundary as quoted in public guidance (DGUV 203-042 section 2.2; university laser manuals)"
_MEMORY = "IEC 60825-1 AEL formula, from memory; cross-checked as MPE x aperture area"


def _nm(wavelength_m: float) -> float:
    # Rounded so that 700e-9 m compares as 700 nm despite binary floating point.
    return round(wavelength_m * 1e9, 6)


def _blue_light_factor(wavelength_m: float) -> float:
    # C3 (C_B): 1 below 450 nm, 10^(0.02 (lambda - 450)) from 450 to 600 nm.
    return 1.0 if _nm(wavelength_m) < 450 else 10 ** (0.02 * (_nm(wavelength_m) - 450))


def _near_infrared_factor(wavelength_m: float) -> float:
    # C4 (C_A): 10^(0.002 (lambda - 700)) from 700 to 1050 nm, 5 from 1050 to 1400 nm.
    return min(5.0, 10 ** (0.002 * (_nm(wavelength_m) - 700))) if _nm(wavelength_m) >= 700 else 1.0


def _c7(wavelength_m: float) -> float:
    # C7 (C_C): 1 up to 1150 nm, 10^(0.018 (lambda - 1150)) up to 1200 nm.
    return 1.0 if _nm(wavelength_m) <= 1150 else 10 ** (0.018 * (_nm(wavelength_m) - 1150))


def _class1_visible(wavelength_m: float) -> float:
    thermal = 3.9e-4
    if _nm(wavelength_m) < 600:
        return min(thermal, 3.9e-5 * _blue_light_factor(wavelength_m))
    return thermal


@dataclass(frozen=True)
class _AelRow:
    laser_class: str
    low_nm: float
    high_nm: float
    power_W: Callable[[float], float]
    time_base_s: float
    source: str


_CLASS1_ROWS: tuple[_AelRow, ...] = (
    _AelRow("1", 180, 302.5, lambda _w: 8e-10, 30000, _MEMORY + " (2.4e-5 J over 30 000 s)"),
    _AelRow("1", 315, 400, lambda _w: 7.9e-6, 30000, _MEMORY),
    _AelRow("1", 400, 700, _class1_visible, 100,
            "IEC 60825-1 class 1, 0.39 mW thermal and 39 uW x C3 photochemical below 600 nm; "
            "guidance quotes '40 uW blue, 400 uW red'"),
    _AelRow("1", 700, 1050, lambda w: 3.9e-4 * _near_infrared_factor(w), 100, _MEMORY + " (3.9e-4 C4 W)"),
    _AelRow("1", 1050, 1200, lambda w: 3.9e-4 * 5.0 * _c7(w), 100, _MEMORY + " (3.9e-4 C4 C7 W)"),
    _AelRow("1", 1400, 1e5, lambda _w: 1e-2, 100, _MEMORY + " (1000 W/m^2 over 3.5 mm = 9.6 mW)"),
)


def _scaled(rows: tuple[_AelRow, ...], laser_class: str, factor: float, skip_visible: bool) -> tuple[_AelRow, ...]:
    scaled: list[_AelRow] = []
    for row in rows:
        if row.high_nm <= 302.5:
            continue  # class 3R starts at 302.5 nm
        if skip_visible and row.low_nm == 400 and row.high_nm == 700:
            continue
        scaled.append(_AelRow(laser_class, row.low_nm, row.high_nm,
                              (lambda power: lambda w: factor * power(w))(row.power_W), row.time_base_s,
                              f"5 x class 1 ({row.source})"))
    return tuple(scaled)


_ROWS: tuple[_AelRow, ...] = (
    *_CLASS1_ROWS,
    _AelRow("2", 400, 700, lambda _w: 1e-3, 0.25, _GUIDANCE + ": 1 mW at 0.25 s"),
    _AelRow("3R", 400, 700, lambda _w: 5e-3, 0.25, _GUIDANCE + ": 5 mW (5 x class 2)"),
    *_scaled(_CLASS1_ROWS, "3R", 5.0, skip_visible=True),
    _AelRow("3B", 315, 1e6, lambda _w: 0.5, 0.25, _GUIDANCE + ": 0.5 W for t >= 0.25 s"),
)
# Class 1M and 2M may exceed class 1 or 2 through optical instruments but stay below 3B.
_CEILING_CLASS = {"1M": "3B", "2M": "3B"}

# Single-pulse energy limits of class 3B that guidance quotes (UNC Chapel Hill Laser Safety Manual
# ch. 3; UNC Asheville): 30 mJ in 400-700 nm, 125 mJ in 315-400 nm and 1400 nm-1 mm.
_CLASS3B_PULSE_J: tuple[tuple[float, float, float], ...] = ((400, 700, 0.03), (315, 400, 0.125), (1400, 1e6, 0.125))


def _measurement_aperture(wavelength_m: float) -> float:
    # Unaided-eye measurement aperture (IEC 60825-1 condition 3, from memory): 1 mm in the UV,
    # 7 mm in 400-1400 nm, 3.5 mm to 0.1 mm (long time bases), 11 mm beyond.
    nm = _nm(wavelength_m)
    if nm < 400:
        return 1e-3
    if nm <= 1400:
        return 7e-3
    if nm <= 1e5:
        return 3.5e-3
    return 11e-3


@dataclass(frozen=True)
class ClassComparison:
    limit_class: str
    quantity: str  # "average power" or "pulse energy"
    accessible: float
    limit: float
    unit: str
    time_base_s: float | None
    source: str

    @property
    def ratio(self) -> float:
        return self.accessible / self.limit

    def to_dict(self) -> dict[str, object]:
        return {"limit_class": self.limit_class, "quantity": self.quantity, "accessible": self.accessible,
                "limit": self.limit, "unit": self.unit, "ratio": self.ratio, "time_base_s": self.time_base_s,
                "source": self.source}


@dataclass(frozen=True)
class ClassCheck:
    labelled_class: str
    comparisons: tuple[ClassComparison, ...] = ()
    warnings: tuple[str, ...] = ()
    notes: tuple[str, ...] = field(default_factory=tuple)

    def to_dict(self) -> dict[str, object]:
        return {"labelled_class": self.labelled_class, "comparisons": [c.to_dict() for c in self.comparisons],
                "warnings": list(self.warnings), "notes": list(self.notes)}


def normalise_class(text: object, *, field_name: str = "laser_class") -> str:
    label = str(text).strip().upper().removeprefix("CLASS").strip()
    if label not in LASER_CLASSES:
        raise InputError(field_name, f"unknown laser class {text!r}; one of {', '.join(LASER_CLASSES)}")
    return label


def check_class(labelled_class: str, wavelength_m: float, beam_diameter_1e_m: float, *,
                average_power_W: float | None, pulse_energy_J: float | None = None,
                pulse_duration_s: float | None = None) -> ClassCheck:
    """Compare the accessible emission with the AELs of ``labelled_class`` (see the module docstring).

    The accessible emission is the share of the output through the measurement aperture at the
    exit. A warning is raised only beyond PLAIN_EXCESS_RATIO times the limit.
    """
    label = normalise_class(labelled_class)
    if label in ("4", "1C"):
        return ClassCheck(label, notes=(f"class {label} has no upper emission limit to compare with",))
    limit_class = _CEILING_CLASS.get(label, label)
    nm = _nm(wavelength_m)
    notes: list[str] = []
    if label in _CEILING_CLASS:
        notes.append(f"class {label}: only the class 3B ceiling is checked (the optical-instrument "
                     "conditions are not modelled)")
    if label in ("2", "2M") and not 400 <= nm <= 700:
        return ClassCheck(label, warnings=(
            f"Labelled class {label} but the wavelength {nm:.0f} nm is outside 400-700 nm, where class "
            f"{label} exists; confirm the class with the manufacturer.",), notes=tuple(notes))
    fraction = fraction_through_aperture(beam_diameter_1e_m, _measurement_aperture(wavelength_m))
    comparisons: list[ClassComparison] = []
    rows = [row for row in _ROWS if row.laser_class == limit_class and row.low_nm <= nm <= row.high_nm]
    if average_power_W is not None and rows:
        # At a band edge shared by two rows the higher limit is used: the warning must be a plain one.
        row = max(rows, key=lambda candidate: candidate.power_W(wavelength_m))
        comparisons.append(ClassComparison(limit_class, "average power", average_power_W * fraction,
                                           row.power_W(wavelength_m), "W", row.time_base_s, row.source))
    elif average_power_W is not None:
        notes.append(f"no class {limit_class} continuous-wave limit is held for {nm:.1f} nm; not checked")
    if limit_class == "3B" and pulse_energy_J is not None and pulse_duration_s is not None and pulse_duration_s < 0.25:
        for low, high, energy in _CLASS3B_PULSE_J:
            if low <= nm <= high:
                comparisons.append(ClassComparison("3B", "pulse energy", pulse_energy_J * fraction, energy, "J",
                                                   None, "class 3B single-pulse limit quoted in university "
                                                   "laser safety manuals (UNC Chapel Hill ch. 3)"))
                break
    warnings = tuple(
        f"The emission ({c.quantity} {c.accessible:.3g} {c.unit} through the measurement aperture) is "
        f"{c.ratio:.3g} times the class {c.limit_class} limit ({c.limit:.3g} {c.unit}"
        + (f", time base {c.time_base_s:g} s" if c.time_base_s is not None else "")
        + f") for a product labelled class {label}. Confirm the class and the data sheet with the "
        "manufacturer; the label is not changed here."
        for c in comparisons if c.ratio > PLAIN_EXCESS_RATIO and math.isfinite(c.ratio))
    return ClassCheck(label, tuple(comparisons), warnings, tuple(notes))
