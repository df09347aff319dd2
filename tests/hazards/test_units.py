"""Reading typed quantities and showing figures to people (no database, no Django)."""
from __future__ import annotations

import time

import pytest

from hazards.errors import InputError
from hazards.units import MAX_TEXT_LENGTH, format_for_people, format_wavelength, parse_quantity


@pytest.mark.parametrize(("value", "unit", "expected"), [
    ("532 nm", "m", 532e-9),
    ("1.064 um", "m", 1.064e-6),
    ("1.064µm", "m", 1.064e-6),
    (" 5mW ", "W", 5e-3),
    ("10 ns", "s", 10e-9),
    (".5 s", "s", 0.5),
    ("5.", "s", 5.0),
    ("-3e-2 rad", "rad", -0.03),
    ("0.5 mrad", "rad", 5e-4),
    ("1 kHz", "Hz", 1e3),
    (0.25, "s", 0.25),
    (3, "W", 3.0),
    ("7", "m", 7.0),  # a bare number in a string is in the field's unit
])
def test_quantities_are_read_in_the_field_unit(value: object, unit: str, expected: float) -> None:
    assert parse_quantity(value, field="f", unit=unit) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(("value", "unit", "message"), [
    ("5 kg", "W", "is not a power"),
    ("5 lightyear", "s", "is not a duration"),
    ("5 percent", "rad", "is not an angle"),
    ("five mW", "W", "cannot read"),
    ("5 mW extra", "W", "unknown unit"),
    ("nan", "W", "cannot read"),
    ("1e400 W", "W", "finite"),
    (True, "W", "expected a number"),
    (None, "W", "expected a number"),
    (10**401, "W", "out of range"),
    ("1" * 401, "W", "a number of 401 digits is out of range"),
    ("5" + " " * 3000 + "x", "W", f"at most {MAX_TEXT_LENGTH}"),
])
def test_unusable_quantities_name_the_field(value: object, unit: str, message: str) -> None:
    with pytest.raises(InputError) as error:
        parse_quantity(value, field="power", unit=unit)
    assert error.value.field == "power"
    assert message in error.value.message


def test_range_checks_name_the_bound() -> None:
    with pytest.raises(InputError, match="allowed from 180 nm to 1 mm"):
        parse_quantity("90 nm", field="wavelength", unit="m", minimum=180e-9, maximum=1e-3)
    with pytest.raises(InputError, match="greater than 0 W"):
        parse_quantity(0, field="power", unit="W", minimum=0.0, inclusive_minimum=False)


@pytest.mark.parametrize("text", ["5" + " " * 97 + "x", "5 " + "m*" * 48, "5 " + "(" * 97, "1" * 99 + "e"])
def test_the_longest_accepted_text_is_read_or_refused_at_once(text: str) -> None:
    # Work per character is bounded: a pathological 100-character value costs well under a second
    # even on a loaded machine (the figure, not a timing goal, is what the assertion guards).
    started = time.process_time()
    with pytest.raises(InputError):
        parse_quantity(text, field="power", unit="W")
    assert time.process_time() - started < 1.0


@pytest.mark.parametrize(("value", "unit", "expected"), [
    (707.2349, "m", "707 m"),
    (1413.7, "m", "1.41 km"),
    (1.5e6, "m", "1 500 km"),
    (0.25004, "m", "250 mm"),
    (0.0, "m", "0 m"),
    (1.98e-07, "J/m2", "198 nJ/m²"),
    (25.456, "W/m2", "25.5 W/m²"),
    (30000.0, "s", "30 000 s"),
    (0.25, "s", "250 ms"),
    (35e-15, "s", "35 fs"),
    (5e-4, "rad", "500 µrad"),
    (0.0011, "rad", "1.1 mrad"),
    (80e6, "Hz", "80 MHz"),
    (5.0, "W", "5 W"),
    (999.96, "m", "1 km"),
    (3.708, "", "3.71"),
    (12345.0, "", "12 300"),
])
def test_figures_for_people_have_three_significant_figures_and_no_exponent(value: float, unit: str,
                                                                           expected: str) -> None:
    assert format_for_people(value, unit) == expected


@pytest.mark.parametrize(("value", "high", "expected"), [
    # A wavelength names a line: never rounded to three figures (1064 nm is not "1064 nm").
    (1064e-9, None, "1064 nm"), (632.8e-9, None, "632.8 nm"), (514.5e-9, None, "514.5 nm"),
    (10.6e-6, None, "10.6 µm"), (2.94e-6, None, "2940 nm"), (1e-3, None, "1 mm"),
    (700e-9, 1000e-9, "700 nm to 1000 nm"),
])
def test_wavelengths_are_shown_as_marked(value: float, high: float | None, expected: str) -> None:
    assert format_wavelength(value, high) == expected
