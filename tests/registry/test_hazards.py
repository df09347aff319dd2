"""Hazard results: an emission mapped to the engine, assessed under every limit set and
stored beside the emission; refreshed when the emission changes."""
from __future__ import annotations

import math
from dataclasses import replace
from io import StringIO

import pytest
from django.core.management import CommandError, call_command

from hazards import ENGINE_VERSION
from hazards.assessment import assess
from hazards.limits import LIMIT_SETS
from hazards.units import format_for_people
from registry.models import Emission, HazardResult, Person
from registry.services import emission_create, emission_update, laser_update
from registry.services.campus import campus_load, campus_read
from registry.services.hazards import emission_beam, emission_scenario, hazard_results_refresh
from tests import factories

pytestmark = pytest.mark.django_db


@pytest.fixture
def researcher() -> Person:
    return factories.PersonFactory.create(role="researcher")


def helium_neon(researcher: Person, **changes: object) -> Emission:
    laser = factories.LaserFactory.create(labelled_class="3R", owner=researcher)
    fields: dict[str, object] = {"label": "red line", "wavelength_m": "632.8 nm", "temporal_mode": "cw",
                                 "average_power_W": "5 mW", "beam_diameter_m": "0.8 mm", "divergence_rad": "1 mrad",
                                 "diameter_definition": "1/e2"}
    fields.update(changes)
    return emission_create(laser=laser, by=researcher, **fields)


def test_a_new_emission_is_assessed_under_every_limit_set(researcher: Person) -> None:
    emission = helium_neon(researcher)
    results = {result.limits: result for result in emission.hazard_results.all()}
    assert set(results) == set(LIMIT_SETS)
    for result in results.values():
        # Visible beam, aversion response: 0.25 s (common practice; the engine's default).
        assert result.exposure_s == pytest.approx(0.25)
        # EU 2006/25/EC Annex II Table 2.2, 400-700 nm, 1.8e-5 s to 10 s: H = 18 t^0.75 J/m^2,
        # so 6.36 J/m^2 over 0.25 s, E = 25.5 W/m^2.
        assert result.eye_mpe_J_m2 == pytest.approx(18 * 0.25 ** 0.75, rel=0.01)
        assert result.eye_mpe_W_m2 == pytest.approx(18 * 0.25 ** 0.75 / 0.25, rel=0.01)
        # The whole 0.8 mm beam passes the 7 mm limiting aperture: 5 mW / (pi (3.5 mm)^2) = 130 W/m^2,
        # OD = log10(130 / 25.5) = 0.71, rounded up to 1 (EN 207 Annex B).
        assert result.od_required == 1
        assert result.nohd_m is not None and result.nohd_m > 0
        assert result.working and all("formula" in step for step in result.working)
        assert result.engine_version


def test_the_stored_figures_are_the_engines_own(researcher: Person) -> None:
    emission = helium_neon(researcher)
    for limits in LIMIT_SETS:
        expected = assess(emission_beam(emission), emission_scenario(emission, limits=limits)).to_dict()
        stored = emission.hazard_results.get(limits=limits)
        assert stored.nohd_m == pytest.approx(expected["nohd_m"])
        assert stored.diffuse_hazard_distance_m == pytest.approx(expected["diffuse_hazard_distance_m"])
        assert stored.od_required == expected["od_required"]
        assert stored.od_exact == pytest.approx(expected["od_exact"])
        assert stored.en207_marking == " + ".join(expected["en207"]["markings"])
        assert stored.en207_requirements == expected["en207"]["requirements"]


def test_ten_times_the_power_needs_one_more_optical_density(researcher: Person) -> None:
    emission = helium_neon(researcher)
    before = emission.hazard_results.get(limits="icnirp2013")
    emission_update(emission=emission, by=researcher, average_power_W="50 mW")
    after = emission.hazard_results.get(limits="icnirp2013")
    # OD = log10(exposure / MPE): ten times the exposure adds exactly 1 (0.71 -> 1.71, rounded up to 2).
    assert (before.od_required, after.od_required) == (1, 2)
    assert after.nohd_m > before.nohd_m
    assert after.history.count() == 2


def test_an_emission_without_divergence_keeps_no_result_until_it_has_one(researcher: Person) -> None:
    emission = helium_neon(researcher, divergence_rad=None)
    assert not emission.hazard_results.exists()
    summary = hazard_results_refresh(emissions=[emission])
    assert [(item.pk, reason) for item, reason in summary.not_assessed] == [
        (emission.pk, f"full-angle divergence (rad): needed to assess the hazard of {emission}")]
    emission_update(emission=emission, by=researcher, divergence_rad="1 mrad")
    assert emission.hazard_results.count() == len(LIMIT_SETS)


def test_a_collimated_beam_above_the_mpe_has_an_unbounded_nohd(researcher: Person) -> None:
    emission = helium_neon(researcher, divergence_rad=0)
    result = emission.hazard_results.get(limits="icnirp2013")
    assert (result.nohd_m, result.nohd_unbounded) == (None, True)


def test_a_tunable_range_is_assessed_at_its_worst_wavelength(researcher: Person) -> None:
    emission = helium_neon(researcher, label="tunable", wavelength_m="700 nm", wavelength_max_m="1000 nm",
                           average_power_W="1 W", beam_diameter_m="1 mm", divergence_rad="1 mrad")
    result = emission.hazard_results.get(limits="icnirp2013")
    ends = [assess(emission_beam(emission, wavelength_m=wavelength), emission_scenario(emission, limits="icnirp2013"))
            for wavelength in (700e-9, 1000e-9)]
    assert result.nohd_m >= max(item.nohd_m or 0.0 for item in ends) * (1 - 1e-9)
    assert result.od_required >= max(item.od_required for item in ends)
    assert any(warning.startswith("Tunable from 700 nm to 1000 nm") for warning in result.warnings)


def test_pulses_shorter_than_the_tables_are_assessed_at_100_fs_with_the_engines_warning(researcher: Person) -> None:
    # ICNIRP 2013 and 2006/25/EC Annex II start at 100 fs; the register says what the command line says.
    emission = factories.EmissionFactory.create(temporal_mode="repetitive", pulse_duration_s=35e-15, prf_Hz=1e3,
                                                pulse_energy_J=4e-3, average_power_W=4.0)
    hazard_results_refresh(emissions=[emission])
    result = emission.hazard_results.get(limits="icnirp2013")
    expected = assess(emission_beam(emission), emission_scenario(emission, limits="icnirp2013")).to_dict()
    tabulated = assess(replace(emission_beam(emission), pulse_duration_s=1e-13),
                       emission_scenario(emission, limits="icnirp2013")).to_dict()
    assert emission_beam(emission).pulse_duration_s == 35e-15  # the register keeps what was typed
    assert result.od_exact == pytest.approx(tabulated["od_exact"]) and result.nohd_m == pytest.approx(tabulated["nohd_m"])
    [warning] = [text for text in expected["warnings"] if "35 fs" in text]
    assert warning in result.warnings


def test_changing_the_laser_class_refreshes_its_results(researcher: Person) -> None:
    emission = helium_neon(researcher)
    first = emission.hazard_results.get(limits="icnirp2013").computed_at
    laser_update(laser=emission.laser, by=researcher, labelled_class="2")
    result = emission.hazard_results.get(limits="icnirp2013")
    assert result.computed_at > first
    # 5 mW is beyond the class 2 limit of 1 mW (IEC 60825-1:2014 Table 4), so the class check warns.
    assert any("class" in warning.lower() for warning in result.warnings)


def test_refreshing_current_results_writes_nothing(researcher: Person) -> None:
    emission = helium_neon(researcher)
    history = HazardResult.history.count()
    summary = hazard_results_refresh(emissions=Emission.objects.filter(pk=emission.pk), only_stale=True)
    assert (summary.assessed, summary.not_assessed) == (0, [])
    assert HazardResult.history.count() == history


def test_the_demo_campus_stores_results_for_the_emissions_it_can_assess() -> None:
    summary = campus_load(data=campus_read())
    failed = {name for name, _ in summary.not_assessed}
    assessed = Emission.objects.exclude(hazard_results=None)
    assert assessed.count() + len(failed) == Emission.objects.count()
    for emission in assessed:
        assert emission.hazard_results.count() == len(LIMIT_SETS)
        for result in emission.hazard_results.all():
            assert result.nohd_unbounded or (result.nohd_m is not None and math.isfinite(result.nohd_m))


def test_every_demo_emission_assesses_but_the_one_awaiting_its_divergence() -> None:
    # FV-0029 is pending review because its data sheet gives no divergence (the demo's "not assessed" case).
    summary = campus_load(data=campus_read())
    assert summary.not_assessed == [("FV-0029 450 nm continuous wave",
                                     "full-angle divergence (rad): needed to assess the hazard of FV-0029 450 nm "
                                     "continuous wave")]


def test_a_pulse_train_stores_the_per_pulse_limit_and_the_rule_that_governs(researcher: Person) -> None:
    laser = factories.LaserFactory.create(labelled_class="4", owner=researcher)
    emission = emission_create(laser=laser, by=researcher, label="fundamental", wavelength_m="1064 nm",
                               temporal_mode="q_switched", average_power_W="1 W", pulse_energy_J="100 mJ",
                               pulse_duration_s="10 ns", prf_Hz="10 Hz", beam_diameter_m="5 mm",
                               divergence_rad="1 mrad", diameter_definition="1/e2")
    result = emission.hazard_results.get(limits="eu2006")
    # Infrared: 10 s exposure (common practice), so N = 10 Hz x 10 s = 100 pulses.
    assert result.exposure_s == pytest.approx(10)
    # EU 2006/25/EC Annex II Table 2.2, 1050-1400 nm, 1e-9 to 5e-5 s: H = 5e-2 C_C C_E J/m^2 (C_C = 1 at
    # 1064 nm, point source); Table 2.6 rule 3: times C_P = N^-0.25 = 100^-0.25. Rule 2 (Table 2.2,
    # 90 t^0.75 J/m^2 at 10 s, shared by 100 pulses = 5.06 J/m^2) is far less strict.
    assert result.eye_mpe_per_pulse_J_m2 == pytest.approx(5e-2 * 100 ** -0.25, rel=1e-3)
    assert result.pulse_rule == "reduced_single_pulse"


def test_a_continuous_beam_has_no_per_pulse_limit(researcher: Person) -> None:
    result = helium_neon(researcher).hazard_results.get(limits="icnirp2013")
    assert result.eye_mpe_per_pulse_J_m2 is None
    assert result.pulse_rule == "continuous wave"


@pytest.mark.django_db
def test_the_reason_an_emission_is_not_assessed_is_kept_and_cleared_once_it_assesses() -> None:
    from registry.services import emission_create, emission_update

    laser = factories.LaserFactory.create()
    emission = emission_create(laser=laser, by=None, wavelength_m="532 nm", temporal_mode="cw",
                               average_power_W="5 mW", beam_diameter_m="1 mm")
    emission.refresh_from_db()
    assert "divergence" in emission.assessment_problem
    assert not emission.hazard_results.exists()
    emission_update(emission=emission, by=None, divergence_rad="1 mrad")
    emission.refresh_from_db()
    assert emission.assessment_problem == ""
    assert emission.hazard_results.count() == 2


def test_recompute_lists_each_changed_figure_with_old_and_new(researcher: Person) -> None:
    emission = helium_neon(researcher)
    # As if stored by an earlier engine: a lower OD and a shorter NOHD than today's figures.
    HazardResult.objects.filter(emission=emission, limits="icnirp2013").update(od_required=0.0, nohd_m=1.0,
                                                                               engine_version="0.1.0")
    fresh = helium_neon(researcher, label="second line")
    out = StringIO()
    call_command("recompute_hazards", stdout=out)
    lines = out.getvalue().splitlines()
    result = emission.hazard_results.get(limits="icnirp2013")
    assert result.engine_version == ENGINE_VERSION
    assert lines[:-1] == [f"changed: {emission} [icnirp2013]: OD 0 -> OD {result.od_required:g}, "
                          f"NOHD 1 m -> {format_for_people(result.nohd_m, 'm')}"]
    assert lines[-1].startswith("Recomputed 2 emissions under icnirp2013, eu2006")
    assert "1 results changed" in lines[-1]
    assert fresh.hazard_results.count() == 2


def test_recompute_for_one_limit_set_leaves_the_other_alone(researcher: Person) -> None:
    emission = helium_neon(researcher)
    before = emission.hazard_results.get(limits="eu2006").computed_at
    call_command("recompute_hazards", "--limits", "icnirp2013", stdout=StringIO())
    assert emission.hazard_results.get(limits="eu2006").computed_at == before
    assert emission.hazard_results.get(limits="icnirp2013").computed_at > before


def test_recompute_refuses_an_unknown_limit_set() -> None:
    with pytest.raises(CommandError, match="unknown limit set 'ansi'"):
        call_command("recompute_hazards", "--limits", "ansi", stdout=StringIO())


def test_recompute_is_all_or_nothing(researcher: Person) -> None:
    first, second = helium_neon(researcher), helium_neon(researcher, label="second line")
    stamps = {result.pk: result.computed_at for result in HazardResult.objects.all()}
    calls = 0

    def fail_on_the_second(emissions_done: int) -> None:
        nonlocal calls
        calls += 1
        if calls == 2:
            raise RuntimeError("the disk filled up")

    with pytest.raises(RuntimeError):
        hazard_results_refresh(emissions=[first, second], progress=fail_on_the_second)
    assert {result.pk: result.computed_at for result in HazardResult.objects.all()} == stamps
