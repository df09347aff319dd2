"""Hazard distances from given MPE values: hand calculations, published figures, properties."""
from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from hazards.beam import averaged_exposure, fraction_through_aperture, to_one_over_e, to_one_over_e2
from hazards.distances import (
    condition_1_aperture,
    diffuse_reach,
    fibre_divergence,
    focused_divergence,
    optical_aid_reach,
    reach,
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
    # A centred Gaussian of 1/e diameter d63 puts 1 - exp(-(D / d63)^2) of its power through a disc of diameter D.
    (3e-3, 7e-3, 1 - math.exp(-(7 / 3) ** 2)),  # 0.99569
    (7e-3, 7e-3, 1 - math.exp(-1)),  # 0.63212: the 1/e diameter holds 63 %
    (10e-3, 3.5e-3, 1 - math.exp(-(3.5 / 10) ** 2)),  # 1 - exp(-0.1225) = 0.11529
    (14e-3, 7e-3, 1 - math.exp(-0.25)),  # 0.22120
])
def test_a_measurement_aperture_collects_the_gaussian_share(beam: float, aperture: float, fraction: float) -> None:
    assert fraction_through_aperture(beam, aperture) == pytest.approx(fraction, rel=1e-12)


@pytest.mark.parametrize(("power", "beam", "aperture", "expected"), [
    # IEC TR 60825-14 / ANSI Z136.1 App. B beam-hazard form: X over the larger of the 1/e beam area and the
    # aperture's. 5 W in a 1.414 mm beam over the 7 mm pupil: 5 / 3.8485e-5 = 1.2992e5 W/m^2.
    (5.0, 1.41421e-3, 7e-3, 1.2992e5),
    # 100 W, d63 10 mm, aperture 3.5 mm: the peak, 100 / (pi 0.01^2 / 4) = 1.27324e6 W/m^2 (the exact Gaussian
    # share through 3.5 mm, 100 x 0.115294 / 9.6211e-6 = 1.19835e6, is never above it)
    (100.0, 10e-3, 3.5e-3, 1.27324e6),
])
def test_the_exposure_averaged_over_the_aperture_is_the_beam_hazard_forms(power: float, beam: float, aperture: float,
                                                                         expected: float) -> None:
    assert float(averaged_exposure(power, beam, aperture)) == pytest.approx(expected, rel=1e-4)


def _nohd(amount: float, limit: float, diameter: float, divergence: float, aperture: float) -> float | None:
    result = reach(amount, limit, diameter, divergence, aperture)
    return None if bool(result.unbounded) else float(result.distance_m)


def test_the_532_nm_5_w_beam_has_a_nohd_of_707_m_by_hand() -> None:
    # a = 2 mm / sqrt(2) = 1.41421 mm, phi = 1 mrad / sqrt(2) = 0.707107 mrad (given at 1/e^2)
    # d_c = sqrt(4 x 5 / (pi x 25.456)) = sqrt(0.250088) = 0.500088 m
    # quadrature: sqrt(0.500088^2 - 0.00141421^2) / 0.000707107 = 707.23 m
    # linear:     (0.500088 - 0.00141421) / 0.000707107 = 705.23 m
    a, phi = to_one_over_e(2e-3, "1/e2"), to_one_over_e(1e-3, "1/e2")
    result = reach(5.0, VISIBLE_025S_W_M2, a, phi, PUPIL)
    assert float(result.critical_diameter_m) == pytest.approx(0.500088, abs=1e-6)
    assert float(result.distance_m) == pytest.approx(707.23, abs=0.01)
    assert float(result.linear_m) == pytest.approx(705.23, abs=0.01)


def test_a_1_w_visible_beam_of_1_mrad_has_the_published_225_m() -> None:
    # "Fundamentals of Medical/Aesthetic Lasers and IPLs" v1.2, chapter 1, "Nominal Ocular Hazard Distance"
    # (public training guide, online.flipbuilder.com/rbhw/egvu page 110):
    # "the NOHD for a 1000 milliwatt laser ... divergence of 1 milliradian ... is 225 metres".
    # sqrt(4 x 1 / (pi x 25.456)) / 0.001 = 223.6 m for a small exit beam; the quoted figure is rounded.
    assert _nohd(1.0, VISIBLE_025S_W_M2, 1e-3, 1e-3, PUPIL) == pytest.approx(225.0, rel=0.01)


@pytest.mark.parametrize(("power", "diameter", "reason"), [
    (0.5e-3, 1e-3, "0.5 mW / (pi 7 mm^2 / 4) = 13.0 W/m^2 < 25.456 W/m^2: below the MPE over the pupil"),
    (5.0, 0.6, "d_c = 0.500 m < a = 0.6 m: the beam leaves the exit below the MPE"),
])
def test_a_beam_that_never_exceeds_the_mpe_has_zero_nohd(power: float, diameter: float, reason: str) -> None:
    assert _nohd(power, VISIBLE_025S_W_M2, diameter, 1e-3, PUPIL) == 0.0, reason


def test_a_collimated_beam_above_the_mpe_is_unbounded_not_infinite() -> None:
    result = reach(5.0, VISIBLE_025S_W_M2, 2e-3, 0.0, PUPIL)
    assert bool(result.unbounded) is True
    assert math.isnan(float(result.distance_m)) and math.isnan(float(result.linear_m))


def test_a_divergence_too_small_to_divide_by_is_unbounded_too() -> None:
    # 0.5 m / 5e-324 rad overflows to infinity; that must not leak out as a distance
    assert _nohd(5.0, VISIBLE_025S_W_M2, 2e-3, 5e-324, PUPIL) is None


def test_a_collimated_beam_below_the_mpe_is_simply_zero() -> None:
    assert _nohd(0.5e-3, VISIBLE_025S_W_M2, 2e-3, 0.0, PUPIL) == 0.0


@pytest.mark.parametrize(("reflectance", "angle", "expected"), [
    # r = sqrt(rho P cos(theta) / (pi MPE)); 5 W, 25.456 W/m^2:
    (1.0, 0.0, 0.25004),  # sqrt(5 / 79.972) = 0.25004 m
    (0.5, 0.0, 0.25004 / math.sqrt(2)),  # half the reflectance: / sqrt(2)
    (1.0, math.pi / 3, 0.25004 * math.sqrt(0.5)),  # cos 60 deg = 0.5
    (0.0, 0.0, 0.0),
])
def test_diffuse_reflection_distance_follows_the_lambertian_form(reflectance: float, angle: float,
                                                                  expected: float) -> None:
    assert float(diffuse_reach(5.0, VISIBLE_025S_W_M2, reflectance, angle)) == pytest.approx(expected, abs=1e-5)


def test_binoculars_gather_the_objective_over_the_eye_pupil() -> None:
    # IEC TR 60825-14 optical aids (from memory): gain (D_o / 7 mm)^2 = (50 / 7)^2 = 51.02 for a 7x50 binocular,
    # so d_c becomes 0.500088 x 50/7 = 3.57206 m and r = sqrt(3.57206^2 - 0.00141421^2) / 0.000707107 = 5051.6 m
    a, phi = to_one_over_e(2e-3, "1/e2"), to_one_over_e(1e-3, "1/e2")
    result = optical_aid_reach(5.0, VISIBLE_025S_W_M2, a, phi, PUPIL, objective_diameter_m=0.05, transmission=1.0)
    assert float(result.distance_m) == pytest.approx(5051.6, abs=0.1)


@pytest.mark.parametrize("aperture", [1e-3, 3.5e-3, 7e-3])
def test_the_optical_aid_gain_does_not_depend_on_the_limiting_aperture(aperture: float) -> None:
    # The instrument delivers through a pupil no larger than the eye's 7 mm (IEC TR 60825-14, from memory), so a
    # 1 mm or 3.5 mm limiting aperture must not turn the 51x of a 7x50 into 2500x or 204x. For a beam far wider
    # than every aperture the aided exposure is 51 times the unaided one, so the critical diameter grows by
    # sqrt(51.02) = 50/7: r = sqrt((50/7 d_c)^2 - a^2) / phi, with d_c = sqrt(4 x 1000 / (pi 100)) = 3.5682 m.
    critical = float(reach(1e3, 100.0, 0.5, 1e-3, aperture).critical_diameter_m)
    aided = optical_aid_reach(1e3, 100.0, 0.5, 1e-3, aperture, objective_diameter_m=0.05, transmission=1.0)
    assert critical == pytest.approx(3.5682, abs=1e-4)
    assert float(aided.distance_m) == pytest.approx(math.sqrt((critical * 50 / 7) ** 2 - 0.5**2) / 1e-3, rel=1e-9)


@pytest.mark.parametrize(("wavelength", "objective"), [
    # IEC 60825-1 measurement condition 1 collecting apertures (from memory): 50 mm in general, 25 mm in
    # 302.5-400 nm and 1400-4000 nm, none where glass optics do not transmit
    (532e-9, 50e-3), (1064e-9, 50e-3), (355e-9, 25e-3), (1550e-9, 25e-3), (3e-6, 25e-3),
])
def test_the_condition_1_aperture_follows_the_band(wavelength: float, objective: float) -> None:
    assert float(condition_1_aperture(wavelength)) == pytest.approx(objective)


@pytest.mark.parametrize("wavelength", [250e-9, 10.6e-6])
def test_viewing_optics_do_not_transmit_outside_302_to_4000_nm(wavelength: float) -> None:
    assert math.isnan(float(condition_1_aperture(wavelength)))
    aided = optical_aid_reach(100.0, 1000.0, 10e-3, 2e-3, 3.5e-3,
                              objective_diameter_m=condition_1_aperture(wavelength), transmission=1.0)
    assert math.isnan(float(aided.distance_m))  # no aided figure: the unaided distance stands alone


def test_an_objective_smaller_than_the_pupil_gathers_less_than_the_eye() -> None:
    unaided = _nohd(5.0, VISIBLE_025S_W_M2, 1e-3, 1e-3, PUPIL)
    aided = optical_aid_reach(5.0, VISIBLE_025S_W_M2, 1e-3, 1e-3, PUPIL, objective_diameter_m=3e-3, transmission=0.5)
    assert unaided is not None and float(aided.distance_m) < unaided


def test_a_focused_beam_nohd_is_measured_from_the_focus() -> None:
    # 1064 nm, 5 W, MPE 50 W/m^2 (ICNIRP 2013, 1050-1400 nm, 10 s: 90 t^0.75 J/m^2 -> 50.6 W/m^2; 50 used here);
    # 5 mm (1/e) beam on a 100 mm lens: phi = 0.05 rad, d_c = sqrt(20 / (pi 50)) = 0.356825 m,
    # r = 0.356825 / 0.05 = 7.1365 m
    assert _nohd(5.0, 50.0, 0.0, float(focused_divergence(5e-3, 0.1)), PUPIL) == pytest.approx(7.1365, abs=1e-4)


def test_a_multimode_fibre_nohd_matches_the_na_form() -> None:
    # ANSI Z136.2 multimode-fibre form (from memory): r = (1.7 / NA) sqrt(P / (pi MPE));
    # 1 W, NA 0.2, MPE 1000 W/m^2 (1400 nm-1 mm, t >= 10 s, ICNIRP 2013 Table 7):
    # 8.5 x sqrt(1 / 3141.59) = 8.5 x 0.0178412 = 0.15165 m
    assert _nohd(1.0, 1000.0, 0.0, float(fibre_divergence(0.2)), 3.5e-3) == pytest.approx(0.15165, abs=1e-5)


def test_the_critical_diameter_is_where_the_whole_power_meets_the_limit() -> None:
    # P / (pi d^2 / 4) = L at d = d_c: 5 W over pi (0.500088 m)^2 / 4 = 0.196419 m^2 gives 25.456 W/m^2
    d_c = float(reach(5.0, VISIBLE_025S_W_M2, 1e-3, 1e-3, PUPIL).critical_diameter_m)
    assert 5.0 / (math.pi * d_c**2 / 4) == pytest.approx(VISIBLE_025S_W_M2, rel=1e-12)


def test_many_beams_are_one_call() -> None:
    # The same figures as one at a time, for arrays (hand figures above: 707.23 m, 0 m, 223.6 m).
    result = reach([5.0, 0.5e-3, 1.0], VISIBLE_025S_W_M2, [1.41421e-3, 1e-3, 1e-3], [0.707107e-3, 1e-3, 1e-3], PUPIL)
    assert result.distance_m == pytest.approx([707.23, 0.0, 223.6], abs=0.1)


powers = st.floats(min_value=1e-4, max_value=1e4)
divergences = st.floats(min_value=1e-5, max_value=0.1)
diameters = st.floats(min_value=1e-4, max_value=0.05)


@given(powers, st.floats(min_value=1.0, max_value=100.0), divergences, diameters)
def test_nohd_never_falls_as_power_rises(power: float, factor: float, divergence: float, diameter: float) -> None:
    lower = _nohd(power, VISIBLE_025S_W_M2, diameter, divergence, PUPIL)
    higher = _nohd(power * factor, VISIBLE_025S_W_M2, diameter, divergence, PUPIL)
    assert lower is not None and higher is not None
    assert higher >= lower


@given(powers, divergences, st.floats(min_value=1.0, max_value=100.0), diameters)
def test_nohd_never_rises_as_divergence_grows(power: float, divergence: float, factor: float,
                                             diameter: float) -> None:
    narrow = _nohd(power, VISIBLE_025S_W_M2, diameter, divergence, PUPIL)
    wide = _nohd(power, VISIBLE_025S_W_M2, diameter, divergence * factor, PUPIL)
    assert narrow is not None and wide is not None
    assert wide <= narrow


@given(powers, divergences, diameters)
def test_the_reported_form_is_never_shorter_than_the_other(power: float, divergence: float, diameter: float) -> None:
    result = reach(power, VISIBLE_025S_W_M2, diameter, divergence, PUPIL)
    assert float(result.distance_m) >= float(result.linear_m)
