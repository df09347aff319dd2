"""Class plausibility against the accessible emission limits that public guidance quotes."""
from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from hazards.classes import check_class, normalise_class
from hazards.errors import InputError

SMALL_BEAM = 1e-3  # 1/e diameter well inside every measurement aperture


@pytest.mark.parametrize(("label", "wavelength", "power", "warns"), [
    # class 2: 1 mW, 400-700 nm, time base 0.25 s (DGUV 203-042 section 2.2: "maximal 1 mW ... Zeitbasis von 0,25 s")
    ("2", 532e-9, 0.9e-3, False),
    ("2", 532e-9, 1.0e-3, False),
    ("2", 532e-9, 5e-3, True),
    # class 3R: 5 mW in the visible (5 x class 2), IEC 60825-1 as quoted in university laser manuals
    ("3R", 635e-9, 4.9e-3, False),
    ("3R", 635e-9, 20e-3, True),
    ("3R", 700e-9, 5e-3, False),  # band edge: the visible 5 mW applies up to 700 nm inclusive
    ("1", 400e-9, 39e-6, False),  # band edge: the 400-700 nm row, not the UV-A one
    # class 3B: 0.5 W CW from 315 nm to the far infrared (UNC Asheville laser safety page)
    ("3B", 1064e-9, 0.4, False),
    ("3B", 10.6e-6, 0.5, False),
    ("3B", 1064e-9, 2.0, True),
    # class 1: "400 uW red" / "40 uW blue" of guidance; 0.39 mW thermal at 650 nm, 39 uW at 405 nm
    ("1", 650e-9, 0.35e-3, False),
    ("1", 650e-9, 1e-3, True),
    ("1", 405e-9, 30e-6, False),
    ("1", 405e-9, 0.2e-3, True),
    # class 1 at 1064 nm: 3.9e-4 x C4 (= 5) = 1.95 mW (IEC 60825-1 formula, from memory)
    ("1", 1064e-9, 1.5e-3, False),
    ("1", 1064e-9, 10e-3, True),
    # class 1M / 2M must meet the class 1 / 2 limit for the unaided eye (condition 3, IEC 60825-1, from memory):
    # 0.39 mW x C4 = 0.78 mW at 850 nm; 1 mW at 532 nm
    ("1M", 850e-9, 0.5e-3, False),
    ("1M", 850e-9, 0.1, True),
    ("2M", 532e-9, 1.0, True),
    ("4", 1064e-9, 1000.0, False),
])
def test_a_plain_excess_over_the_labelled_class_warns(label: str, wavelength: float, power: float,
                                                      warns: bool) -> None:
    result = check_class(label, wavelength, SMALL_BEAM, average_power_W=power)
    assert bool(result.warnings) == warns
    if warns:
        assert "manufacturer" in result.warnings[0]
        assert result.labelled_class == normalise_class(label)  # never reclassified


def test_a_10_percent_tolerance_separates_plain_excess_from_rounding() -> None:
    # 1.05 mW on a 1 mW class 2 limit is inside a data sheet's tolerance (common practice, no source);
    # 1.2 mW is not.
    assert check_class("2", 532e-9, SMALL_BEAM, average_power_W=1.05e-3).warnings == ()
    assert check_class("2", 532e-9, SMALL_BEAM, average_power_W=1.2e-3).warnings != ()


def test_only_the_share_through_the_measurement_aperture_counts_for_the_unaided_eye() -> None:
    # 3 mW class 2M at 532 nm in a 20 mm (1/e) beam: the 7 mm aperture passes 1 - exp(-(7/20)^2) = 11.5 %,
    # 0.35 mW: inside the class 2 limit for the unaided eye (IEC 60825-1 condition 3, from memory).
    result = check_class("2M", 532e-9, 20e-3, average_power_W=3e-3)
    assert result.warnings == ()
    assert result.comparisons[0].accessible == pytest.approx(3e-3 * 0.11529, rel=1e-3)


def test_a_wide_class_2_beam_is_checked_through_a_collecting_optic_too() -> None:
    # 4 mW, 20 mm at 1/e^2 (14.1 mm at 1/e), 532 nm, labelled class 2: the unaided eye's 7 mm takes
    # 1 - exp(-(7 / 14.14)^2) = 21.7 %, 0.87 mW (inside 1 mW); a 50 mm objective at 2 m (IEC 60825-1 condition 1,
    # from memory) takes all of it, 4 mW: four times the class 2 limit, so the product is at least class 2M.
    result = check_class("2", 532e-9, 20e-3 / math.sqrt(2), average_power_W=4e-3, divergence_1e_rad=0.5e-3)
    [unaided, collected] = result.comparisons
    assert unaided.accessible == pytest.approx(0.87e-3, rel=0.01) and unaided.ratio < 1
    assert collected.condition.startswith("condition 1")
    assert collected.accessible == pytest.approx(4e-3, rel=0.01)
    [warning] = result.warnings
    assert "at least class 2M" in warning


@pytest.mark.parametrize(("label", "energy", "warns"), [
    # Single-pulse AEL of class 1 at 532 nm, 10 ns: the ICNIRP 2013 single-pulse MPE, 2e-3 J/m^2 (400-700 nm,
    # 10 ps - 5 us, from memory), over the 7 mm aperture: 2e-3 x 3.8485e-5 = 7.7e-8 J (the figure IEC 60825-1:2014
    # gives, from memory). Class 2 equals class 1 for pulses below 0.25 s; class 3R allows 5 times: 3.85e-7 J.
    ("1", 50e-9, False),
    ("1", 1e-6, True),
    ("2", 1e-6, True),
    ("3R", 0.3e-6, False),
    ("3R", 1e-6, True),
])
def test_a_pulse_is_checked_against_the_single_pulse_limit(label: str, energy: float, warns: bool) -> None:
    result = check_class(label, 532e-9, SMALL_BEAM, average_power_W=None, pulse_energy_J=energy,
                         pulse_duration_s=10e-9)
    pulse = [c for c in result.comparisons if c.quantity == "pulse energy" and c.condition.startswith("condition 3")]
    assert pulse[0].limit == pytest.approx(7.7e-8 * (5 if label == "3R" else 1), rel=1e-3)
    assert any("pulse energy" in warning for warning in result.warnings) == warns


def test_class_2_outside_the_visible_is_flagged() -> None:
    result = check_class("2", 1064e-9, SMALL_BEAM, average_power_W=0.5e-3)
    assert "400-700 nm" in result.warnings[0]


def test_class_3b_pulse_energy_above_30_mj_in_the_visible_warns() -> None:
    # class 3B single-pulse limit 30 mJ in 400-700 nm (UNC Chapel Hill Laser Safety Manual ch. 3)
    result = check_class("3B", 532e-9, SMALL_BEAM, average_power_W=0.1, pulse_energy_J=0.1, pulse_duration_s=10e-9)
    assert any("pulse energy" in warning for warning in result.warnings)
    quiet = check_class("3B", 532e-9, SMALL_BEAM, average_power_W=0.1, pulse_energy_J=0.01, pulse_duration_s=10e-9)
    assert quiet.warnings == ()


def test_bands_where_the_editions_disagree_are_not_checked_and_say_so() -> None:
    # class 1 at 1310 nm differs by about 30 x between IEC 60825-1:2007 and :2014 (C7), so no verdict
    result = check_class("1", 1310e-9, SMALL_BEAM, average_power_W=0.1)
    assert result.warnings == ()
    assert result.comparisons == ()
    assert any("not checked" in note for note in result.notes)


@pytest.mark.parametrize(("text", "label"), [("3b", "3B"), ("Class 3R", "3R"), (" 1m ", "1M"), ("4", "4")])
def test_class_labels_are_normalised(text: str, label: str) -> None:
    assert normalise_class(text) == label


@pytest.mark.parametrize("text", ["5", "IIIb", "", "3A"])
def test_unknown_class_labels_name_the_field(text: str) -> None:
    with pytest.raises(InputError) as error:
        normalise_class(text)
    assert error.value.field == "laser_class"


@given(st.sampled_from([("2", 400, 700, 1e-3), ("3R", 400, 700, 5e-3), ("3B", 315, 1e6, 0.5),
                        ("1", 400, 700, 39e-6)]),
       st.floats(min_value=0.0, max_value=1.0), st.floats(min_value=1e-6, max_value=1.0),
       st.floats(min_value=1e-4, max_value=0.05))
def test_a_product_inside_its_class_never_warns(row: tuple[str, float, float, float], where: float, share: float,
                                                diameter: float) -> None:
    # Published boundaries: class 2 1 mW and 3R 5 mW in 400-700 nm, 3B 0.5 W from 315 nm, class 1 at least
    # 39 uW anywhere in 400-700 nm ("40 uW blue"). Any power up to them, any beam size, must pass quietly.
    label, low_nm, high_nm, limit = row
    wavelength = (low_nm + where * (high_nm - low_nm)) * 1e-9
    result = check_class(label, wavelength, diameter, average_power_W=limit * share)
    assert result.warnings == ()
