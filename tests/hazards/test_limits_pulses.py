"""Repetitive pulse trains: the three rules of 2006/25/EC Annex II Table 2.6 and ICNIRP 2013."""
from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from hazards.errors import InputError
from hazards.limits import exposure_limit, pulse_train_limit


def test_a_q_switched_nd_yag_train_is_governed_by_the_reduced_single_pulse_rule_eu2006() -> None:
    # 2006/25/EC Annex II: Table 2.2, 1050-1400 nm, 10^-9 - 5x10^-5 s: 5x10^-2 J/m^2 per pulse;
    # Table 2.3, 700-1400 nm, alpha < 1.5 mrad: 10 C_A C_C = 50 W/m^2 over 10 s; Table 2.6 rule 3:
    # C_p = N^-0.25 with N = 100 pulses (10 Hz for 10 s).
    train = pulse_train_limit(1064e-9, 10.0, 10e-9, 10.0, limits="eu2006")
    assert float(train.pulses_N) == 100
    assert float(train.candidates["single_pulse"]) == pytest.approx(5e-2)
    assert float(train.candidates["average_power"]) == pytest.approx(50 * 10 / 100)
    assert float(train.candidates["reduced_single_pulse"]) == pytest.approx(5e-2 * 100**-0.25)
    assert str(train.governing) == "reduced_single_pulse"
    assert float(train.per_pulse_J_m2) == pytest.approx(5e-2 * 100**-0.25)
    assert float(train.radiant_exposure_J_m2) == pytest.approx(100 * 5e-2 * 100**-0.25)
    assert float(train.irradiance_W_m2) == pytest.approx(100 * 5e-2 * 100**-0.25 / 10)


def test_a_q_switched_nd_yag_train_under_icnirp2013() -> None:
    # ICNIRP 2013: 2x10^-2 C_C J/m^2 for 10 ps - 13 us (from memory), 50 W/m^2 at 10 s, C_P = N^-0.25.
    train = pulse_train_limit(1064e-9, 10.0, 10e-9, 10.0)
    assert float(train.per_pulse_J_m2) == pytest.approx(2e-2 * 100**-0.25)  # from memory
    assert str(train.governing) == "reduced_single_pulse"
    record = train.to_dict()
    assert record["per_pulse_J_m2"] == pytest.approx(6.32e-3, rel=1e-3)
    assert set(record["candidates"]) == {"single_pulse", "average_power", "reduced_single_pulse"}


def test_pulses_closer_than_T_min_are_grouped() -> None:
    # 2006/25/EC Annex II Table 2.6: "all pulses delivered in less than T_min are treated as a single
    # pulse"; T_min = 18 us at 400-1050 nm. At 1 MHz, 18 pulses fall in 18 us; the group is held to
    # the limit for 18 us (Table 2.2: 18 t^0.75, the stricter of the two cells meeting at 18 us) and
    # N counts groups.
    train = pulse_train_limit(532e-9, 10.0, 10e-9, 1e6, limits="eu2006")
    per_group = 1e6 * 18e-6
    groups = 1e7 / per_group
    expected = groups**-0.25 * 18 * (18e-6) ** 0.75 / per_group
    assert float(train.pulses_per_group) == pytest.approx(per_group)
    assert float(train.candidates["reduced_single_pulse"]) == pytest.approx(expected)
    # Table 2.3, 400-700 nm: 10 W/m^2 x 10 s shared by 10^7 pulses
    assert float(train.candidates["average_power"]) == pytest.approx(100 / 1e7)
    assert str(train.governing) == "average_power"


def test_a_started_pulse_counts_as_a_whole_one() -> None:
    # common practice, no source: 10 Hz over the 0.25 s aversion response is 3 pulses, not 2.5
    train = pulse_train_limit(532e-9, 0.25, 10e-9, 10.0, limits="eu2006")
    assert float(train.pulses_N) == 3
    # 2006/25/EC Annex II Table 2.2, 400-700 nm, 1.8x10^-5 - 10 s: 18 t^0.75 over 0.25 s, shared by 3 pulses
    assert float(train.candidates["average_power"]) == pytest.approx(18 * 0.25**0.75 / 3)


def test_icnirp2013_applies_no_reduction_outside_the_retinal_thermal_limits() -> None:
    # ICNIRP 2013 applies C_P to the retinal thermal limits only (not to the cornea or the skin).
    train = pulse_train_limit(10.6e-6, 10.0, 1e-6, 100.0)
    assert math.isnan(float(train.candidates["reduced_single_pulse"]))
    assert train.to_dict()["candidates"]["reduced_single_pulse"] is None
    # ICNIRP 2013, 2600 nm - 1 mm: 5.6x10^3 t^0.25 for one 1 us pulse; 1000 W/m^2 x 10 s over 1000 pulses
    assert float(train.candidates["single_pulse"]) == pytest.approx(5.6e3 * 1e-6**0.25)
    assert float(train.candidates["average_power"]) == pytest.approx(1000 * 10 / 1000, rel=5e-3)
    assert str(train.governing) == "average_power"


def test_the_directive_reduces_every_thermal_limit_with_a_T_min() -> None:
    # 2006/25/EC Annex II Table 2.6 rule 3: thermal limits, T_min = 10^-7 s for 2600 nm - 1 mm
    train = pulse_train_limit(10.6e-6, 10.0, 1e-6, 100.0, limits="eu2006")
    assert float(train.candidates["reduced_single_pulse"]) == pytest.approx(1000**-0.25 * 5.6e3 * 1e-6**0.25)


def test_photochemical_doses_add_up_through_the_average_power_rule() -> None:
    # 2006/25/EC Annex II Table 2.3, 400-600 nm: H = 100 C_B J/m^2 for 10-100 s (C_B = 1 at 420 nm);
    # 1 ms pulses at 10 Hz for 50 s: 500 pulses share 100 J/m^2. Rule 3 acts on the thermal limit
    # only: C_p x 18 t^0.75.
    train = pulse_train_limit(420e-9, 50.0, 1e-3, 10.0, limits="eu2006")
    assert float(train.candidates["average_power"]) == pytest.approx(100 / 500)
    assert float(train.candidates["reduced_single_pulse"]) == pytest.approx(500**-0.25 * 18 * 1e-3**0.75)


def test_trains_broadcast_and_agree_with_single_trains() -> None:
    wavelengths = np.array([532e-9, 1064e-9, 1550e-9])
    trains = pulse_train_limit(wavelengths, 1.0, 5e-9, np.array([[10.0], [1e4]]), limits="eu2006")
    assert trains.per_pulse_J_m2.shape == (2, 3)
    for row, prf in enumerate((10.0, 1e4)):
        for column, wavelength in enumerate(wavelengths):
            single = pulse_train_limit(float(wavelength), 1.0, 5e-9, prf, limits="eu2006")
            assert float(trains.per_pulse_J_m2[row, column]) == pytest.approx(float(single.per_pulse_J_m2))
            assert str(trains.governing[row, column]) == str(single.governing)


def test_the_working_shows_every_rule_and_the_governing_one() -> None:
    text = pulse_train_limit(1064e-9, 10.0, 10e-9, 10.0, limits="eu2006").working.as_text()  # type: ignore[union-attr]
    for expected in ("single_pulse candidate", "average_power candidate", "reduced_single_pulse candidate",
                     "governed by reduced_single_pulse", "Table 2.6", "C_P = N_groups^-0.25"):
        assert expected in text


@pytest.mark.parametrize(("pulse_duration", "prf", "exposure", "field", "message"), [
    ("0.2 s", "10 Hz", 10.0, "pulse_duration", "not shorter than the pulse period"),
    ("1 ms", "0 Hz", 10.0, "prf", "out of range"),
    ("1 ms", "-5 Hz", 10.0, "prf", "out of range"),
    ("1 ms", "5 m", 10.0, "prf", "is not a"),
    ("20 ms", "10 Hz", 0.01, "pulse_duration", "longer than the exposure duration"),
    ("0 s", "10 Hz", 10.0, "pulse_duration", "out of range"),
])
def test_it_rejects_impossible_trains(pulse_duration: str, prf: str, exposure: float, field: str,
                                      message: str) -> None:
    with pytest.raises(InputError) as raised:
        pulse_train_limit(532e-9, exposure, pulse_duration, prf)
    assert raised.value.field == field
    assert message in raised.value.message


def test_a_skin_train_under_icnirp2013_has_no_reduced_rule() -> None:
    # ICNIRP 2013 applies C_P to the retinal thermal limits only. Skin, 400-1400 nm: 200 C_A J/m^2
    # for 1-100 ns pulses; at 10 s, the edge between 1.1x10^4 C_A t^0.25 and 2x10^3 C_A W/m^2, the
    # stricter 1.1x10^4 C_A 10^0.25 J/m^2, shared by 100 pulses.
    train = pulse_train_limit(1064e-9, 10.0, 1e-8, 10.0, tissue="skin")
    assert math.isnan(float(train.candidates["reduced_single_pulse"]))
    assert float(train.candidates["single_pulse"]) == pytest.approx(200 * 5)
    assert float(train.candidates["average_power"]) == pytest.approx(1.1e4 * 5 * 10**0.25 / 100)
    assert str(train.governing) == "average_power"
    assert train.working is not None and "not applicable" in train.working.as_text()


@settings(max_examples=200, deadline=None)
@given(limits=st.sampled_from(["icnirp2013", "eu2006"]), tissue=st.sampled_from(["eye", "skin"]),
       wavelength_nm=st.floats(min_value=180.0, max_value=1e6), exposure_exponent=st.floats(min_value=-6, max_value=4.4),
       pulse_exponent=st.floats(min_value=-13, max_value=-3), prf_exponent=st.floats(min_value=0, max_value=8),
       alpha_mrad=st.floats(min_value=0.0, max_value=200.0))
def test_a_train_never_allows_more_than_one_pulse_or_the_whole_exposure_would(
        limits: str, tissue: str, wavelength_nm: float, exposure_exponent: float, pulse_exponent: float,
        prf_exponent: float, alpha_mrad: float) -> None:
    # Table 2.6 rules 1 and 2 (2006/25/EC Annex II) bound every per-pulse limit from above.
    exposure, pulse, prf = 10**exposure_exponent, 10**pulse_exponent, 10**prf_exponent
    assume(pulse * prf < 1 and pulse <= exposure)
    train = pulse_train_limit(wavelength_nm * 1e-9, exposure, pulse, prf, tissue=tissue,
                              source_size_rad=alpha_mrad * 1e-3, limits=limits)
    per_pulse = float(train.per_pulse_J_m2)
    one_pulse = exposure_limit(wavelength_nm * 1e-9, pulse, tissue=tissue, source_size_rad=alpha_mrad * 1e-3,
                               limits=limits)
    whole = exposure_limit(wavelength_nm * 1e-9, exposure, tissue=tissue, source_size_rad=alpha_mrad * 1e-3,
                           limits=limits)
    assert math.isfinite(per_pulse) and per_pulse > 0
    assert per_pulse <= float(one_pulse.radiant_exposure_J_m2) * (1 + 1e-12)
    assert float(train.radiant_exposure_J_m2) <= float(whole.radiant_exposure_J_m2) * (1 + 1e-12)
    assert train.working is not None


def test_the_aperture_follows_the_governing_rule() -> None:
    # 2006/25/EC Annex II Table 2.2 footnote (b): 1400 nm - 0.1 mm, 1 mm for t <= 0.3 s, and
    # Table 2.3 footnote (c): 3.5 mm for t >= 10 s. A 1 us pulse is judged through 1 mm, the
    # 100 s train through 3.5 mm.
    train = pulse_train_limit(10.6e-6, 100.0, 1e-6, 100.0, limits="eu2006")
    assert str(train.governing) == "average_power"
    assert float(train.aperture_m) == pytest.approx(3.5e-3)
    # ICNIRP 2013 limiting apertures, 400-1400 nm: 7 mm whatever the duration
    single = pulse_train_limit(1064e-9, 10.0, 10e-9, 10.0)
    assert float(single.aperture_m) == pytest.approx(7e-3)


def test_a_pulse_shorter_than_the_tables_is_assessed_at_their_first_column_and_says_so() -> None:
    # ICNIRP 2013 and 2006/25/EC Annex II start their duration columns at 100 fs (10^-13 s); a 35 fs
    # Ti:sapphire pulse is assessed with the 100 fs limits (from memory: the tables hold them to that edge).
    short = pulse_train_limit(800e-9, 10.0, "35 fs", "80 MHz")
    tabulated = pulse_train_limit(800e-9, 10.0, "100 fs", "80 MHz")
    assert float(short.per_pulse_J_m2) == float(tabulated.per_pulse_J_m2)
    assert float(short.pulse_duration_s) == pytest.approx(1e-13)
    [warning] = short.warnings_at(0)
    assert "35 fs" in warning and "100 fs" in warning
    assert tabulated.warnings_at(0) == []
    assert short.to_dict()["warnings"] == [warning]
