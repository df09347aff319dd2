"""Hazard distances from given MPE values: hand calculations, published figures, properties."""
from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from hazards.beam import aperture_averaged, fraction_through_aperture, to_one_over_e, to_one_over_e2
from hazards.distances import (
    critical_diameter,
    diffuse_hazard_distance,
    fibre_nohd,
    focused_beam_nohd,
    nohd,
    optical_aid_nohd,
)

# ICNIRP 2013 Table 5 / EU 2006/25/EC Annex II Table 2.2, 400-700 nm, 1.8e-5 s <= t < 10 s, point source:
# H = 18 t^0.75 J/m^2; at the 0.25 s aversion time E = 18 x 0.25^0.75 / 0.25 = 25.456 W/m^2.
VISIBLE_025S_W_M2 = 18 * 0.25**0.75 / 0.25
PUPIL = 7e-3  # limiting aperture 400-1400 nm, ICNIRP 2013 Table 8


@pytest.mark.parametrize(("value", "definition", "one_over_e", "one_over_e2"), [
    # Gaussian I = I0 exp(-2 r^2 / w^2): the 1/e diameter is the 1/e^2 diameter / sqrt(2).
    (2e-3, "1/e2", 2e-3 / 1.41421356, 2e-3),
    (1.41421356e-3, "1/e", 1.41421356e-3, 2e-3),
    (1e-3, "1/e2", 0.70710678e-3, 1e-3),
])
def test_diameters_convert_between_one_over_e_and_one_over_e2(value: float, definition: str,
                                                              one_over_e: float, one_over_e2: float) -> None:
    assert to_one_over_e(value, definition) == pytest.approx(one_over_e, rel=1e-8)  # type: ignore[arg-type]
    assert to_one_over_e2(value, definition) == pytest.approx(one_over_e2, rel=1e-8)  # type: ignore[arg-type]


@pytest.mark.parametrize(("beam", "aperture", "fraction"), [
    (3e-3, 7e-3, 1.0),  # narrower than the pupil: counts whole (limiting-aperture rule)
    (7e-3, 7e-3, 1.0),
    (10e-3, 3.5e-3, 1 - math.exp(-(3.5 / 10) ** 2)),  # 1 - exp(-0.1225) = 0.11529
    (14e-3, 7e-3, 1 - math.exp(-0.25)),  # 0.22120
])
def test_a_wide_beam_counts_only_the_share_inside_the_aperture(beam: float, aperture: float, fraction: float) -> None:
    assert fraction_through_aperture(beam, aperture) == pytest.approx(fraction, rel=1e-12)


def test_the_532_nm_5_w_beam_has_a_nohd_of_707_m_by_hand() -> None:
    # a = 2 mm / sqrt(2) = 1.41421 mm, phi = 1 mrad / sqrt(2) = 0.707107 mrad (given at 1/e^2)
    # d_c = sqrt(4 x 5 / (pi x 25.456)) = sqrt(0.250088) = 0.500088 m
    # quadrature: sqrt(0.500088^2 - 0.00141421^2) / 0.000707107 = 707.23 m
    # linear:     (0.500088 - 0.00141421) / 0.000707107 = 705.23 m
    a, phi = to_one_over_e(2e-3, "1/e2"), to_one_over_e(1e-3, "1/e2")
    result = nohd(5.0, VISIBLE_025S_W_M2, a, phi, PUPIL)
    assert result.distance_m == pytest.approx(707.23, abs=0.01)
    assert result.form == "quadrature"
    assert result.alternatives["linear"] == pytest.approx(705.23, abs=0.01)
    assert nohd(5.0, VISIBLE_025S_W_M2, a, phi, PUPIL, form="linear").distance_m == pytest.approx(705.23, abs=0.01)


def test_a_1_w_visible_beam_of_1_mrad_has_the_published_225_m() -> None:
    # "Fundamentals of Medical/Aesthetic Lasers and IPLs" v1.2, chapter 1, "Nominal Ocular Hazard Distance"
    # (public training guide, online.flipbuilder.com/rbhw/egvu page 110):
    # "the NOHD for a 1000 milliwatt laser ... divergence of 1 milliradian ... is 225 metres".
    # sqrt(4 x 1 / (pi x 25.456)) / 0.001 = 223.6 m for a small exit beam; the quoted figure is rounded.
    result = nohd(1.0, VISIBLE_025S_W_M2, 1e-3, 1e-3, PUPIL)
    assert result.distance_m == pytest.approx(225.0, rel=0.01)


@pytest.mark.parametrize(("power", "diameter", "reason"), [
    (0.5e-3, 1e-3, "0.5 mW / (pi 7 mm^2 / 4) = 13.0 W/m^2 < 25.456 W/m^2: below the MPE over the pupil"),
    (5.0, 0.6, "d_c = 0.500 m < a = 0.6 m: the beam leaves the exit below the MPE"),
])
def test_a_beam_that_never_exceeds_the_mpe_has_zero_nohd(power: float, diameter: float, reason: str) -> None:
    result = nohd(power, VISIBLE_025S_W_M2, diameter, 1e-3, PUPIL)
    assert result.distance_m == 0.0, reason
    assert result.unbounded is False


def test_a_collimated_beam_above_the_mpe_is_unbounded_not_infinite() -> None:
    result = nohd(5.0, VISIBLE_025S_W_M2, 2e-3, 0.0, PUPIL)
    assert result.unbounded is True
    assert result.distance_m is None
    assert all(value is None for value in result.alternatives.values())


def test_a_divergence_too_small_to_divide_by_is_unbounded_too() -> None:
    # 0.5 m / 5e-324 rad overflows to infinity; that must not leak out as a distance
    result = nohd(5.0, VISIBLE_025S_W_M2, 2e-3, 5e-324, PUPIL)
    assert (result.distance_m, result.unbounded) == (None, True)


def test_a_collimated_beam_below_the_mpe_is_simply_zero() -> None:
    result = nohd(0.5e-3, VISIBLE_025S_W_M2, 2e-3, 0.0, PUPIL)
    assert (result.distance_m, result.unbounded) == (0.0, False)


@pytest.mark.parametrize(("reflectance", "angle", "expected"), [
    # r = sqrt(rho P cos(theta) / (pi MPE)); 5 W, 25.456 W/m^2:
    (1.0, 0.0, 0.25004),  # sqrt(5 / 79.972) = 0.25004 m
    (0.5, 0.0, 0.25004 / math.sqrt(2)),  # half the reflectance: / sqrt(2)
    (1.0, math.pi / 3, 0.25004 * math.sqrt(0.5)),  # cos 60 deg = 0.5
    (0.0, 0.0, 0.0),
])
def test_diffuse_reflection_distance_follows_the_lambertian_form(reflectance: float, angle: float,
                                                                  expected: float) -> None:
    result = diffuse_hazard_distance(5.0, VISIBLE_025S_W_M2, reflectance, angle)
    assert result.distance_m == pytest.approx(expected, abs=1e-5)


def test_binoculars_extend_the_nohd_by_the_objective_over_the_pupil() -> None:
    # K = (50 mm / 7 mm)^2 = 51.02: d_c becomes 0.500088 x 50/7 = 3.57206 m,
    # r = sqrt(3.57206^2 - 0.00141421^2) / 0.000707107 = 5051.6 m
    a, phi = to_one_over_e(2e-3, "1/e2"), to_one_over_e(1e-3, "1/e2")
    result = optical_aid_nohd(5.0, VISIBLE_025S_W_M2, a, phi, PUPIL, objective_diameter_m=0.05, transmission=1.0,
                              wavelength_m=532e-9)
    assert result.distance_m == pytest.approx(5051.6, abs=0.1)


def test_optics_do_not_extend_the_nohd_at_10_6_um() -> None:
    # Glass viewing optics are opaque beyond about 4 um (IEC 60825-1 condition 1 applies 302.5-4000 nm).
    unaided = nohd(100.0, 1000.0, 10e-3, 2e-3, 3.5e-3)
    aided = optical_aid_nohd(100.0, 1000.0, 10e-3, 2e-3, 3.5e-3, objective_diameter_m=0.05, transmission=1.0,
                             wavelength_m=10.6e-6)
    assert aided.distance_m == pytest.approx(unaided.distance_m)


def test_an_objective_smaller_than_the_pupil_never_shortens_the_nohd() -> None:
    unaided = nohd(5.0, VISIBLE_025S_W_M2, 1e-3, 1e-3, PUPIL)
    aided = optical_aid_nohd(5.0, VISIBLE_025S_W_M2, 1e-3, 1e-3, PUPIL, objective_diameter_m=3e-3, transmission=0.5,
                             wavelength_m=532e-9)
    assert aided.distance_m == unaided.distance_m


def test_a_focused_beam_nohd_is_measured_from_the_focus() -> None:
    # 1064 nm, 5 W, MPE 50 W/m^2 (ICNIRP 2013, 1050-1400 nm, 10 s: 90 t^0.75 J/m^2 -> 50.6 W/m^2; 50 used here);
    # 5 mm (1/e) beam on a 100 mm lens: phi = 0.05 rad, d_c = sqrt(20 / (pi 50)) = 0.356825 m,
    # r = 0.356825 / 0.05 = 7.1365 m
    result = focused_beam_nohd(5.0, 50.0, 5e-3, 0.1, PUPIL)
    assert result.distance_m == pytest.approx(7.1365, abs=1e-4)


def test_a_multimode_fibre_nohd_matches_the_na_form() -> None:
    # ANSI Z136.2 multimode-fibre form (from memory): r = (1.7 / NA) sqrt(P / (pi MPE));
    # 1 W, NA 0.2, MPE 1000 W/m^2 (1400 nm-1 mm, t >= 10 s, ICNIRP 2013 Table 7):
    # 8.5 x sqrt(1 / 3141.59) = 8.5 x 0.0178412 = 0.15165 m
    result = fibre_nohd(1.0, 1000.0, 0.2, 0.0, 3.5e-3)
    assert result.distance_m == pytest.approx(0.15165, abs=1e-5)


def test_the_critical_diameter_is_where_the_whole_power_meets_the_limit() -> None:
    # P / (pi d^2 / 4) = L at d = d_c: 5 W over pi (0.500088 m)^2 / 4 = 0.196419 m^2 gives 25.456 W/m^2
    d_c = critical_diameter(5.0, VISIBLE_025S_W_M2)
    assert 5.0 / (math.pi * d_c**2 / 4) == pytest.approx(VISIBLE_025S_W_M2, rel=1e-12)


def test_aperture_average_of_a_10_6_um_beam_matches_the_hand_figure() -> None:
    # 100 W, d63 10 mm, aperture 3.5 mm: 100 x 0.115294 / (pi 3.5 mm^2 / 4 = 9.6211e-6 m^2) = 1.19835e6 W/m^2
    assert aperture_averaged(100.0, 10e-3, 3.5e-3) == pytest.approx(1.19835e6, rel=1e-5)


powers = st.floats(min_value=1e-4, max_value=1e4)
divergences = st.floats(min_value=1e-5, max_value=0.1)
diameters = st.floats(min_value=1e-4, max_value=0.05)


@given(powers, st.floats(min_value=1.0, max_value=100.0), divergences, diameters)
def test_nohd_never_falls_as_power_rises(power: float, factor: float, divergence: float, diameter: float) -> None:
    lower = nohd(power, VISIBLE_025S_W_M2, diameter, divergence, PUPIL).distance_m
    higher = nohd(power * factor, VISIBLE_025S_W_M2, diameter, divergence, PUPIL).distance_m
    assert lower is not None and higher is not None
    assert higher >= lower


@given(powers, divergences, st.floats(min_value=1.0, max_value=100.0), diameters)
def test_nohd_never_rises_as_divergence_grows(power: float, divergence: float, factor: float,
                                             diameter: float) -> None:
    narrow = nohd(power, VISIBLE_025S_W_M2, diameter, divergence, PUPIL).distance_m
    wide = nohd(power, VISIBLE_025S_W_M2, diameter, divergence * factor, PUPIL).distance_m
    assert narrow is not None and wide is not None
    assert wide <= narrow


@given(powers, divergences, diameters)
def test_the_reported_form_is_never_shorter_than_the_other(power: float, divergence: float, diameter: float) -> None:
    result = nohd(power, VISIBLE_025S_W_M2, diameter, divergence, PUPIL)
    assert result.distance_m is not None
    assert all(value is not None and result.distance_m >= value for value in result.alternatives.values())
