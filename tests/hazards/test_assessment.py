"""The assessment facade, request parsing and the ``assess`` command, on top of the limits engine."""
from __future__ import annotations

import json
import math
from typing import Any

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from hazards.assessment import Beam, Scenario, assess, json_safe, parse_assessment_request
from hazards.cli import main
from hazards.errors import InputError
from hazards.limits import pulse_train_limit

CONTRACT_KEYS = ("nohd_m", "nohd_unbounded", "od_required", "od_exact", "en207", "diffuse_hazard_distance_m",
                 "skin_hazard_distance_m", "eye_limit", "warnings", "working", "exposure_basis",
                 "governing_pulse_rule", "engine_version", "caution")

GREEN_5W: dict[str, object] = {"wavelength": "532nm", "power": "5W", "beam_diameter": "2mm", "divergence": "1mrad"}


def _assess(**request: object) -> dict[str, Any]:
    beam, scenario = parse_assessment_request(request)
    result: dict[str, Any] = assess(beam, scenario).to_dict()
    return result


def test_the_green_5_w_beam_gives_the_hand_figures() -> None:
    # ICNIRP 2013 Table 5 (= EU 2006/25/EC Annex II Table 2.2), 400-700 nm, 0.25 s default aversion time:
    # H = 18 t^0.75 J/m^2 -> E = 25.456 W/m^2 over a 7 mm aperture.
    # NOHD (1/e: a = 1.41421 mm, phi = 0.707107 mrad): sqrt(4 x 5 / (pi 25.456) - a^2) / phi = 707.23 m
    # OD: 5 W / (pi 7 mm^2 / 4 = 3.8485e-5 m^2) = 1.2992e5 W/m^2; log10(1.2992e5 / 25.456) = 3.708 -> 4
    # EN 207: 5 W / (pi 1.41421 mm^2 / 4) = 3.18e6 W/m^2 -> D 532 LB6
    # diffuse, rho = 1, normal viewing: sqrt(5 / (pi 25.456)) = 0.25004 m
    result = _assess(**GREEN_5W)
    assert result["exposure_basis"]["exposure_s"] == 0.25
    assert result["exposure_basis"]["mpe"] == pytest.approx(25.456, rel=2e-3)
    assert result["nohd_m"] == pytest.approx(707.23, rel=2e-3)
    assert result["nohd_unbounded"] is False
    assert result["nohd_form"] == "quadrature"
    assert result["od_exact"] == pytest.approx(3.708, abs=2e-3)
    assert result["od_required"] == 4
    assert result["en207"]["markings"] == ["D 532 LB6"]
    assert result["diffuse_hazard_distance_m"] == pytest.approx(0.25004, rel=2e-3)
    assert result["governing_pulse_rule"] == "continuous wave"


def test_the_json_has_every_key_the_issue_fixes() -> None:
    result = _assess(**GREEN_5W)
    assert set(CONTRACT_KEYS) <= set(result)
    assert "LSO" in result["caution"] or "laser safety officer" in result["caution"]
    assert result["eye_limit"]["tissue"] == "eye"
    json.dumps(result, allow_nan=False)


def test_a_collimated_beam_is_unbounded_and_still_valid_json() -> None:
    result = _assess(**{**GREEN_5W, "divergence": 0})
    assert result["nohd_m"] is None
    assert result["nohd_unbounded"] is True
    assert result["nohd_optical_aid_unbounded"] is True
    assert any("unbounded" in warning for warning in result["warnings"])
    json.dumps(result, allow_nan=False)


@pytest.mark.parametrize("decades", [1, 2, 3])
def test_od_rises_by_one_per_decade_of_power(decades: int) -> None:
    low = _assess(**{**GREEN_5W, "power": 5e-3})
    high = _assess(**{**GREEN_5W, "power": 5e-3 * 10**decades})
    assert high["od_exact"] - low["od_exact"] == pytest.approx(decades, abs=1e-9)


def test_a_given_exposure_replaces_the_default_and_is_reported() -> None:
    # ICNIRP 2013 Table 5, 400-1400 nm, t >= 10 s, alpha <= 1.5 mrad: E = 10 W/m^2 (the t >= 10 s row
    # applies at 10 s itself), so NOHD = sqrt(4 x 5 / (pi 10) - a^2) / phi = sqrt(0.63662) / 0.000707107 = 1128.4 m
    result = _assess(**GREEN_5W, exposure="10 s")
    assert result["exposure_basis"]["how"] == "given"
    assert result["exposure_basis"]["mpe"] == pytest.approx(10.0, rel=1e-3)
    expected = math.sqrt(4 * 5 / (math.pi * result["exposure_basis"]["mpe"]) - (2e-3 / math.sqrt(2)) ** 2) / (
        1e-3 / math.sqrt(2))
    assert result["nohd_m"] == pytest.approx(expected, rel=1e-9)
    assert result["nohd_m"] == pytest.approx(1128.4, abs=0.1)


def test_a_pulse_train_uses_the_governing_per_pulse_limit() -> None:
    # 1064 nm, 10 mJ, 10 ns, 10 Hz over the 10 s infrared default: the distance compares 10 mJ with the engine's
    # per-pulse limit, the least of the single-pulse, average-power and reduced single-pulse rules.
    result = _assess(wavelength="1064nm", pulse_energy="10mJ", pulse_duration="10ns", prf="10Hz",
                     beam_diameter="5mm", divergence="1mrad", diameter_at="1/e")
    train = pulse_train_limit(1064e-9, 10.0, 10e-9, 10.0)
    per_pulse = float(train.per_pulse_J_m2)
    assert per_pulse == pytest.approx(min(float(value) for value in train.candidates.values()))
    assert result["governing_pulse_rule"] == str(train.governing)
    assert result["exposure_basis"]["mpe"] == pytest.approx(per_pulse)
    expected = math.sqrt(4 * 0.01 / (math.pi * per_pulse) - 5e-3**2) / 1e-3
    assert result["nohd_m"] == pytest.approx(expected, rel=1e-9)
    assert result["beam"]["average_power_W"] == pytest.approx(0.1)
    assert [marking.split()[0] for marking in result["en207"]["markings"]] == ["D", "R"]


def test_both_limit_sets_assess() -> None:
    icnirp = _assess(**GREEN_5W, limits="icnirp2013")
    eu = _assess(**GREEN_5W, limits="eu2006")
    assert icnirp["limits"] == "icnirp2013" and eu["limits"] == "eu2006"
    # 400-700 nm at 0.25 s both sets give 18 t^0.75 J/m^2 (ICNIRP 2013 Table 5; 2006/25/EC Table 2.2)
    assert eu["nohd_m"] == pytest.approx(icnirp["nohd_m"], rel=1e-3)


def test_the_skin_distance_uses_the_skin_limit() -> None:
    result = _assess(**GREEN_5W)
    skin = result["skin_limit"]
    assert skin["record"]["tissue"] == "skin"
    mpe = result["exposure_basis"]
    assert mpe["skin_exposure_s"] == 10.0  # no aversion response for the skin: 10 s (common practice)
    irradiance = skin["mpe"]
    critical = math.sqrt(4 * 5 / (math.pi * irradiance))
    expected = 0.0 if critical <= max(skin["aperture_m"], 2e-3 / math.sqrt(2)) else math.sqrt(
        critical**2 - (2e-3 / math.sqrt(2)) ** 2) / (1e-3 / math.sqrt(2))
    assert result["skin_hazard_distance_m"] == pytest.approx(expected, rel=1e-9)


def test_eyewear_and_class_checks_appear_in_the_result() -> None:
    result = _assess(**GREEN_5W, laser_class="3R", eyewear=["D 532 LB4"])
    assert result["class_check"]["labelled_class"] == "3R"
    assert any("class 3R" in warning for warning in result["warnings"])
    assert result["eyewear_check"]["status"] == "inadequate"
    assert result["eyewear_check"]["lb_shortfall"] == {"D": 2}


# Typical emissions of a university's laser rooms (illustrative, not real products), each kind once.
LAB_EMISSIONS: list[dict[str, object]] = [
    {"wavelength": "632.8nm", "power": "1mW", "beam_diameter": "0.8mm", "divergence": "1.2mrad", "laser_class": "2"},
    {"wavelength": "405nm", "power": "20mW", "beam_diameter": "1mm", "divergence": "0.5mrad", "laser_class": "3B"},
    {"wavelength": "800nm", "power": "2W", "pulse_duration": "100fs", "prf": "80MHz", "beam_diameter": "2mm",
     "divergence": "0.6mrad", "laser_class": "4"},
    {"wavelength": "1064nm", "pulse_energy": "450mJ", "pulse_duration": "8ns", "prf": "10Hz",
     "beam_diameter": "9mm", "divergence": "0.5mrad", "laser_class": "4"},
    {"wavelength": "532nm", "pulse_energy": "200mJ", "pulse_duration": "6ns", "beam_diameter": "9mm",
     "divergence": "0.5mrad"},
    {"wavelength": "10.6um", "power": "50W", "beam_diameter": "6mm", "divergence": "2mrad", "laser_class": "4"},
    {"wavelength": "248nm", "pulse_energy": "200mJ", "pulse_duration": "20ns", "prf": "100Hz",
     "beam_diameter": "10mm", "divergence": "2mrad", "diameter_at": "1/e"},
    {"wavelength": "1550nm", "power": "5W", "beam_diameter": "1mm", "divergence": "1mrad", "fibre_na": 0.14,
     "fibre_core": "9um"},
    {"wavelength": "355nm", "power": "3W", "pulse_duration": "15ns", "prf": "50kHz", "beam_diameter": "1mm",
     "divergence": "1mrad", "exposure": "30000s"},
    {"wavelength": "980nm", "power": "30W", "beam_diameter": "0.2mm", "divergence": "0.2rad", "focal_length": "50mm"},
    {"wavelength": "633nm", "power": "5mW", "beam_diameter": "1mm", "divergence": 0, "reflectance": 0.8,
     "viewing_angle": "45deg"},
]


@pytest.mark.parametrize("request_values", LAB_EMISSIONS)
def test_every_kind_of_lab_emission_assesses_to_finite_json(request_values: dict[str, object]) -> None:
    result = _assess(**request_values)
    text = json.dumps(result, allow_nan=False)
    assert set(CONTRACT_KEYS) <= set(json.loads(text))
    assert (result["nohd_m"] is None) == result["nohd_unbounded"]
    assert result["od_required"] >= 0


@pytest.mark.parametrize(("changes", "field"), [
    ({"power": "5kg"}, "power"),
    ({"power": "-5W"}, "power"),
    ({"wavelength": "90nm"}, "wavelength"),
    ({"wavelength": "2mm"}, "wavelength"),
    ({"beam_diameter": "0mm"}, "beam_diameter"),
    ({"divergence": "-1mrad"}, "divergence"),
    ({"divergence": None}, "divergence"),
    ({"diameter_at": "1/e3"}, "diameter_at"),
    ({"limits": "ansi2014"}, "limits"),
    ({"exposure": "1 year"}, "exposure"),
    ({"colour": "green"}, "colour"),
    ({"pulse_energy": "10mJ"}, "pulse_duration"),
    ({"prf": "10Hz"}, "pulse_duration"),
    ({"pulse_energy": "10mJ", "pulse_duration": "10ns", "prf": "10Hz"}, "power"),  # 0.1 W implied, 5 W stated
    ({"pulse_duration": "0.2s", "prf": "10Hz"}, "pulse_duration"),  # 0.2 s pulses every 0.1 s
    ({"laser_class": "5"}, "laser_class"),
    ({"reflectance": 1.5}, "reflectance"),
    ({"eyewear": ["goggles"]}, "eyewear"),
    ({"fibre_core": "50um"}, "fibre_na"),
])
def test_bad_requests_name_the_field(changes: dict[str, object], field: str) -> None:
    request = {key: value for key, value in {**GREEN_5W, **changes}.items() if value is not None}
    with pytest.raises(InputError) as error:
        parse_assessment_request(request)
    assert error.value.field == field


@pytest.mark.parametrize(("beam", "scenario", "field"), [
    (Beam(532e-9, None, 2e-3, 1e-3), Scenario(), "power"),
    (Beam(532e-9, 5.0, -2e-3, 1e-3), Scenario(), "beam_diameter"),
    (Beam(532e-9, 5.0, 2e-3, float("nan")), Scenario(), "divergence"),
    (Beam(532e-9, 5.0, 2e-3, 1e-3, diameter_at="fwhm"), Scenario(), "diameter_at"),  # type: ignore[arg-type]
    (Beam(90e-9, 5.0, 2e-3, 1e-3), Scenario(), "wavelength"),
    (Beam(532e-9, 5.0, 2e-3, 1e-3), Scenario(diffuse_reflectance=2.0), "reflectance"),
    (Beam(532e-9, 5.0, 2e-3, 1e-3), Scenario(fibre_na=1.5), "fibre_na"),
    (Beam(532e-9, 5.0, 2e-3, 1e-3), Scenario(limits="ansi"), "limits"),
])
def test_a_beam_or_scenario_built_in_code_is_checked_too(beam: Beam, scenario: Scenario, field: str) -> None:
    with pytest.raises(InputError) as error:
        assess(beam, scenario)
    assert error.value.field == field


def test_the_command_prints_json(capsys: pytest.CaptureFixture[str]) -> None:
    status = main(["assess", "--wavelength", "532nm", "--power", "5W", "--beam-diameter", "2mm",
                   "--divergence", "1mrad", "--json"])
    assert status == 0
    result = json.loads(capsys.readouterr().out)
    assert result["nohd_m"] == pytest.approx(707.23, rel=2e-3)


def test_the_command_prints_a_readable_summary_with_the_caution(capsys: pytest.CaptureFixture[str]) -> None:
    status = main(["assess", "--wavelength", "1064nm", "--power", "1W", "--pulse-energy", "100mJ",
                   "--pulse-duration", "10ns", "--prf", "10Hz", "--beam-diameter", "5mm", "--divergence", "1mrad",
                   "--eyewear", "1064 D LB5 + IR LB7"])
    out = capsys.readouterr().out
    assert status == 0
    assert "NOHD:" in out and " m" in out
    assert "EN 207 rating: D 1064 LB" in out
    assert "never replace" in out
    assert "Limit set: icnirp2013" in out


def test_a_wrong_unit_is_one_line_and_exit_2(capsys: pytest.CaptureFixture[str]) -> None:
    status = main(["assess", "--wavelength", "532nm", "--power", "5kg", "--beam-diameter", "2mm",
                   "--divergence", "1mrad", "--json"])
    err = capsys.readouterr().err
    assert status == 2
    assert err.startswith("error: power:")
    assert err.count("\n") == 1


def test_deliberate_viewing_takes_the_long_default() -> None:
    # common practice (ICNIRP 2013 long-exposure basis): 30 000 s for deliberate long viewing
    result = _assess(**GREEN_5W, deliberate=True)
    assert result["exposure_basis"]["exposure_s"] == 30000.0
    assert "deliberate" in result["exposure_basis"]["how"]


@pytest.mark.parametrize(("value", "expected"), [
    (float("inf"), None),
    (float("nan"), None),
    (np.float64(2.5), 2.5),
    (np.array(3.0), 3.0),
    (np.array([1.0, np.inf]), [1.0, None]),
    ({"a": (np.int64(2), -np.inf)}, {"a": [2, None]}),
])
def test_json_safe_leaves_only_finite_plain_values(value: object, expected: object) -> None:
    assert json_safe(value) == expected


@settings(max_examples=40, deadline=None)
@given(st.floats(min_value=190e-9, max_value=0.9e-3), st.floats(min_value=1e-6, max_value=1e4),
       st.floats(min_value=1e-5, max_value=0.1), st.floats(min_value=0.0, max_value=0.5),
       st.sampled_from(["icnirp2013", "eu2006"]))
def test_any_continuous_emission_gives_finite_json(wavelength: float, power: float, diameter: float,
                                                   divergence: float, limits: str) -> None:
    result = _assess(wavelength=wavelength, power=power, beam_diameter=diameter, divergence=divergence,
                     limits=limits)
    json.dumps(result, allow_nan=False)
    assert (result["nohd_m"] is None) == result["nohd_unbounded"]
    assert result["od_required"] >= 0


@pytest.mark.parametrize(("option", "value", "field"), [
    ("--limits", "ansi2014", "limits"), ("--diameter-at", "fwhm", "diameter_at"), ("--class", "IIIb", "laser_class"),
    ("--wavelength", "90nm", "wavelength"), ("--exposure", "5 kg", "exposure"),
])
def test_every_bad_option_is_one_line_naming_the_field(capsys: pytest.CaptureFixture[str], option: str, value: str,
                                                       field: str) -> None:
    arguments = {"--wavelength": "532nm", "--power": "5W", "--beam-diameter": "2mm", "--divergence": "1mrad",
                 option: value}
    status = main(["assess", *[part for pair in arguments.items() for part in pair]])
    err = capsys.readouterr().err
    assert status == 2
    assert err.startswith(f"error: {field}:")
    assert err.count("\n") == 1


BATCH_HEADER = "wavelength_m,power_W,pulse_energy_J,pulse_duration_s,prf_Hz,beam_diameter_m,divergence_rad,diameter_at,exposure_s,limits\n"
BATCH_ROWS = [
    ("5.32e-7,0.005,,,,0.002,0.001,1/e2,,icnirp2013", ["--wavelength", "532nm", "--power", "5mW",
                                                      "--beam-diameter", "2mm", "--divergence", "1mrad"]),
    ("9e-8,1,,,,0.002,0.001,1/e2,,icnirp2013", None),  # below 180 nm: refused, the others still print
    ("1.064e-6,,0.1,1e-8,10,0.005,0.0005,1/e,10,eu2006", ["--wavelength", "1064nm", "--pulse-energy", "100mJ",
                                                          "--pulse-duration", "10ns", "--prf", "10Hz",
                                                          "--beam-diameter", "5mm", "--divergence", "0.5mrad",
                                                          "--diameter-at", "1/e", "--exposure", "10s",
                                                          "--limits", "eu2006"]),
    ("2e-6,,0.002,0.001,2,0.0005,0.001,1/e,10,", ["--wavelength", "2um", "--pulse-energy", "2mJ",
                                                  "--pulse-duration", "1ms", "--prf", "2Hz", "--exposure", "10s",
                                                  "--beam-diameter", "0.5mm", "--divergence", "1mrad",
                                                  "--diameter-at", "1/e"]),
]


def _batch_file(tmp_path: Any) -> str:
    path = tmp_path / "beams.csv"
    path.write_text(BATCH_HEADER + "".join(row + "\n" for row, _ in BATCH_ROWS))
    return str(path)


def test_a_batch_file_agrees_with_assess_row_by_row(tmp_path: Any, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["assess", "--batch", _batch_file(tmp_path), "--json"]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert len(lines) == len(BATCH_ROWS)
    for number, (line, (_row, options)) in enumerate(zip(lines, BATCH_ROWS, strict=True), start=1):
        record = json.loads(line)
        if options is None:
            assert record == {"row": number, "error": record["error"]}
            assert record["error"].startswith("wavelength:")
            continue
        assert main(["assess", *options, "--json"]) == 0
        alone = json.loads(capsys.readouterr().out)
        assert "working" not in record
        assert record == {key: value for key, value in alone.items() if key != "working"}


def test_a_batch_adds_the_working_when_asked(tmp_path: Any, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["assess", "--batch", _batch_file(tmp_path), "--json", "--working"]) == 0
    records = [json.loads(line) for line in capsys.readouterr().out.splitlines()]
    assert all(record["working"] for record in records if "error" not in record)


def test_a_batch_without_json_prints_a_line_per_row_and_the_caution(tmp_path: Any,
                                                                    capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["assess", "--batch", _batch_file(tmp_path)]) == 0
    out = capsys.readouterr().out.splitlines()
    assert out[0].startswith("row 1: 532 nm [icnirp2013]: NOHD")
    assert out[1].startswith("row 2: refused: wavelength:")
    assert "never replace" in out[-1]


@pytest.mark.parametrize(("header", "message"), [
    ("wavelength_m,power_W,colour\n", "unknown column 'colour'"),
    ("power_W,beam_diameter_m,divergence_rad\n", "missing column 'wavelength_m'"),
])
def test_a_batch_with_wrong_columns_is_one_line_and_exit_2(tmp_path: Any, capsys: pytest.CaptureFixture[str],
                                                           header: str, message: str) -> None:
    path = tmp_path / "bad.csv"
    path.write_text(header)
    assert main(["assess", "--batch", str(path), "--json"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: batch:") and message in err
