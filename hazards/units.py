"""Reading physical quantities typed by people ("5 mW", "1.064 um", 0.25).

pint is used only here, at the edge; the engine works on SI floats. There is one unit
registry for the whole process.
"""
from __future__ import annotations

import math
import re
from functools import lru_cache

import pint

from hazards.errors import InputError

ureg: pint.UnitRegistry[float] = pint.UnitRegistry()
# Quantities unpickled elsewhere in the process then belong to this same registry.
pint.set_application_registry(ureg)  # type: ignore[no-untyped-call]

# A quantity, a marking or a unit a person types is never longer than this; anything longer is
# refused before any parsing, so that no input can make the parser work for long.
MAX_TEXT_LENGTH = 100

# The leading number of "5 mW", "1.064um", "-3e-2 rad". Possessive quantifiers: every piece
# matches one way only, so a failed match never backtracks.
_NUMBER = re.compile(r"[-+]?+(?:\d++(?:\.\d*+)?+|\.\d++)(?:[eE][-+]?+\d++)?+")


@lru_cache(maxsize=256)
def _unit(text: str) -> pint.Unit:
    # Micro signs typed in several ways all mean micro.
    return ureg.Unit(text.replace("µ", "u").replace("μ", "u"))


def parse_quantity(
    value: object,
    *,
    field: str,
    unit: str,
    minimum: float | None = None,
    maximum: float | None = None,
    inclusive_minimum: bool = True,
) -> float:
    """Return ``value`` as a float in ``unit`` (an SI unit such as "m", "s", "W").

    ``value`` is a number, taken to be in ``unit`` already, or a string with its own
    unit ("532 nm", "10ns", "1.5 mrad"); a bare number in a string is taken to be in
    ``unit``. Raises InputError naming ``field`` for an unreadable value, a unit of the
    wrong dimension, a non-finite value or one outside [minimum, maximum].
    """
    if isinstance(value, bool):
        raise InputError(field, f"expected a number in {unit} or a value with units, got {value!r}")
    if isinstance(value, (int, float)):
        try:
            magnitude = float(value)
        except OverflowError:  # an int of hundreds of digits
            raise InputError(field, f"{_abridged(value)} is out of range") from None
    elif isinstance(value, str):
        magnitude = _from_text(value, field=field, unit=unit)
    else:
        raise InputError(field, f"expected a number in {unit} or a value with units, got {value!r}")
    if not math.isfinite(magnitude):
        raise InputError(field, f"must be a finite number, got {value!r}")
    _check_range(magnitude, value, field=field, unit=unit, minimum=minimum, maximum=maximum,
                 inclusive_minimum=inclusive_minimum)
    return magnitude


def bounded_text(text: str, *, field: str) -> str:
    """``text`` without surrounding whitespace; InputError naming ``field`` if it is too long to be a value."""
    if len(text) > MAX_TEXT_LENGTH:
        if text.strip().lstrip("+-").isdigit():
            raise InputError(field, f"a number of {len(text.strip().lstrip('+-'))} digits is out of range")
        raise InputError(field, f"is {len(text)} characters long; a value is at most {MAX_TEXT_LENGTH}")
    return text.strip()


def _abridged(value: object) -> str:
    text = repr(value)
    return text if len(text) <= 40 else f"{text[:20]}...{text[-10:]} ({len(text)} characters)"


def _from_text(text: str, *, field: str, unit: str) -> float:
    text = bounded_text(text, field=field)
    match = _NUMBER.match(text)
    if match is None:
        raise InputError(field, f"cannot read {text!r} as a number with a unit (for example '5 {unit}')")
    number, unit_text = float(match.group()), text[match.end():].strip()
    if not unit_text:
        return number
    # pint parses unit text with Python's tokenizer and evaluator, which fail on arbitrary
    # text in open-ended ways (TokenError on "m)", ZeroDivisionError on "m/0", ...); any
    # failure here means the text is not a unit.
    try:
        given = _unit(unit_text)
    except Exception:  # noqa: BLE001
        raise InputError(field, f"unknown unit {unit_text!r} in {text!r}") from None
    # Same root units, not only the same dimension: pint counts angles and percentages alike as
    # dimensionless, and would take "5 percent" as an angle or "5 rad/s" as a repetition rate.
    if _root_units(given) != _root_units(unit):
        raise InputError(
            field, f"{text!r} is not {_with_article(_dimension_name(unit))} (expected a value in {unit} or compatible units)"
        )
    return float(ureg.Quantity(number, given).to(unit).magnitude)


@lru_cache(maxsize=256)
def _root_units(unit: pint.Unit | str) -> pint.Unit:
    return ureg.get_root_units(unit)[1]


def _with_article(noun: str) -> str:
    return f"{'an' if noun[0] in 'aeiou' else 'a'} {noun}"


def _dimension_name(unit: str) -> str:
    names = {"m": "length", "s": "duration", "W": "power", "J": "energy", "rad": "angle",
             "Hz": "frequency", "J/m**2": "radiant exposure", "W/m**2": "irradiance"}
    return names.get(unit, f"quantity in {unit}")


def _check_range(
    magnitude: float,
    original: object,
    *,
    field: str,
    unit: str,
    minimum: float | None,
    maximum: float | None,
    inclusive_minimum: bool,
) -> None:
    too_low = minimum is not None and (magnitude < minimum if inclusive_minimum else magnitude <= minimum)
    too_high = maximum is not None and magnitude > maximum
    if not (too_low or too_high):
        return
    if minimum is not None and maximum is not None:
        allowed = f"from {format_si(minimum, unit)} to {format_si(maximum, unit)}"
    elif minimum is not None:
        allowed = f"{'at least' if inclusive_minimum else 'greater than'} {format_si(minimum, unit)}"
    else:
        allowed = f"at most {format_si(maximum, unit)}"  # type: ignore[arg-type]
    raise InputError(field, f"{_abridged(original)} is out of range: allowed {allowed}")


_PREFIXES = ((1e-15, "f"), (1e-12, "p"), (1e-9, "n"), (1e-6, "µ"), (1e-3, "m"), (1.0, ""), (1e3, "k"),
             (1e6, "M"), (1e9, "G"))


def format_si(value: float, unit: str, digits: int = 4) -> str:
    """Format an SI value with a metric prefix: format_si(5.32e-7, "m") -> "532 nm"."""
    if value == 0 or not math.isfinite(value) or unit not in {"m", "s", "W", "J", "rad", "Hz"}:
        return f"{value:.{digits}g} {unit}"
    # Rounded first, so that 999.96 m at 4 digits reads "1 km" rather than "1000 m" or "1e+03 m".
    value = float(f"{value:.{digits}g}")
    scale, prefix = _PREFIXES[0]
    for candidate_scale, candidate_prefix in _PREFIXES:
        if abs(value) >= candidate_scale * 0.9999999:
            scale, prefix = candidate_scale, candidate_prefix
    return f"{value / scale:.{digits}g} {prefix}{unit}"


def format_for_input(value: float, unit: str, *, display_unit: str | None = None, digits: int = 15) -> str:
    """Show an SI value the way a person types it back: "532 nm", "2.3 mm", "0.5 mrad".

    ``display_unit`` fixes the unit shown (divergences read best in mrad whatever their
    size); without it a metric prefix is chosen as in format_si. Fifteen significant
    digits mean that reading the text back with parse_quantity returns the stored float
    to within rounding noise, so a form saved unchanged does not alter the value.
    """
    if display_unit is None:
        return format_si(value, unit, digits=digits)
    scale = float(ureg.Quantity(1.0, _unit(display_unit)).to(unit).magnitude)
    return f"{value / scale:.{digits}g} {display_unit}"


# Prefixes a person reads without effort, per unit: lengths stop at km, durations at s (a
# "ks" is read as nothing at all); beyond the largest, whole numbers are grouped in thousands.
_PEOPLE_PREFIXES: dict[str, tuple[tuple[float, str], ...]] = {
    "m": ((1e-9, "n"), (1e-6, "µ"), (1e-3, "m"), (1.0, ""), (1e3, "k")),
    "s": ((1e-15, "f"), (1e-12, "p"), (1e-9, "n"), (1e-6, "µ"), (1e-3, "m"), (1.0, "")),
    "rad": ((1e-6, "µ"), (1e-3, "m"), (1.0, "")),
}
_PEOPLE_DEFAULT_PREFIXES = ((1e-15, "f"), (1e-12, "p"), (1e-9, "n"), (1e-6, "µ"), (1e-3, "m"), (1.0, ""),
                            (1e3, "k"), (1e6, "M"), (1e9, "G"))
_SUPERSCRIPTS = {"m2": "m²", "m**2": "m²", "cm2": "cm²"}


def format_for_people(value: float, unit: str) -> str:
    """A figure as a person reads it: three significant figures and a metric prefix, never an exponent.

    format_for_people(707.2349, "m") -> "707 m"; (1.98e-07, "J/m2") -> "198 nJ/m²";
    (30000, "s") -> "30 000 s"; (0.0005, "rad") -> "500 µrad". The prefix goes on the unit
    before any "/"; a unit without prefixes ("" for a plain number) gets none.
    """
    numerator, slash, rest = unit.partition("/")
    shown_unit = numerator + slash + _SUPERSCRIPTS.get(rest, rest)
    if not math.isfinite(value):
        return f"{value} {shown_unit}".strip()
    rounded = float(f"{value:.3g}")
    if rounded == 0 or numerator not in {"m", "s", "W", "J", "rad", "Hz"}:
        return f"{_three_figures(rounded)} {shown_unit}".strip()
    prefixes = _PEOPLE_PREFIXES.get(numerator, _PEOPLE_DEFAULT_PREFIXES)
    scale, prefix = prefixes[0]
    for candidate_scale, candidate_prefix in prefixes:
        if abs(rounded) >= candidate_scale * 0.9999999:
            scale, prefix = candidate_scale, candidate_prefix
    return f"{_three_figures(rounded / scale)} {prefix}{shown_unit}"


def _three_figures(value: float) -> str:
    """Three significant figures in plain notation; thousands grouped with a space ("30 000")."""
    rounded = float(f"{value:.3g}")
    if abs(rounded) >= 1000:
        return f"{rounded:,.0f}".replace(",", " ")
    decimals = max(0, 2 - math.floor(math.log10(abs(rounded)))) if rounded else 0
    return f"{rounded:.{decimals}f}".rstrip("0").rstrip(".") if decimals else f"{rounded:.0f}"


def format_wavelength(value_m: float, high_m: float | None = None) -> str:
    """A wavelength, or a range, as data sheets and markings write it: "1064 nm", "632.8 nm", "10.6 µm".

    A wavelength names a line rather than a measured figure, so it is never rounded to three
    significant figures ("1064 nm" must not read "1.06 µm"): nanometres with at most one decimal
    below 10 µm, micrometres with at most two beyond, millimetres from 1 mm.
    """
    def one(value: float) -> str:
        if value < 10e-6:
            return f"{_trimmed(value * 1e9, 1)} nm"
        if value < 1e-3:
            return f"{_trimmed(value * 1e6, 2)} µm"
        return f"{_trimmed(value * 1e3, 3)} mm"

    return one(value_m) if high_m is None else f"{one(value_m)} to {one(high_m)}"


def _trimmed(value: float, decimals: int) -> str:
    return f"{value:.{decimals}f}".rstrip("0").rstrip(".")
