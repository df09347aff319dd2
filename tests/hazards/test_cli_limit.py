"""``python -m hazards limit``: output shapes, text for people, batch files and errors."""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from hazards.cli import main
from hazards.limits import short_duration_warning

PROJECT_ROOT = Path(__file__).resolve().parents[2]


def run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    try:
        status = main(["limit", *argv])
    except SystemExit as stop:  # argparse's own errors
        status = int(stop.code or 0)
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def test_json_output_has_the_agreed_keys(capsys: pytest.CaptureFixture[str]) -> None:
    status, out, _ = run(capsys, "--wavelength", "1064nm", "--duration", "10s", "--json")
    record = json.loads(out)
    assert status == 0
    assert {"radiant_exposure_J_m2", "irradiance_W_m2", "limits", "tissue", "governing", "working", "aperture_m",
            "duration_s", "wavelength_m", "source_size_rad"} <= set(record)
    # ICNIRP 2013, 1050-1400 nm, t >= 10 s, small source: 10 C_A C_C = 50 W/m^2 (from memory)
    assert record["irradiance_W_m2"] == pytest.approx(50.0)
    assert record["limits"] == "icnirp2013" and record["tissue"] == "eye"
    assert record["governing_row"] == "near-ir-long-small"
    assert any(step["source"].startswith(record["citation"]) for step in record["working"])


def test_pulse_train_json_has_each_rule(capsys: pytest.CaptureFixture[str]) -> None:
    status, out, _ = run(capsys, "--wavelength", "532nm", "--duration", "0.25s", "--pulse-duration", "10ns",
                         "--prf", "10Hz", "--limits", "eu2006", "--json")
    record = json.loads(out)
    assert status == 0
    assert set(record["candidates"]) == {"single_pulse", "average_power", "reduced_single_pulse"}
    # 2006/25/EC Annex II Table 2.2 (5x10^-3 J/m^2, 1 ns - 18 us) and Table 2.6 rule 3 with N = 3
    assert record["per_pulse_J_m2"] == pytest.approx(5e-3 * 3**-0.25)
    assert record["governing"] == "reduced_single_pulse"
    assert record["citations"]["reduced_single_pulse"] == "2006/25/EC Annex II Table 2.2, 400-700 nm, 10^-9 - 1.8x10^-5 s"
    assert record["citations"]["average_power"] == "2006/25/EC Annex II Table 2.2, 400-700 nm, 1.8x10^-5 - 10 s"


def test_pulse_train_text_names_the_rule_and_its_source(capsys: pytest.CaptureFixture[str]) -> None:
    status, out, _ = run(capsys, "--wavelength", "1064nm", "--duration", "10s", "--pulse-duration", "10ns",
                         "--prf", "10Hz", "--limits", "eu2006")
    assert status == 0
    assert "governed by the reduced_single_pulse rule" in out
    assert "source: 2006/25/EC Annex II Table 2.2, 1050-1400 nm, 10^-9 - 5x10^-5 s" in out
    assert "N = 100 pulses" in out and "Caution:" in out


def test_text_output_states_units_basis_source_and_caution(capsys: pytest.CaptureFixture[str]) -> None:
    status, out, _ = run(capsys, "--wavelength", "0.532 um", "--limits", "eu2006")
    assert status == 0
    assert "J/m^2" in out and "W/m^2" in out
    # the default duration of common practice is reported (0.25 s aversion response)
    assert "250 ms (default of common practice: 0.25 s, the aversion response" in out
    assert "2006/25/EC Annex II Table 2.2, 400-700 nm, 1.8x10^-5 - 10 s" in out
    assert "never replace" in out and "laser safety officer" in out


def test_text_output_carries_the_from_memory_marks(capsys: pytest.CaptureFixture[str]) -> None:
    _, out, _ = run(capsys, "--wavelength", "532nm", "--duration", "10ns")
    # ICNIRP 2013, 400-700 nm, 10 ps - 5 us: a 2013 change, carried from memory in the data
    assert "10 ps - 5 us: from memory" in out


def test_infrared_defaults_to_ten_seconds_and_deliberate_viewing_to_a_working_day(
        capsys: pytest.CaptureFixture[str]) -> None:
    _, out, _ = run(capsys, "--wavelength", "1064nm", "--json")
    assert json.loads(out)["duration_s"] == 10.0
    _, out, _ = run(capsys, "--wavelength", "532nm", "--deliberate", "--json")
    assert json.loads(out)["duration_s"] == 3e4


@pytest.mark.parametrize(("argv", "named"), [
    (["--wavelength", "90nm", "--duration", "1s"], "wavelength: '90nm' is out of range: allowed from 180 nm to 1 mm"),
    (["--wavelength", "2mm", "--duration", "1s"], "wavelength"),
    (["--wavelength", "532nm", "--duration", "1e5 s"], "duration: '1e5 s' is out of range"),
    (["--wavelength", "532nm", "--duration", "5kg"], "duration: '5kg' is not a duration"),
    (["--wavelength", "532nm", "--source-size=-1mrad"], "source_size"),
    (["--wavelength", "532nm", "--source-size", "3 ns"], "source_size"),
    (["--wavelength", "532nm", "--pulse-duration", "10ns"], "prf"),
    (["--wavelength", "532nm", "--pulse-duration", "0.2s", "--prf", "10Hz"], "pulse_duration"),
    (["--duration", "1s"], "wavelength: required"),
])
def test_bad_input_gets_one_line_and_exit_status_2(capsys: pytest.CaptureFixture[str], argv: list[str],
                                                   named: str) -> None:
    status, out, err = run(capsys, *argv)
    assert status == 2
    assert out == ""
    assert err.startswith("error: ") and named in err
    assert len(err.strip().splitlines()) == 1


@pytest.mark.parametrize(("argv", "named"), [
    (["--wavelength", "532nm", "--tissue", "hair"], "tissue: 'hair' is not a tissue this engine knows: allowed eye, skin"),
    (["--wavelength", "532nm", "--limits", "ansi"], "limits: 'ansi' is not a known limit set: allowed icnirp2013, eu2006"),
    (["--batch", "unused.csv", "--limits", "ansi"], "limits: 'ansi' is not a known limit set"),
])
def test_an_unknown_tissue_or_limit_set_is_one_line_naming_the_allowed_values(
        capsys: pytest.CaptureFixture[str], argv: list[str], named: str) -> None:
    status, _, err = run(capsys, *argv)
    assert status == 2
    assert err.startswith("error: ") and named in err
    assert len(err.strip().splitlines()) == 1


def test_batch_prints_one_object_per_line_in_order(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    batch = tmp_path / "points.csv"
    batch.write_text("wavelength_m,duration_s,source_size_rad,tissue,pulse_duration_s,prf_Hz\n"
                     "1.064e-6,10,0.0015,eye,,\n"
                     "5.32e-7,0.25,0.0015,skin,,\n"
                     "1.064e-6,10,0,eye,1e-8,10\n"
                     "5.32e-7,0.25,0,eye,,\n")
    status, out, _ = run(capsys, "--batch", str(batch), "--limits", "eu2006", "--json")
    records = [json.loads(line) for line in out.splitlines()]
    assert status == 0
    assert [record["tissue"] for record in records] == ["eye", "skin", "eye", "eye"]
    # 2006/25/EC Annex II Table 2.3: 10 C_A C_C = 50 W/m^2 at 1064 nm (alpha = 1.5 mrad counts as small)
    assert records[0]["irradiance_W_m2"] == pytest.approx(50.0)
    # Table 2.4, 400-1400 nm, 10^-7 - 10 s: 1.1x10^4 C_A t^0.25
    assert records[1]["radiant_exposure_J_m2"] == pytest.approx(1.1e4 * 0.25**0.25)
    # Table 2.2 and 2.6 rule 3: 5x10^-2 x 100^-0.25 per pulse
    assert records[2]["per_pulse_J_m2"] == pytest.approx(5e-2 * 100**-0.25)
    # Table 2.2, 400-700 nm: 18 t^0.75 at 0.25 s
    assert records[3]["radiant_exposure_J_m2"] == pytest.approx(18 * 0.25**0.75)


@pytest.mark.parametrize(("content", "named"), [
    ("wavelength_m,duration_s,tissue\n5e-7,1,eye\n", "line 1: missing column(s) source_size_rad"),
    ("wavelength_m,duration_s,source_size_rad,tissue\n5e-7,1,0,eye\n9e-8,1,0,eye\n",
     "line 3, column wavelength_m: '9e-8' is out of range"),
    ("wavelength_m,duration_s,source_size_rad,tissue\n5e-7,abc,0,eye\n", "line 2, column duration_s"),
    ("wavelength_m,duration_s,source_size_rad,tissue\n5e-7,1,0,nose\n", "line 2, column tissue: 'nose'"),
    ("wavelength_m,duration_s,source_size_rad,tissue,pulse_duration_s,prf_Hz\n5e-7,1,0,eye,1e-8,\n",
     "line 2, column prf_Hz"),
    ("wavelength_m,duration_s,source_size_rad,tissue,pulse_duration_s,prf_Hz\n5e-7,1,0,eye,0.5,10\n",
     "line 2, column pulse_duration_s: 0.5 s is not shorter than the pulse period"),
])
def test_a_bad_batch_row_names_its_line_and_column(capsys: pytest.CaptureFixture[str], tmp_path: Path,
                                                   content: str, named: str) -> None:
    batch = tmp_path / "points.csv"
    batch.write_text(content)
    status, out, err = run(capsys, "--batch", str(batch))
    assert status == 2
    assert out == ""
    assert named in err and len(err.strip().splitlines()) == 1


def test_a_missing_batch_file_is_a_clear_error(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    status, _, err = run(capsys, "--batch", str(tmp_path / "absent.csv"))
    assert status == 2
    assert "batch: cannot read" in err


def test_the_module_runs_as_a_command_without_tracebacks() -> None:
    good = subprocess.run([sys.executable, "-m", "hazards", "limit", "--wavelength", "1.064 um", "--duration", "10s",
                           "--json"], cwd=PROJECT_ROOT, capture_output=True, text=True, check=False)
    assert good.returncode == 0
    assert json.loads(good.stdout)["irradiance_W_m2"] == pytest.approx(50.0)
    bad = subprocess.run([sys.executable, "-m", "hazards", "limit", "--wavelength", "532nm", "--duration", "5kg"],
                         cwd=PROJECT_ROOT, capture_output=True, text=True, check=False)
    assert bad.returncode == 2
    assert "Traceback" not in bad.stderr and "duration" in bad.stderr


def test_text_output_shows_both_halves_of_a_dual_limit(capsys: pytest.CaptureFixture[str]) -> None:
    # 2006/25/EC Annex II Table 2.3 (unverified), 450 nm, 50 s: photochemical 100 J/m^2, thermal 500 J/m^2
    status, out, _ = run(capsys, "--wavelength", "450nm", "--duration", "50s", "--limits", "eu2006")
    assert status == 0
    assert "photochemical, 2006/25/EC Annex II Table 2.3" in out and "H = 100 J/m^2 over 7 mm" in out
    assert "H = 500 J/m^2 over 7 mm" in out


def test_a_duration_below_the_tables_is_assessed_at_100_fs_and_says_so(capsys: pytest.CaptureFixture[str]) -> None:
    # ICNIRP 2013 starts at 100 fs; a 35 fs exposure gets the 100 fs limit and the one warning that the
    # assessment and the register print too (hazards.limits.short_duration_warning).
    status, out, _ = run(capsys, "--wavelength", "800nm", "--duration", "35fs", "--json")
    record = json.loads(out)
    assert status == 0
    assert record["duration_s"] == pytest.approx(1e-13)
    assert record["warnings"] == [short_duration_warning(35e-15, 1e-13)]
    status, out, _ = run(capsys, "--wavelength", "800nm", "--duration", "1s", "--pulse-duration", "35fs",
                         "--prf", "80MHz")
    assert status == 0 and f"Warning: {short_duration_warning(35e-15, 1e-13)}" in out
