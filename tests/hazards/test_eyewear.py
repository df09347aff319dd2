"""Optical density, EN 207 test conditions, scale numbers, markings and eyewear adequacy."""
from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from hazards.beam import averaged_exposure
from hazards.errors import InputError
from hazards.eyewear import (
    EyewearBand,
    en207_condition,
    en207_rating,
    eyewear_adequacy,
    lb_limit,
    optical_density,
    parse_marking,
    repetition_factor,
)

VISIBLE_025S_W_M2 = 18 * 0.25**0.75 / 0.25  # ICNIRP 2013 Table 5, 400-700 nm, 0.25 s: 25.456 W/m^2


@pytest.mark.parametrize(("exposure", "limit", "exact", "required"), [
    # 532 nm, 1 W, d63 2 mm inside the 7 mm pupil: 1 / 3.8485e-5 m^2 = 25 984 W/m^2; / 25.456 -> 10^3.0089
    (float(averaged_exposure(1.0, 2e-3, 7e-3)), VISIBLE_025S_W_M2, 3.0089, 4),
    # 10.6 um, 100 W, d63 10 mm wider than the 3.5 mm aperture: the peak 1.27324e6 W/m^2 over 1000 W/m^2
    # (ICNIRP 2013 Table 7, t >= 10 s; IEC TR 60825-14 beam-hazard form)
    (float(averaged_exposure(100.0, 10e-3, 3.5e-3)), 1000.0, 3.1049, 4),
    # 1064 nm, 100 mJ in 10 ns, d63 5 mm (whole pulse in the pupil): 0.1 / 3.8485e-5 = 2598.4 J/m^2;
    # single-pulse MPE 0.05 J/m^2 (BGI 832 / IEC 60825-1:2007, 1050-1400 nm, 1 ns-50 us) -> 10^4.7157
    (float(averaged_exposure(0.1, 5e-3, 7e-3)), 0.05, 4.7157, 5),
    # "Fundamentals of Medical/Aesthetic Lasers and IPLs" v1.2, chapter 1, "Optical Density" (public training
    # guide, online.flipbuilder.com/rbhw/egvu pages 111-112): 12.5 J/cm^2 on a 1 ns 1064 nm MPE of 5e-6 J/cm^2,
    # "OD = log10(12.5 / 5x10-6) = 6.4", and in practice "a minimum OD of 7 at 1064 nm".
    (12.5e4, 5e-2, 6.398, 7),
    (1000.0, 10.0, 2.0, 2),  # exactly two decades: rounding up must not add a third
    (5.0, 10.0, math.log10(0.5), 0),  # below the MPE: no filter needed
])
def test_optical_density_is_the_log_ratio_rounded_up(exposure: float, limit: float, exact: float,
                                                     required: int) -> None:
    got_exact, got_required = optical_density(exposure / limit)
    assert float(got_exact) == pytest.approx(exact, abs=1e-4)
    assert float(got_required) == required


@given(st.floats(min_value=1e-6, max_value=1e12), st.integers(min_value=1, max_value=6))
def test_od_rises_by_exactly_one_per_decade_of_exposure(exposure: float, decades: int) -> None:
    low, _ = optical_density(exposure / VISIBLE_025S_W_M2)
    high, _ = optical_density(exposure * 10.0**decades / VISIBLE_025S_W_M2)
    assert float(high - low) == pytest.approx(decades, abs=1e-9)


@pytest.mark.parametrize(("duration", "letter"), [
    # DGUV 203-042 section 5.1 Table 2: D > 0.25 s, I > 1 us - 0.25 s, R 1 ns - 1 us, M < 1 ns
    (None, "D"), (1.0, "D"), (0.26, "D"), (0.25, "I"), (20e-3, "I"), (1.1e-6, "I"), (1e-6, "R"),
    (10e-9, "R"), (1e-9, "R"), (0.9e-9, "M"), (100e-15, "M"),
])
def test_the_en207_letter_follows_the_pulse_duration(duration: float | None, letter: str) -> None:
    assert en207_condition(duration) == letter


@pytest.mark.parametrize(("condition", "wavelength", "number", "limit"), [
    # EN 207 Table B.2 as restated in DGUV 203-042 section 5.1 Table 3
    ("D", 250e-9, 1, 1e-2), ("D", 1064e-9, 1, 1e2), ("D", 10.6e-6, 1, 1e4),
    ("I", 250e-9, 1, 3e2), ("R", 1064e-9, 1, 5e-2), ("I", 10.6e-6, 1, 1e3),
    ("M", 250e-9, 1, 3e11), ("M", 800e-9, 1, 1.5e-3), ("M", 2e-6, 1, 1e12),
    ("D", 1064e-9, 10, 1e11), ("R", 532e-9, 10, 5e7),
    ("D", 315e-9, 1, 1e-2), ("D", 1400e-9, 1, 1e2),  # band edges go to the stricter side (EN 207 ">315", ">1400")
])
def test_lb_limits_come_from_the_scale_table(condition: str, wavelength: float, number: int, limit: float) -> None:
    value, _quantity = lb_limit(condition, wavelength, number)  # type: ignore[arg-type]
    assert value == pytest.approx(limit, rel=1e-12)


def test_a_532_nm_5_w_beam_of_2_mm_needs_d_lb6() -> None:
    # d63 = 2 mm / sqrt(2) = 1.41421 mm, A63 = 1.5708e-6 m^2, E = 5 / 1.5708e-6 = 3.18e6 W/m^2;
    # LB6 allows 1e7 W/m^2, LB5 1e6: LB6
    rating = en207_rating(532e-9, 2e-3 / math.sqrt(2), average_power_W=5.0)
    assert rating.markings == ["D 532 LB6"]


def test_the_dguv_pulsed_welding_example_needs_i_lb8() -> None:
    # DGUV 203-042 section 3 Table 1 (laser welding): Nd:YAG, 600 W average, 150 J / 20 ms / 4 Hz, d63 >= 40 mm,
    # published "1064 D LB7 + I LB8". Pulse part: H = 150 / (pi 0.04^2 / 4) = 1.1937e5 J/m^2, N = 4 Hz x 5 s = 20,
    # H' = 1.1937e5 x 20^0.25 = 2.524e5 J/m^2 <= LB8 (5e5), > LB7 (5e4): I LB8.
    rating = en207_rating(1064e-9, 0.04, average_power_W=600.0, pulse_energy_J=150.0, pulse_duration_s=20e-3,
                          prf_Hz=4.0)
    assert "I 1064 LB8" in rating.markings
    assert rating.requirements[1].density == pytest.approx(2.524e5, rel=1e-3)


def test_the_dguv_welding_d_part_exceeds_the_base_table_and_is_flagged() -> None:
    # Same example: the D part from the base table is E = 600 / 1.2566e-3 = 4.77e5 W/m^2 -> LB5, but DGUV
    # publishes D LB7 (its large-beam correction, not transcribed). The result must say the correction is missing.
    rating = en207_rating(1064e-9, 0.04, average_power_W=600.0, pulse_energy_J=150.0, pulse_duration_s=20e-3,
                          prf_Hz=4.0)
    assert rating.markings[0] == "D 1064 LB5"
    assert any("large-beam correction" in warning for warning in rating.warnings)


def test_the_dguv_small_co2_surgical_laser_is_flagged_for_the_large_beam_correction() -> None:
    # DGUV 203-042 Table 1: CO2 < 20 W, d63 >= 50 mm, published "10600 DI LB3". Base table:
    # 20 / (pi 0.05^2 / 4) = 1.02e4 W/m^2 > LB1 (1e4), <= LB2 (1e5): LB2, below the published LB3.
    rating = en207_rating(10.6e-6, 0.05, average_power_W=20.0)
    assert rating.markings == ["D 10600 LB2"]
    assert any("large-beam correction" in warning for warning in rating.warnings)


def test_a_repetitive_laser_always_also_needs_a_d_rating() -> None:
    # DGUV 203-042 sections 5.2-5.3: D from the average power is always required for repetitively pulsed lasers.
    # 1064 nm, 100 mJ, 10 ns, 10 Hz, d63 5 mm: A63 = 1.9635e-5 m^2;
    # D: 1 W / A63 = 5.09e4 W/m^2 -> LB4 (1e5); R: 0.1 / A63 x (10 x 5)^0.25 = 5093 x 2.659 = 1.354e4 J/m^2 -> LB7
    rating = en207_rating(1064e-9, 5e-3, average_power_W=1.0, pulse_energy_J=0.1, pulse_duration_s=10e-9, prf_Hz=10.0)
    assert rating.markings == ["D 1064 LB4", "R 1064 LB7"]


def test_a_single_pulse_needs_no_d_rating_and_no_train_correction() -> None:
    # 0.1 J / 1.9635e-5 m^2 = 5093 J/m^2: above LB6 (5e3), within LB7 (5e4)
    rating = en207_rating(1064e-9, 5e-3, average_power_W=None, pulse_energy_J=0.1, pulse_duration_s=10e-9)
    assert rating.markings == ["R 1064 LB7"]


def test_pulses_closer_than_ti_are_summed_before_the_n_rule() -> None:
    # DGUV 203-042 section 5.3 case b: 80 MHz at 1064 nm (T_i = 50 us, IEC 60825-1:2007 via BGI 832):
    # pulses in T_i = 80e6 x 50e-6 = 4000, groups in 5 s = 5 / 50e-6 = 1e5, factor = 4000 x 1e5^0.25 = 71 131
    factor = repetition_factor(1064e-9, 10e-12, 80e6)
    assert factor == pytest.approx(4000 * 1e5**0.25, rel=1e-9)


@pytest.mark.parametrize(("wavelength", "duration", "prf"), [
    (355e-9, 10e-9, 100.0),  # below 400 nm: no correction
    (1064e-9, 10e-9, 1.0),  # 1 Hz is not above 1 Hz
    (1064e-9, 0.3, 2.0),  # pulses of 0.25 s or longer
])
def test_the_train_correction_applies_only_where_dguv_says(wavelength: float, duration: float, prf: float) -> None:
    assert repetition_factor(wavelength, duration, prf) == 1.0


def test_mode_locked_uv_is_rated_on_peak_power_density() -> None:
    # DGUV 203-042 section 5.4: M outside 315-1400 nm uses E_p = Q / (t A63). 266 nm, 1 uJ, 100 fs, d63 1 mm:
    # E_p = 1e-6 / 1e-13 / 7.854e-7 = 1.273e13 W/m^2; M 180-315 LBn = 3e(n+10): LB3 = 3e13 -> LB3
    rating = en207_rating(266e-9, 1e-3, average_power_W=None, pulse_energy_J=1e-6, pulse_duration_s=100e-15)
    assert rating.markings == ["M 266 LB3"]


def test_beyond_lb10_there_is_no_marking_and_a_warning() -> None:
    # 1064 nm, 1 MW in a 1 mm beam: 1e6 / 7.854e-7 = 1.27e12 W/m^2; LBn = 1e(n+1) -> LB12, beyond the scale
    rating = en207_rating(1064e-9, 1e-3, average_power_W=1e6)
    assert rating.markings == []
    assert rating.requirements[0].scale_number == 12
    assert any("more than LB10" in warning for warning in rating.warnings)


@given(st.floats(min_value=1e-6, max_value=1e6), st.floats(min_value=1.0, max_value=1e4),
       st.sampled_from([250e-9, 532e-9, 1064e-9, 10.6e-6]))
def test_lb_never_falls_as_power_rises(power: float, factor: float, wavelength: float) -> None:
    low = en207_rating(wavelength, 2e-3, average_power_W=power).requirements[0].scale_number
    high = en207_rating(wavelength, 2e-3, average_power_W=power * factor).requirements[0].scale_number
    assert high >= low


@given(st.floats(min_value=1e-9, max_value=10.0), st.floats(min_value=1.0, max_value=1e4),
       st.sampled_from([10e-15, 10e-9, 100e-6]), st.sampled_from([None, 10.0, 1e3, 80e6]),
       st.sampled_from([266e-9, 800e-9, 1064e-9, 2.94e-6]))
def test_pulsed_lb_numbers_never_fall_as_pulse_energy_rises(energy: float, factor: float, duration: float,
                                                            prf: float | None, wavelength: float) -> None:
    def numbers(pulse_energy: float) -> list[int]:
        power = None if prf is None else pulse_energy * prf
        rating = en207_rating(wavelength, 2e-3, average_power_W=power, pulse_energy_J=pulse_energy,
                              pulse_duration_s=duration, prf_Hz=prf)
        return [requirement.scale_number for requirement in rating.requirements]

    assert all(high >= low for low, high in zip(numbers(energy), numbers(energy * factor), strict=True))


@pytest.mark.parametrize(("text", "low_nm", "high_nm", "od", "numbers"), [
    ("D 1064 LB6", 1064, 1064, None, {"D": 6}),
    ("IR 1064 LB7", 1064, 1064, None, {"I": 7, "R": 7}),
    ("IR 315-532 LB6", 315, 532, None, {"I": 6, "R": 6}),
    # wavelength-first combined markings as printed in DGUV 203-042 Annex 8
    ("610 - 640 D LB4 + IR LB5", 610, 640, None, {"D": 4, "I": 5, "R": 5}),
    ("900 - 1070 D LB7 + IR LB8 + M LB8Y", 900, 1070, None, {"D": 7, "I": 8, "R": 8, "M": 8}),
    ("10600 DI LB3", 10600, 10600, None, {"D": 3, "I": 3}),
    ("DIR 1064 L5", 1064, 1064, None, {"D": 5, "I": 5, "R": 5}),  # pre-2009 "L" scale numbers
    ("OD 6 190-532 nm", 190, 532, 6.0, {}),
])
def test_markings_are_read_in_both_en207_orders(text: str, low_nm: float, high_nm: float, od: float | None,
                                                numbers: dict[str, int]) -> None:
    band = parse_marking(text)
    assert band.low_m == pytest.approx(low_nm * 1e-9)
    assert band.high_m == pytest.approx(high_nm * 1e-9)
    assert band.optical_density == od
    assert band.scale_numbers == numbers


@pytest.mark.parametrize("text", ["", "LB6", "goggles", "D LB6 1064 nm extra", "X 1064 LB6"])
def test_unreadable_markings_name_the_field(text: str) -> None:
    with pytest.raises(InputError) as error:
        parse_marking(text)
    assert error.value.field == "eyewear"


def _q_switched_requirements() -> tuple[object, ...]:
    # D 1064 LB4 + R 1064 LB7 (see test_a_repetitive_laser_always_also_needs_a_d_rating)
    return en207_rating(1064e-9, 5e-3, average_power_W=1.0, pulse_energy_J=0.1, pulse_duration_s=10e-9,
                        prf_Hz=10.0).requirements


@pytest.mark.parametrize(("markings", "od_required", "status", "od_shortfall", "lb_shortfall"), [
    (["1064 D LB5 + IR LB7"], 5, "adequate", None, {}),
    (["IR 1064 LB7", "D 1064 LB4"], 5, "adequate", None, {}),
    (["1064 D LB4 + IR LB5"], 5, "inadequate", None, {"R": 2}),
    (["D 1064 LB7"], 5, "inadequate", None, {"R": 7}),  # not rated for R at all
    (["OD 7 900-1100 nm"], 5, "adequate", None, {}),  # OD-only eyewear is judged on its OD
    (["OD 3 900-1100 nm"], 5, "inadequate", 2.0, {}),
    (["D 532 LB6"], 5, "not_covered", None, {}),
    (["IR 190-1000 LB9"], 5, "not_covered", None, {}),
])
def test_eyewear_is_adequate_inadequate_or_not_covered(markings: list[str], od_required: int, status: str,
                                                      od_shortfall: float | None, lb_shortfall: dict[str, int]) -> None:
    bands: list[EyewearBand] = [parse_marking(text) for text in markings]
    result = eyewear_adequacy(1064e-9, od_required, _q_switched_requirements(), bands)  # type: ignore[arg-type]
    assert result.status == status
    assert result.od_shortfall == od_shortfall
    assert result.lb_shortfall == lb_shortfall
    assert bool(result.reasons) == (status != "adequate")
