"""Physical inputs in the admin typed with units, and hazard figures shown with unit, basis,
working and the caution."""
from __future__ import annotations

import math
from typing import Any

import pytest
from django import forms
from django.test import Client
from django.urls import reverse
from django.utils.html import escape

from hazards.units import format_for_input
from hazards.working import StepDict
from registry.forms import QuantityField
from registry.models import Emission, HazardResult
from registry.services import person_create
from registry.templatetags import hazard_figures
from hazards.caution import CAUTION
from tests import factories

# Unit conversions below are the SI prefixes and derived units of the BIPM SI Brochure
# (9th edition, 2019), Tables 4 and 7; 1 mrad = 1e-3 rad by the milli prefix.
WAVELENGTH = QuantityField(name="wavelength", unit="m", display_unit="nm", minimum=180e-9, maximum=1e-3)
POWER = QuantityField(name="average power", unit="W", minimum=0.0, inclusive_minimum=False, required=False)
DURATION = QuantityField(name="pulse duration", unit="s", minimum=0.0, inclusive_minimum=False, required=False)
DIVERGENCE = QuantityField(name="full-angle divergence", unit="rad", display_unit="mrad", minimum=0.0,
                           required=False)
DIAMETER = QuantityField(name="beam diameter", unit="m", minimum=0.0, inclusive_minimum=False, required=False)

ACCEPTED: list[tuple[QuantityField, object, float | None]] = [
    (WAVELENGTH, "532 nm", 532e-9),
    (WAVELENGTH, "532nm", 532e-9),
    (WAVELENGTH, "1.064 um", 1.064e-6),
    (WAVELENGTH, "1.064 µm", 1.064e-6),
    (WAVELENGTH, "10.6 micrometer", 10.6e-6),
    (WAVELENGTH, "5.32e-07", 532e-9),  # a bare number is in the documented SI unit
    (WAVELENGTH, 5.32e-07, 532e-9),
    (WAVELENGTH, "180 nm", 180e-9),  # the lower edge of the limit sets is allowed
    (POWER, "5 mW", 5e-3),
    (POWER, "2.5 kW", 2.5e3),
    (POWER, "0.02", 0.02),
    (POWER, "", None),
    (DURATION, "10 ns", 10e-9),
    (DURATION, "1 ms", 1e-3),
    (DURATION, "120 fs", 120e-15),
    (DIAMETER, "2.3 mm", 2.3e-3),
    (DIAMETER, "0.5 cm", 5e-3),
    (DIVERGENCE, "0.5 mrad", 5e-4),
    (DIVERGENCE, "0", 0.0),  # collimated
]


@pytest.mark.parametrize(("field", "typed", "expected"), ACCEPTED)
def test_the_quantity_field_reads_numbers_and_units_as_si(field: QuantityField, typed: object,
                                                          expected: float | None) -> None:
    value = field.clean(typed)
    if expected is None:
        assert value is None
    else:
        assert value == pytest.approx(expected, rel=1e-12)


REFUSED: list[tuple[QuantityField, object, str]] = [
    (WAVELENGTH, "5 mW", "wavelength: '5 mW' is not a length"),
    (WAVELENGTH, "532 nmm", "wavelength: unknown unit 'nmm'"),
    (WAVELENGTH, "green", "wavelength: cannot read 'green'"),
    (WAVELENGTH, "100 nm", "wavelength: '100 nm' is out of range: allowed from 180 nm to 1 mm"),
    (WAVELENGTH, "2 mm", "wavelength: '2 mm' is out of range"),
    (WAVELENGTH, "", "This field is required."),
    (POWER, "-5 mW", "average power: '-5 mW' is out of range: allowed greater than 0 W"),
    (POWER, "0 W", "average power: '0 W' is out of range"),
    (POWER, "10 ns", "average power: '10 ns' is not a power"),
    (DURATION, "5 m", "pulse duration: '5 m' is not a duration"),
    (DURATION, "nan", "pulse duration: cannot read 'nan'"),
    (DIVERGENCE, "-1 mrad", "full-angle divergence: '-1 mrad' is out of range: allowed at least 0 rad"),
    (DIAMETER, "3 mrad", "beam diameter: '3 mrad' is not a length"),
]


@pytest.mark.parametrize(("field", "typed", "message"), REFUSED)
def test_the_quantity_field_refuses_bad_values_naming_the_field(field: QuantityField, typed: object,
                                                                message: str) -> None:
    with pytest.raises(forms.ValidationError) as caught:
        field.clean(typed)
    assert message in caught.value.messages[0]


@pytest.mark.parametrize(("field", "stored", "shown"), [
    (WAVELENGTH, 532e-9, "532 nm"),
    (WAVELENGTH, 10.6e-6, "10600 nm"),
    (DIAMETER, 2.3e-3, "2.3 mm"),
    (DIVERGENCE, 5e-4, "0.5 mrad"),
    (DURATION, 10e-9, "10 ns"),
    (POWER, 5.0, "5 W"),
    (POWER, 0.005, "5 mW"),
])
def test_the_quantity_field_shows_stored_values_in_a_readable_unit(field: QuantityField, stored: float,
                                                                   shown: str) -> None:
    assert field.prepare_value(stored) == shown


@pytest.mark.parametrize("stored", [532e-9, 1.0642e-6, 1 / 3, 2.718281828459045e-4, 6.02e23, 1.23456789012345e-15])
@pytest.mark.parametrize("unit", ["m", "W", "s", "rad"])
def test_a_shown_value_reads_back_as_the_stored_float(stored: float, unit: str) -> None:
    field = QuantityField(name="value", unit=unit, display_unit="mrad" if unit == "rad" else None)
    shown = field.prepare_value(stored)
    assert math.isclose(field.clean(shown), stored, rel_tol=1e-13)
    assert field.has_changed(stored, shown) is False
    assert field.has_changed(stored, format_for_input(stored * 1.001, unit)) is True


# Display rules of the register (common practice, no source): three significant figures
# for distances, with a metric prefix; "unbounded" where no distance exists.
@pytest.mark.parametrize(("metres", "unbounded", "shown"), [
    (517.4702918042527, False, "517 m"),
    (1410.3, False, "1.41 km"),
    (999.6, False, "1 km"),
    (0.1104, False, "110 mm"),
    (0.0, False, "0 m"),
    (None, False, "not computed"),
    (None, True, "unbounded (the collimated beam stays above the MPE at any distance)"),
])
def test_distances_read_with_three_figures_and_a_unit(metres: float | None, unbounded: bool, shown: str) -> None:
    assert hazard_figures.distance(metres, unbounded) == shown


@pytest.mark.parametrize(("seconds", "shown"), [(0.25, "250 ms"), (10.0, "10 s"), (3.0e4, "30 000 s"),
                                                (1e-8, "10 ns"), (None, "not computed")])
def test_exposure_durations_read_with_three_figures_and_no_kiloseconds(seconds: float | None, shown: str) -> None:
    assert hazard_figures.duration(seconds) == shown


# Issue 10: an OD of 0, whatever it was rounded from, is said in words.
@pytest.mark.parametrize(("required", "exact", "shown"), [
    (0.0, -0.04, "no eyewear needed"), (0.0, None, "no eyewear needed"), (3.0, 2.47, "OD 3 (exact 2.47)"),
    (5.0, None, "OD 5"), (None, None, "not computed")])
def test_optical_densities_say_when_no_eyewear_is_needed(required: float | None, exact: float | None,
                                                          shown: str) -> None:
    assert hazard_figures.optical_density(required, exact) == shown


def test_the_working_reads_as_numbered_lines_with_units_and_sources() -> None:
    working: list[StepDict] = [{"what": "eye MPE", "formula": "H = 18 * t^0.75", "inputs": {"t": 0.25}, "value": 6.364,
                "unit": "J/m^2", "source": "ICNIRP 2013"},
               {"what": "required optical density", "formula": "OD = log10(exposure / MPE), rounded up",
                "inputs": {"rounded_up": 2}, "value": 1.009, "unit": "", "source": "EN 207 Annex B"}]
    assert hazard_figures.working_text(working) == (
        "1. eye MPE: H = 18 * t^0.75 with t = 0.25 -> 6.364 J/m^2  [ICNIRP 2013]\n"
        "2. required optical density: OD = log10(exposure / MPE), rounded up with rounded_up = 2 -> 1.009  "
        "[EN 207 Annex B]")


@pytest.fixture
def lso_client(client: Client) -> Client:
    lso = person_create(username="holloway", role="lso", password="demo-pass-1")
    client.force_login(lso.user)
    return client


def _emission_post(emission: Emission, **typed: str) -> dict[str, object]:
    data: dict[str, object] = {
        "laser": emission.laser.pk, "label": "second harmonic", "wavelength_m": "532 nm", "temporal_mode": "q_switched",
        "average_power_W": "", "pulse_energy_J": "200 mJ", "pulse_duration_s": "10 ns", "prf_Hz": "10 Hz",
        "beam_diameter_m": "6 mm", "diameter_definition": "1/e2", "divergence_rad": "0.5 mrad",
        "source_size_rad": "0 mrad", "fibre_na": "", "notes": "",
    }
    data.update(typed)
    return data


@pytest.mark.django_db
def test_the_emission_page_saves_values_typed_with_units_as_si_floats(lso_client: Client) -> None:
    emission = factories.EmissionFactory.create()
    response = lso_client.post(reverse("admin:registry_emission_change", args=[emission.pk]),
                               _emission_post(emission))
    assert response.status_code == 302
    emission.refresh_from_db()
    assert emission.wavelength_m == pytest.approx(532e-9, rel=1e-12)
    assert emission.pulse_energy_J == pytest.approx(0.2, rel=1e-12)
    assert emission.pulse_duration_s == pytest.approx(10e-9, rel=1e-12)
    assert emission.prf_Hz == 10.0
    assert emission.beam_diameter_m == pytest.approx(6e-3, rel=1e-12)
    assert emission.divergence_rad == pytest.approx(5e-4, rel=1e-12)
    assert emission.average_power_W is None


@pytest.mark.django_db
@pytest.mark.parametrize(("name", "typed", "message"), [
    ("wavelength_m", "532 mW", "wavelength: &#x27;532 mW&#x27; is not a length"),
    ("pulse_duration_s", "-10 ns", "pulse duration: &#x27;-10 ns&#x27; is out of range"),
    ("beam_diameter_m", "6 mmm", "beam diameter at the aperture: unknown unit &#x27;mmm&#x27;"),
    # The engine's bounds and rules (hazards.assessment.inputs), the same as the API's and the command line's:
    ("divergence_rad", "1e308", "full-angle divergence: &#x27;1e308&#x27; is out of range"),
    ("beam_diameter_m", "5 lightyear", "is out of range: allowed from 1 µm to 10 m"),
    ("divergence_rad", "5 percent", "is not an angle"),
    ("pulse_duration_s", "0.2 s", "is not shorter than the pulse period 100 ms at 10 Hz"),
    ("average_power_W", "50 W", "disagrees with pulse energy x prf = 2 W"),
])
def test_a_bad_value_on_the_emission_page_is_shown_on_its_field_and_saves_nothing(
        lso_client: Client, name: str, typed: str, message: str) -> None:
    emission = factories.EmissionFactory.create()
    history_rows = emission.history.count()
    response = lso_client.post(reverse("admin:registry_emission_change", args=[emission.pk]),
                               _emission_post(emission, **{name: typed}))
    assert response.status_code == 200
    form = response.context["adminform"].form
    assert list(form.errors) == [name]
    assert message in response.content.decode()
    emission.refresh_from_db()
    assert (emission.wavelength_m, emission.temporal_mode, emission.pulse_duration_s) == (532e-9, "cw", None)
    assert emission.history.count() == history_rows


def _bound_data(response: Any) -> dict[str, object]:
    """The laser page's form and inline formsets as the browser would post them back unchanged."""
    data: dict[str, object] = {}
    forms_on_page = [response.context["adminform"].form]
    for inline in response.context["inline_admin_formsets"]:
        forms_on_page.append(inline.formset.management_form)
        forms_on_page.extend(inline.formset.forms)
    for form in forms_on_page:
        for bound in form:
            value = bound.value()
            if value is None or value is False:
                continue
            data[bound.html_name] = value
    return data


@pytest.mark.django_db
def test_the_emission_inline_on_the_laser_shows_units_and_takes_them(lso_client: Client) -> None:
    emission = factories.EmissionFactory.create(wavelength_m=532e-9, beam_diameter_m=2.3e-3, divergence_rad=5e-4)
    url = reverse("admin:registry_laser_change", args=[emission.laser.pk])
    page = lso_client.get(url)
    html = page.content.decode()
    assert 'value="532 nm"' in html
    assert 'value="2.3 mm"' in html
    assert 'value="0.5 mrad"' in html
    data = _bound_data(page)
    data["emissions-0-wavelength_m"] = "1064 nm"
    data["emissions-0-average_power_W"] = "5 mW"
    response = lso_client.post(url, data)
    assert response.status_code == 302
    emission.refresh_from_db()
    assert emission.wavelength_m == pytest.approx(1.064e-6, rel=1e-12)
    assert emission.average_power_W == pytest.approx(5e-3, rel=1e-12)
    # Saved unchanged, the other quantities keep their floats.
    assert emission.beam_diameter_m == pytest.approx(2.3e-3, rel=1e-13)
    assert emission.divergence_rad == pytest.approx(5e-4, rel=1e-13)


@pytest.mark.django_db
def test_the_laser_page_saved_unchanged_leaves_its_emissions_alone(lso_client: Client) -> None:
    emission = factories.EmissionFactory.create(wavelength_m=1.0642e-6, average_power_W=1 / 3,
                                                beam_diameter_m=2.718281828459045e-4, divergence_rad=1.23e-4)
    history_rows = emission.history.count()
    url = reverse("admin:registry_laser_change", args=[emission.laser.pk])
    response = lso_client.post(url, _bound_data(lso_client.get(url)))
    assert response.status_code == 302
    emission.refresh_from_db()
    assert (emission.wavelength_m, emission.average_power_W, emission.beam_diameter_m, emission.divergence_rad) == (
        1.0642e-6, 1 / 3, 2.718281828459045e-4, 1.23e-4)
    assert emission.history.count() == history_rows


@pytest.mark.django_db
def test_a_bad_value_in_the_inline_is_shown_on_its_field(lso_client: Client) -> None:
    emission = factories.EmissionFactory.create()
    url = reverse("admin:registry_laser_change", args=[emission.laser.pk])
    data = _bound_data(lso_client.get(url))
    data["emissions-0-wavelength_m"] = "5 mW"
    response = lso_client.post(url, data)
    assert response.status_code == 200
    formset = response.context["inline_admin_formsets"][0].formset
    assert list(formset.errors[0]) == ["wavelength_m"]
    assert "wavelength: &#x27;5 mW&#x27; is not a length" in response.content.decode()
    emission.refresh_from_db()
    assert emission.wavelength_m == 532e-9


@pytest.mark.django_db
def test_a_room_dimension_and_an_eyewear_band_take_units(lso_client: Client) -> None:
    room = factories.LocationFactory.create()
    marking = factories.EyewearMarkingFactory.create(eyewear__location=room)
    response = lso_client.post(reverse("admin:registry_eyewearmarking_change", args=[marking.pk]), {
        "eyewear": marking.eyewear.pk, "wavelength_min_m": "1.06 um", "wavelength_max_m": "1070 nm",
        "optical_density": "6", "en207_conditions": "", "en207_scale": "",
    })
    assert response.status_code == 302
    marking.refresh_from_db()
    assert (marking.wavelength_min_m, marking.wavelength_max_m) == pytest.approx((1.06e-6, 1.07e-6), rel=1e-12)
    page = lso_client.get(reverse("admin:registry_location_change", args=[room.pk]))
    data = _bound_data(page)
    data["longest_dimension_m"] = "850 cm"
    assert lso_client.post(reverse("admin:registry_location_change", args=[room.pk]), data).status_code == 302
    room.refresh_from_db()
    assert room.longest_dimension_m == pytest.approx(8.5, rel=1e-12)


@pytest.mark.django_db
def test_the_result_list_shows_distances_with_units_and_the_caution(lso_client: Client) -> None:
    factories.HazardResultFactory.create(nohd_m=517.4702918042527, od_required=3.0, en207_marking="D LB3")
    factories.HazardResultFactory.create(nohd_m=1410.3, limits="eu2006")
    factories.HazardResultFactory.create(nohd_m=None, nohd_unbounded=True)
    response = lso_client.get(reverse("admin:registry_hazardresult_changelist"))
    html = response.content.decode()
    assert response.status_code == 200
    assert "517 m" in html
    assert "517.47" not in html
    assert "1.41 km" in html
    assert "unbounded" in html
    assert "OD 3" in html and "D LB3" in html
    assert "eu2006" in html
    assert "6.4 J/m\u00b2 = 25.6 W/m\u00b2 over 250 ms" in html
    assert escape(CAUTION) in html


@pytest.mark.django_db
def test_a_pulsed_result_shows_the_per_pulse_limit_and_its_rule_first(lso_client: Client) -> None:
    factories.HazardResultFactory.create(eye_mpe_per_pulse_J_m2=0.0158, pulse_rule="reduced_single_pulse",
                                         eye_mpe_J_m2=1.58, eye_mpe_W_m2=0.158, exposure_s=10.0)
    html = lso_client.get(reverse("admin:registry_hazardresult_changelist")).content.decode()
    assert ("15.8 mJ/m\u00b2 per pulse (reduced single pulse); whole exposure 1.58 J/m\u00b2 = 158 mW/m\u00b2 "
            "over 10 s") in html


@pytest.mark.django_db
def test_the_result_page_shows_figures_working_and_caution_for_a_computed_emission(lso_client: Client) -> None:
    emission = factories.EmissionFactory.create()  # 532 nm, 10 mW CW, 1 mm and 1 mrad at 1/e^2
    lso_client.post(reverse("admin:registry_emission_change", args=[emission.pk]), _emission_post(
        emission, temporal_mode="cw", average_power_W="10 mW", pulse_energy_J="", pulse_duration_s="", prf_Hz="",
        beam_diameter_m="1 mm", divergence_rad="1 mrad"))
    result = HazardResult.objects.get(emission=emission, limits="icnirp2013")
    response = lso_client.get(reverse("admin:registry_hazardresult_change", args=[result.pk]))
    html = response.content.decode()
    # ICNIRP 2013 retinal thermal limit 400-700 nm: H = 18 t^0.75 J/m^2 at t = 0.25 s (aversion).
    radiant_exposure = 18 * 0.25 ** 0.75
    irradiance = radiant_exposure / 0.25
    assert f"{radiant_exposure:.3g} J/m\u00b2 = {irradiance:.3g} W/m\u00b2 over 250 ms" in html
    # IEC TR 60825-14 beam-hazard NOHD, with 1/e^2 diameter and divergence taken to 1/e (/ sqrt 2):
    # r = sqrt(4 P / (pi E) - a^2) / phi.
    a, phi = 1e-3 / math.sqrt(2), 1e-3 / math.sqrt(2)
    nohd = math.sqrt(4 * 0.01 / (math.pi * irradiance) - a ** 2) / phi
    assert f"{nohd:.3g} m" in html
    # EN 207 Annex B: OD = log10(H / MPE), rounded up; the whole beam enters the 7 mm aperture.
    exact_od = math.log10(0.01 / (math.pi * 0.007 ** 2 / 4) / irradiance)
    assert f"OD {math.ceil(exact_od)} (exact {exact_od:.3g})" in html
    assert "required optical density: OD = log10(exposure / MPE)" in html
    assert "[EN 207 Annex B" in html
    assert "ICNIRP 2013 guidelines on limits of exposure to laser radiation (icnirp2013)" in html
    assert result.engine_version in html
    assert escape(CAUTION) in html
    assert 'name="nohd_m"' not in html  # figures are read-only


@pytest.mark.django_db
def test_the_emission_page_shows_its_results_with_the_caution(lso_client: Client) -> None:
    result = factories.HazardResultFactory.create(nohd_m=31.6, od_required=2.0, skin_exposure_s=10.0,
                                                  skin_mpe_J_m2=2000 * 10.0, skin_mpe_W_m2=2000.0)
    response = lso_client.get(reverse("admin:registry_emission_change", args=[result.emission.pk]))
    html = response.content.decode()
    assert "NOHD 31.6 m, OD 2" in html
    assert escape(CAUTION) in html
    detail = lso_client.get(reverse("admin:registry_hazardresult_change", args=[result.pk])).content.decode()
    # ICNIRP 2013 skin limit 400-1400 nm, 10 s - 30 ks: E = 2000 W/m^2 C_A, shown with a prefix, no exponent.
    assert "20 kJ/m\u00b2 = 2 kW/m\u00b2 over 10 s" in detail


@pytest.mark.django_db
def test_each_check_constraint_of_a_form_is_run_once_and_a_broken_one_is_reported_once() -> None:
    from django.db import connection
    from django.db.models import CheckConstraint
    from django.test.utils import CaptureQueriesContext

    from registry.forms import EmissionEntryForm

    checks = [constraint for constraint in Emission._meta.constraints if isinstance(constraint, CheckConstraint)]
    typed = {"wavelength_m": "532 nm", "temporal_mode": "cw", "average_power_W": "5 mW", "beam_diameter_m": "2 mm",
             "diameter_definition": "1/e2", "divergence_rad": "1 mrad"}
    form = EmissionEntryForm(typed)
    with CaptureQueriesContext(connection) as queries:
        assert form.is_valid(), form.errors
    # Every field the constraints read is on the form: Django's own validation runs each check
    # (one query each, inside a savepoint here since the test runs in a transaction) and
    # RegisterForm runs none of them again.
    assert len([query for query in queries if '"_check"' in query["sql"]]) == len(checks)
    # A continuous-wave emission without a power breaks registry_emission_cw_has_power (and the
    # power-or-energy rule); each refusal is shown once.
    form = EmissionEntryForm({**typed, "average_power_W": ""})
    assert not form.is_valid()
    errors = list(form.non_field_errors())
    assert len(errors) == len(set(errors)) and errors
