"""Class plausibility: does an emission plainly exceed the accessible emission limit of its label?

This never reclassifies a product. A plain excess becomes a warning for the LSO to take up
with the manufacturer (a wrong data sheet, a wrong label, or a product modified since).

The accessible emission is measured as IEC 60825-1 does (from memory): condition 3, the
unaided eye, as the share of the output through the measurement aperture at the exit (7 mm
in 400-1400 nm, 1 mm in the ultraviolet, 3.5 mm beyond 1400 nm); condition 1, a collecting
optic, as the share through a 50 mm aperture (25 mm in 302.5-400 nm and 1400-4000 nm) at
2 m, where such optics transmit. Classes 1, 2 and 3R must meet their limit under both
conditions (a product beyond it under condition 1 only is at least 1M or 2M); 1M and 2M
must meet the class 1 or 2 limit under condition 3; class 3B its own limit under condition 3.

Limits: the continuous-wave accessible emission limits (AEL) for a small source (C6 = 1) at
the standard's time bases (0.25 s for class 2 and visible 3R, 100 s for class 1 and invisible
3R above 400 nm, 30 000 s at and below 400 nm), whose boundary values public guidance quotes
(1 mW, 5 mW, 0.5 W, "5 x class 1", 30 mJ, 125 mJ); the class 1 formulas are from memory and
cross-checked against the MPE times the aperture area. For pulses shorter than 0.25 s, the
single-pulse AEL of class 1 (and of class 2, which equals it there) is the ICNIRP 2013
single-pulse eye MPE times the area of its limiting aperture, the relation the AEL tables
follow for a small source (from memory); class 3R allows five times that. Bands where the
editions disagree (class 1 in 1200-1400 nm) or no value could be confirmed are not checked,
and say so.
"""
from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike, NDArray

from hazards.beam import FloatArray, beam_diameter_at, circle_area, fraction_through_aperture
from hazards.distances import condition_1_aperture
from hazards.errors import InputError
from hazards.limits import exposure_limit

LASER_CLASSES: tuple[str, ...] = ("1", "1C", "1M", "2", "2M", "3R", "3B", "4")

# Nominal data-sheet powers carry tolerances of this order; only an excess beyond it is "plain"
# (common practice, no source).
PLAIN_EXCESS_RATIO = 1.1

# Condition 1 measures at this distance from the exit (IEC 60825-1, from memory).
CONDITION_1_DISTANCE_M = 2.0
# The limit set the single-pulse AELs are derived from: the one IEC 60825-1:2014 follows.
_PULSE_AEL_LIMITS = "icnirp2013"
_SINGLE_PULSE_BELOW_S = 0.25

_GUIDANCE = "IEC 60825-1 boundary as quoted in public guidance (DGUV 203-042 section 2.2; university laser manuals)"
_MEMORY = "IEC 60825-1 AEL formula, from memory; cross-checked as MPE x aperture area"
_PULSE_SOURCE = ("single-pulse AEL as the ICNIRP 2013 single-pulse eye MPE x the area of its limiting aperture "
                 "(the relation IEC 60825-1 AELs follow for a small source; from memory)")


def _nm(wavelength_m: ArrayLike) -> FloatArray:
    # Rounded so that 700e-9 m compares as 700 nm despite binary floating point.
    return np.round(np.asarray(wavelength_m, dtype=np.float64) * 1e9, 6)


def _blue_light_factor(nm: FloatArray) -> FloatArray:
    # C3 (C_B): 1 below 450 nm, 10^(0.02 (lambda - 450)) from 450 to 600 nm.
    return np.where(nm < 450, 1.0, 10 ** (0.02 * (nm - 450)))


def _near_infrared_factor(nm: FloatArray) -> FloatArray:
    # C4 (C_A): 10^(0.002 (lambda - 700)) from 700 to 1050 nm, 5 from 1050 to 1400 nm.
    return np.where(nm >= 700, np.minimum(5.0, 10 ** (0.002 * (nm - 700))), 1.0)


def _c7(nm: FloatArray) -> FloatArray:
    # C7 (C_C): 1 up to 1150 nm, 10^(0.018 (lambda - 1150)) up to 1200 nm.
    return np.where(nm <= 1150, 1.0, 10 ** (0.018 * (nm - 1150)))


@dataclass(frozen=True)
class _AelRow:
    laser_class: str
    low_nm: float
    high_nm: float
    power_W: Callable[[FloatArray], FloatArray]
    time_base_s: float
    source: str


_CLASS1_ROWS: tuple[_AelRow, ...] = (
    _AelRow("1", 180, 302.5, lambda nm: np.full(nm.shape, 8e-10), 30000, _MEMORY + " (2.4e-5 J over 30 000 s)"),
    _AelRow("1", 315, 400, lambda nm: np.full(nm.shape, 7.9e-6), 30000, _MEMORY),
    _AelRow("1", 400, 700, lambda nm: np.where(nm < 600, np.minimum(3.9e-4, 3.9e-5 * _blue_light_factor(nm)), 3.9e-4),
            100, "IEC 60825-1 class 1, 0.39 mW thermal and 39 uW x C3 photochemical below 600 nm; "
            "guidance quotes '40 uW blue, 400 uW red'"),
    _AelRow("1", 700, 1050, lambda nm: 3.9e-4 * _near_infrared_factor(nm), 100, _MEMORY + " (3.9e-4 C4 W)"),
    _AelRow("1", 1050, 1200, lambda nm: 3.9e-4 * 5.0 * _c7(nm), 100, _MEMORY + " (3.9e-4 C4 C7 W)"),
    _AelRow("1", 1400, 1e5, lambda nm: np.full(nm.shape, 1e-2), 100, _MEMORY + " (1000 W/m^2 over 3.5 mm = 9.6 mW)"),
)


def _scaled(rows: tuple[_AelRow, ...], laser_class: str, factor: float, skip_visible: bool) -> tuple[_AelRow, ...]:
    scaled: list[_AelRow] = []
    for row in rows:
        if row.high_nm <= 302.5:
            continue  # class 3R starts at 302.5 nm
        if skip_visible and row.low_nm == 400 and row.high_nm == 700:
            continue
        scaled.append(_AelRow(laser_class, row.low_nm, row.high_nm,
                              (lambda power: lambda nm: factor * power(nm))(row.power_W), row.time_base_s,
                              f"5 x class 1 ({row.source})"))
    return tuple(scaled)


_ROWS: tuple[_AelRow, ...] = (
    *_CLASS1_ROWS,
    _AelRow("2", 400, 700, lambda nm: np.full(nm.shape, 1e-3), 0.25, _GUIDANCE + ": 1 mW at 0.25 s"),
    _AelRow("3R", 400, 700, lambda nm: np.full(nm.shape, 5e-3), 0.25, _GUIDANCE + ": 5 mW (5 x class 2)"),
    *_scaled(_CLASS1_ROWS, "3R", 5.0, skip_visible=True),
    _AelRow("3B", 315, 1e6, lambda nm: np.full(nm.shape, 0.5), 0.25, _GUIDANCE + ": 0.5 W for t >= 0.25 s"),
)
# The limit each label is held to under condition 3, and whether condition 1 applies as well.
_LIMIT_CLASS = {"1": "1", "2": "2", "3R": "3R", "3B": "3B", "1M": "1", "2M": "2"}
_CONDITION_1_CLASSES = frozenset({"1", "2", "3R"})
_PULSE_AEL_FACTOR = {"1": 1.0, "2": 1.0, "3R": 5.0}
# Class 1 AELs of 1200-1400 nm differ by about 30 x between IEC 60825-1:2007 and :2014 (C7).
_UNCHECKED_NM = (1200.0, 1400.0)

# Single-pulse energy limits of class 3B that guidance quotes (UNC Chapel Hill Laser Safety Manual
# ch. 3; UNC Asheville): 30 mJ in 400-700 nm, 125 mJ in 315-400 nm and 1400 nm-1 mm.
_CLASS3B_PULSE_J: tuple[tuple[float, float, float], ...] = ((400, 700, 0.03), (315, 400, 0.125), (1400, 1e6, 0.125))


def measurement_aperture(wavelength_m: ArrayLike) -> FloatArray:
    """Condition 3 (unaided eye) measurement aperture, IEC 60825-1 (from memory): 1 mm in the
    ultraviolet, 7 mm in 400-1400 nm, 3.5 mm to 0.1 mm (long time bases), 11 mm beyond."""
    nm = _nm(wavelength_m)
    return np.select([nm < 400, nm <= 1400, nm <= 1e5], [1e-3, 7e-3, 3.5e-3], 11e-3)


@dataclass(frozen=True)
class ClassComparison:
    limit_class: str
    quantity: str  # "average power" or "pulse energy"
    condition: str  # "condition 3 (unaided eye)" or "condition 1 (collecting optics)"
    accessible: float
    limit: float
    unit: str
    time_base_s: float | None
    source: str

    @property
    def ratio(self) -> float:
        return self.accessible / self.limit

    def to_dict(self) -> dict[str, object]:
        return {"limit_class": self.limit_class, "quantity": self.quantity, "condition": self.condition,
                "accessible": self.accessible, "limit": self.limit, "unit": self.unit, "ratio": self.ratio,
                "time_base_s": self.time_base_s, "source": self.source}


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


@dataclass(frozen=True)
class _Measured:
    """One kind of comparison for every emission: what is accessible, and the limit (NaN: not compared)."""

    quantity: str
    condition: str
    unit: str
    accessible: FloatArray
    limit: FloatArray
    limit_class: NDArray[np.str_]
    time_base_s: FloatArray
    source: NDArray[np.str_]


@dataclass(frozen=True)
class ClassChecks:
    """The class plausibility of many emissions; ``check_at(i)`` is one emission's ClassCheck (None: no label)."""

    labels: tuple[str | None, ...]
    wavelength_nm: FloatArray
    measured: tuple[_Measured, ...]

    def check_at(self, index: int) -> ClassCheck | None:
        label = self.labels[index]
        if label is None:
            return None
        nm = float(self.wavelength_nm[index])
        if label in ("4", "1C"):
            return ClassCheck(label, notes=(f"class {label} has no upper emission limit to compare with",))
        notes: list[str] = []
        if label in ("2", "2M") and not 400 <= nm <= 700:
            return ClassCheck(label, warnings=(
                f"Labelled class {label} but the wavelength {nm:.0f} nm is outside 400-700 nm, where class "
                f"{label} exists; confirm the class with the manufacturer.",))
        if label in ("1M", "2M"):
            notes.append(f"class {label}: checked against the class {label[0]} limit for the unaided eye "
                         "(condition 3); what optical instruments gather is allowed to exceed it")
        comparisons: list[ClassComparison] = []
        for kind in self.measured:
            limit = float(kind.limit[index])
            if not math.isfinite(limit):
                continue
            base = float(kind.time_base_s[index])
            comparisons.append(ClassComparison(str(kind.limit_class[index]), kind.quantity, kind.condition,
                                               float(kind.accessible[index]), limit, kind.unit,
                                               base if math.isfinite(base) else None, str(kind.source[index])))
        if not comparisons and label != "3B":
            notes.append(f"no class {_LIMIT_CLASS[label]} limit is held for {nm:.1f} nm; not checked")
        warnings = tuple(_warning(comparison, label) for comparison in comparisons
                         if comparison.ratio > PLAIN_EXCESS_RATIO and math.isfinite(comparison.ratio))
        return ClassCheck(label, tuple(comparisons), warnings, tuple(notes))


def _warning(comparison: ClassComparison, label: str) -> str:
    only_with_optics = comparison.condition.startswith("condition 1") and label in ("1", "2")
    return (f"The emission ({comparison.quantity} {comparison.accessible:.3g} {comparison.unit} through the "
            f"{comparison.condition} aperture) is {comparison.ratio:.3g} times the class {comparison.limit_class} limit "
            f"({comparison.limit:.3g} {comparison.unit}"
            + (f", time base {comparison.time_base_s:g} s" if comparison.time_base_s is not None else "")
            + f") for a product labelled class {label}."
            + (f" Through binoculars or a telescope it is at least class {label}M." if only_with_optics else "")
            + " Confirm the class and the data sheet with the manufacturer; the label is not changed here.")


def check_classes(labels: Sequence[str | None], wavelength_m: ArrayLike, beam_diameter_1e_m: ArrayLike,
                  divergence_1e_rad: ArrayLike, *, average_power_W: ArrayLike, pulse_energy_J: ArrayLike,
                  pulse_duration_s: ArrayLike) -> ClassChecks:
    """Compare each emission's accessible emission with the AELs of its label (see the module docstring).

    NaN stands for a figure not given; a label of None is not checked. A warning is raised only
    beyond PLAIN_EXCESS_RATIO times the limit.
    """
    names = tuple(None if label is None else normalise_class(label) for label in labels)
    wavelength, diameter, divergence, power, energy, duration = np.broadcast_arrays(
        *(np.asarray(value, dtype=np.float64) for value in (wavelength_m, beam_diameter_1e_m, divergence_1e_rad,
                                                            average_power_W, pulse_energy_J, pulse_duration_s)))
    wavelength, diameter, divergence, power, energy, duration = (
        array.reshape(-1) for array in (wavelength, diameter, divergence, power, energy, duration))
    nm = _nm(wavelength)
    held = np.array([label if label in _LIMIT_CLASS else "" for label in names])
    limit_class = np.array([_LIMIT_CLASS.get(label or "", "") for label in names])
    both_conditions = np.isin(held, list(_CONDITION_1_CLASSES))
    unaided = fraction_through_aperture(diameter, measurement_aperture(wavelength))
    collecting = condition_1_aperture(wavelength)
    with np.errstate(invalid="ignore"):
        gathered = fraction_through_aperture(beam_diameter_at(CONDITION_1_DISTANCE_M, diameter, divergence), collecting)
    cw_limit, time_base, cw_source = _cw_limits(limit_class, nm)
    pulse_limit, pulse_source = _single_pulse_limits(limit_class, wavelength, duration, energy)
    nowhere = np.full(nm.shape, np.nan)
    measured = (
        _Measured("average power", "condition 3 (unaided eye)", "W", power * unaided,
                  np.where(np.isfinite(power), cw_limit, np.nan), limit_class, time_base, cw_source),
        _Measured("average power", "condition 1 (collecting optics)", "W", power * gathered,
                  np.where(np.isfinite(power) & both_conditions & np.isfinite(gathered), cw_limit, np.nan),
                  limit_class, time_base, cw_source),
        _Measured("pulse energy", "condition 3 (unaided eye)", "J", energy * unaided, pulse_limit, limit_class,
                  nowhere, pulse_source),
        _Measured("pulse energy", "condition 1 (collecting optics)", "J", energy * gathered,
                  np.where(both_conditions & np.isfinite(gathered), pulse_limit, np.nan), limit_class, nowhere,
                  pulse_source),
    )
    return ClassChecks(labels=names, wavelength_nm=nm, measured=measured)


def _cw_limits(limit_class: NDArray[np.str_], nm: FloatArray) -> tuple[FloatArray, FloatArray, NDArray[np.str_]]:
    """The continuous-wave AEL of each emission's limit class (NaN where none is held).

    At a band edge shared by two rows the higher limit is used: the warning must be a plain one.
    """
    limit = np.full(nm.shape, np.nan)
    time_base = np.full(nm.shape, np.nan)
    source = np.full(nm.shape, "", dtype=object)
    for row in _ROWS:
        inside = (limit_class == row.laser_class) & (nm >= row.low_nm) & (nm <= row.high_nm)
        if not inside.any():
            continue
        value = row.power_W(nm)
        better = inside & ~(value <= limit)  # NaN (nothing yet) or a lower limit is replaced
        limit = np.where(better, value, limit)
        time_base = np.where(better, row.time_base_s, time_base)
        source = np.where(better, row.source, source)
    return limit, time_base, source.astype(str)


def _single_pulse_limits(limit_class: NDArray[np.str_], wavelength: FloatArray, duration: FloatArray,
                         energy: FloatArray) -> tuple[FloatArray, NDArray[np.str_]]:
    """The single-pulse AEL (J) of each pulsed emission's limit class (NaN where none is compared)."""
    nm = _nm(wavelength)
    limit = np.full(nm.shape, np.nan)
    source = np.full(nm.shape, "", dtype=object)
    factor = np.array([_PULSE_AEL_FACTOR.get(name, np.nan) for name in limit_class])
    checked = (np.isfinite(energy) & (duration < _SINGLE_PULSE_BELOW_S) & np.isfinite(factor)
               & ~((nm > _UNCHECKED_NM[0]) & (nm < _UNCHECKED_NM[1])) & ~((limit_class == "2") & ((nm < 400) | (nm > 700))))
    chosen = np.flatnonzero(checked)
    if chosen.size:
        mpe = exposure_limit(wavelength[chosen], duration[chosen], limits=_PULSE_AEL_LIMITS)
        through_aperture = np.nanmin(np.stack([group.radiant_exposure_J_m2 * circle_area(group.aperture_m)
                                               for group in mpe.by_aperture.values()]), axis=0)
        limit[chosen] = factor[chosen] * through_aperture
        source[chosen] = np.where(factor[chosen] > 1, "5 x class 1, " + _PULSE_SOURCE, _PULSE_SOURCE)
    is_3b = np.flatnonzero((limit_class == "3B") & np.isfinite(energy) & (duration < _SINGLE_PULSE_BELOW_S))
    for low, high, value in _CLASS3B_PULSE_J:
        inside = is_3b[(nm[is_3b] >= low) & (nm[is_3b] <= high) & np.isnan(limit[is_3b])]
        limit[inside] = value
        source[inside] = "class 3B single-pulse limit quoted in university laser safety manuals (UNC Chapel Hill ch. 3)"
    return limit, source.astype(str)


def check_class(labelled_class: str, wavelength_m: float, beam_diameter_1e_m: float, *,
                average_power_W: float | None, pulse_energy_J: float | None = None,
                pulse_duration_s: float | None = None, divergence_1e_rad: float = 0.0) -> ClassCheck:
    """The class plausibility of one emission (check_classes of one); a divergence of 0 is the worst case."""
    def given(value: float | None) -> float:
        return np.nan if value is None else value

    check = check_classes([labelled_class], wavelength_m, beam_diameter_1e_m, divergence_1e_rad,
                          average_power_W=given(average_power_W), pulse_energy_J=given(pulse_energy_J),
                          pulse_duration_s=given(pulse_duration_s)).check_at(0)
    assert check is not None  # a label was given
    return check
