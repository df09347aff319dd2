"""The register's pages through the Django test client: who may open what, what each shows, what each does.

Personas as in the API tests (tests/registry/api_world.py): the LSO, an inspector, the researcher who
owns the lasers under test, a researcher of another group, and a laser user of the owner's group who
is authorized on one laser (TST-0005) and has a request pending on another (TST-0001).
"""
from __future__ import annotations

import csv
import datetime
import io
import math

from django.contrib.auth import get_user_model
from django.test import Client, TestCase
from django.utils import timezone
from django.utils.html import escape

from hazards.caution import CAUTION
from hazards.units import parse_quantity
from registry import selectors, services
from registry.exports import HAZARD_HEADERS, IMPORT_HEADERS
from registry.services.standings import room_standings_refresh
from registry.views.review import REVIEW_PAGE_SIZE
from registry.models import (
    Authorization,
    AuthorizationStatus,
    Emission,
    HazardResult,
    Incident,
    Laser,
    LaserStatus,
    Person,
    TrainingRecord,
)
from tests import factories
from tests.registry.api_world import PERSONAS, World, build_world, register_state


def _client(world: World, persona: str) -> Client:
    client = Client()
    person = world.person(persona)
    if person is not None:
        client.force_login(person.user)
    return client


class PageAccessTests(TestCase):
    """Every page as each persona: anonymous visitors are sent to sign in; the rest get the policy's answer."""

    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def test_each_persona_gets_the_expected_status_on_every_page(self) -> None:
        w = self.world
        # Statuses in PERSONAS order: anonymous, lso, inspector, owner, outsider, user.
        pages = {
            "/": (302, 200, 200, 200, 200, 200),
            "/lasers/": (302, 200, 200, 200, 200, 200),
            "/lasers/export.csv": (302, 200, 200, 200, 200, 200),
            "/lasers/export.xlsx": (302, 200, 200, 200, 200, 200),
            "/lasers/new/": (302, 200, 403, 200, 200, 403),
            "/lasers/import/": (302, 200, 403, 403, 403, 403),
            # The user's request on TST-0001 is pending: outside their scope, "not found".
            f"/lasers/{w.laser.pk}/": (302, 200, 200, 200, 200, 404),
            f"/lasers/{w.authorized_laser.pk}/": (302, 200, 200, 200, 200, 200),
            f"/lasers/{w.laser.pk}/emissions/{w.emission.pk}/mpe.svg": (302, 200, 200, 200, 200, 404),
            f"/lasers/{w.laser.pk}/emissions/{w.emission.pk}/distance.svg": (302, 200, 200, 200, 200, 404),
            "/review/": (302, 200, 403, 403, 403, 403),
            f"/locations/{w.room.pk}/": (302, 200, 200, 200, 200, 403),
            "/locations/": (302, 200, 200, 200, 200, 403),
            "/people/": (302, 200, 200, 200, 200, 200),
            "/people/new/": (302, 200, 403, 403, 403, 403),
            f"/people/{w.user.pk}/": (302, 200, 200, 200, 404, 200),
            f"/people/{w.lso.pk}/": (302, 200, 200, 404, 404, 404),
            "/incidents/new/": (302, 200, 200, 200, 200, 200),
        }
        for path, statuses in pages.items():
            for persona, expected in zip(PERSONAS, statuses):
                with self.subTest(path=path, persona=persona):
                    response = _client(self.world, persona).get(path)
                    self.assertEqual(response.status_code, expected)
                    if persona == "anonymous":
                        self.assertEqual(response["Location"], f"/login/?next={path}")

    def test_pages_carry_no_inline_script_or_style_so_a_strict_csp_needs_no_exception(self) -> None:
        w = self.world
        for path in ("/login/", "/", "/lasers/", f"/lasers/{w.laser.pk}/", "/lasers/new/", "/lasers/import/", "/review/",
                     f"/locations/{w.room.pk}/", "/locations/", "/people/", f"/people/{w.user.pk}/", "/people/new/", "/incidents/new/"):
            with self.subTest(path=path):
                html = _client(w, "anonymous" if path == "/login/" else "lso").get(path).content.decode()
                for forbidden in ("<script", "<style", " style=", " onclick=", " onsubmit=", " onload="):
                    self.assertNotIn(forbidden, html)

    def test_a_refused_post_changes_nothing(self) -> None:
        w = self.world
        posts = {
            ("inspector", f"/review/{w.pending_laser.pk}/"): {"approve": "1"},
            ("owner", f"/review/{w.pending_laser.pk}/"): {"approve": "1"},
            ("user", "/lasers/new/"): {},
            ("owner", f"/people/{w.user.pk}/training/"): {"training-course": "general",
                                                          "training-completed_on": "2026-11-01"},
            ("owner", f"/authorizations/{w.authorization.pk}/decision/"): {"approve": "1"},
            ("outsider", f"/people/{w.user.pk}/authorizations/"): {"request-laser": w.laser.pk},
            ("owner", "/people/new/"): {"username": "nia", "role": "lso"},
            ("inspector", "/lasers/import/confirm/"): {"token": "anything"},
        }
        for (persona, path), data in posts.items():
            with self.subTest(persona=persona, path=path):
                before = register_state()
                response = _client(w, persona).post(path, data)
                self.assertIn(response.status_code, (403, 404))
                self.assertEqual(register_state(), before)

    def test_signing_in_on_the_register_s_own_page_lands_at_the_page_asked_for(self) -> None:
        person = services.person_create(username="nia", role="user", password="a long enough phrase")
        client = Client()
        response = client.post("/login/?next=/lasers/", {"username": "nia", "password": "a long enough phrase",
                                                         "next": "/lasers/"})
        self.assertEqual((response.status_code, response["Location"]), (302, "/lasers/"))
        self.assertEqual(client.get("/").context["signed_in"], person)
        response = client.post("/logout/")
        self.assertEqual((response.status_code, response["Location"]), (302, "/login/"))
        self.assertEqual(client.get("/").status_code, 302)


class FiguresTests(TestCase):
    """Figures are shown as stored, with unit, basis, limit set and the caution; never understated."""

    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def test_every_page_with_figures_carries_the_one_caution(self) -> None:
        w = self.world
        for persona, path in (("lso", "/"), ("owner", "/"), ("user", "/"), ("inspector", "/"), ("lso", "/lasers/"),
                              ("lso", f"/lasers/{w.laser.pk}/"), ("lso", "/review/"),
                              ("lso", f"/locations/{w.room.pk}/"), ("inspector", "/locations/")):
            with self.subTest(persona=persona, path=path):
                self.assertContains(_client(w, persona).get(path), escape(CAUTION))
        csv_rows = list(csv.DictReader(io.StringIO(_client(w, "lso").get("/lasers/export.csv").content.decode())))
        self.assertEqual({row["caution"] for row in csv_rows}, {CAUTION})

    def test_the_laser_page_shows_both_limit_sets_marks_differences_and_hides_row_identifiers(self) -> None:
        w = self.world
        eu = w.emission.hazard_results.get(limits="eu2006")
        eu.nohd_m, eu.od_required = 61.0, 0.0
        eu.save()
        response = _client(w, "inspector").get(f"/lasers/{w.laser.pk}/")
        html = response.content.decode()
        icnirp = w.result
        # Stored figures with three significant figures and their unit.
        self.assertIn(f"<td class=\"differs\">{_metres(icnirp.nohd_m)}</td>", html)
        self.assertIn("61 m<span class=\"differs-mark\">differs from icnirp2013</span>", html)
        self.assertIn("no eyewear needed", html)
        self.assertIn("ICNIRP 2013 guidelines on limits of exposure to laser radiation (icnirp2013)", html)
        self.assertIn("Directive 2006/25/EC", html)
        # The exposure basis is shown (0.25 s: the aversion response, common practice for visible light).
        self.assertIn("<td>250 ms</td>", html)
        working = response.context["emissions"][0]["working"]
        self.assertGreater(len(working), 10)
        self.assertNotIn("(row ", html)
        self.assertNotIn("e-0", html)
        # The figures of the other set appear beside, so the two can be compared.
        self.assertEqual(response.context["other"], "eu2006")

    def test_the_history_says_who_changed_what_and_when_in_words(self) -> None:
        w = self.world
        services.laser_update(laser=w.laser, by=w.lso, owner=w.outsider, description="Moved to the other group.")
        history = _client(w, "inspector").get(f"/lasers/{w.laser.pk}/").context["history"]
        latest = history[0]
        self.assertEqual((latest.who, latest.record, latest.kind), ("ada", "laser", "changed"))
        self.assertIn(("owner", "Rhea Tallis", "Otto Venn"), latest.changes)
        self.assertEqual(sum(("status", "pending review", "active") in entry.changes for entry in history), 1)
        self.assertEqual(history[-1].kind, "created")

    def test_a_missing_figure_reads_not_computed_never_blank_or_zero(self) -> None:
        laser = services.laser_register(by=self.world.owner, asset_tag="TST-0099", laser_type="diode",
                                        labelled_class="3B", location=self.world.room)
        services.emission_create(laser=laser, by=self.world.owner, wavelength_m="405 nm", temporal_mode="cw",
                                 average_power_W="100 mW", beam_diameter_m="1 mm")  # no divergence
        html = _client(self.world, "lso").get(f"/lasers/{laser.pk}/").content.decode()
        self.assertIn("Hazard figures not computed", html)
        self.assertIn("full-angle divergence", html)
        self.assertGreaterEqual(html.count("not computed"), 8)
        home = _client(self.world, "lso").get("/").content.decode()
        self.assertIn("TST-0099", home.split("Emissions that could not be assessed")[1])

    def test_the_charts_are_svg_without_styles_and_carry_the_caution(self) -> None:
        w = self.world
        for name in ("mpe", "distance"):
            with self.subTest(chart=name):
                response = _client(w, "owner").get(f"/lasers/{w.laser.pk}/emissions/{w.emission.pk}/{name}.svg")
                self.assertEqual(response["Content-Type"], "image/svg+xml")
                svg = response.content.decode()
                self.assertIn("<svg", svg)
                self.assertNotIn("<style", svg)
                self.assertNotIn("style=", svg)
                self.assertIn(escape(CAUTION).replace("&#x27;", "'"), svg)


def _metres(value: float) -> str:
    return f"{float(f'{value:.3g}'):g} m"


class RegisterTests(TestCase):
    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def _tags(self, query: str, persona: str = "lso") -> list[str]:
        response = _client(self.world, persona).get(f"/lasers/?{query}")
        self.assertEqual(response.status_code, 200)
        return [laser.asset_tag for laser in response.context["listing"]]

    def test_the_register_filters_with_the_api_s_parameter_names(self) -> None:
        self.assertEqual(self._tags("labelled_class=3B"), ["TST-0002"])
        self.assertEqual(self._tags("status=returned"), ["TST-0003"])
        self.assertEqual(self._tags(f"owner={self.world.outsider.pk}"), ["TST-0004"])
        self.assertEqual(self._tags("wavelength_max=450 nm"), ["TST-0002"])
        self.assertEqual(self._tags("wavelength_min=500 nm&building=alder hall"),
                         ["TST-0001", "TST-0004", "TST-0005"])

    def test_a_bad_filter_value_names_the_parameter_and_lists_nothing(self) -> None:
        response = _client(self.world, "lso").get("/lasers/?wavelength_min=5 parsecs")
        self.assertContains(response, "wavelength_min")
        self.assertContains(response, "5 parsecs")
        self.assertEqual(list(response.context["listing"]), [])

    def test_the_register_sorts_by_nohd_and_required_od_with_missing_figures_last(self) -> None:
        w = self.world
        HazardResult.objects.filter(emission__laser=w.other_laser, limits="icnirp2013").update(nohd_m=5000.0,
                                                                                           od_required=9.0)
        HazardResult.objects.filter(emission__laser=w.pending_laser, limits="icnirp2013").update(nohd_unbounded=True,
                                                                                             nohd_m=None)
        self.assertEqual(self._tags("ordering=-nohd")[:2], ["TST-0002", "TST-0004"])
        # The returned laser has no emission, so no figure: last whichever way.
        self.assertEqual(self._tags("ordering=-nohd")[-1], "TST-0003")
        self.assertEqual(self._tags("ordering=nohd")[-1], "TST-0003")
        self.assertEqual(self._tags("ordering=-od")[0], "TST-0004")

    def test_a_laser_user_s_register_holds_only_the_lasers_they_are_authorized_on(self) -> None:
        self.assertEqual(self._tags("", persona="user"), ["TST-0005"])

    def test_the_register_pages_through_fifty_lasers_at_a_time(self) -> None:
        for number in range(60):
            factories.LaserFactory.create(asset_tag=f"ZZ-{number:03d}", labelled_class="2")
        first = _client(self.world, "lso").get("/lasers/?labelled_class=2")
        self.assertEqual(len(first.context["listing"]), 50)
        second = _client(self.world, "lso").get("/lasers/?labelled_class=2&page=2")
        self.assertEqual([laser.asset_tag for laser in second.context["listing"]][-1], "ZZ-059")
        self.assertContains(first, "labelled_class=2&amp;page=2")

    def test_the_csv_has_the_import_columns_then_the_hazard_columns_and_reads_back(self) -> None:
        response = _client(self.world, "lso").get("/lasers/export.csv?labelled_class=4&status=active")
        self.assertEqual(response["Content-Type"], "text/csv")
        rows = list(csv.reader(io.StringIO(response.content.decode())))
        self.assertEqual(tuple(rows[0]), IMPORT_HEADERS + HAZARD_HEADERS)
        records = [dict(zip(rows[0], row)) for row in rows[1:]]
        self.assertEqual([record["asset tag"] for record in records], ["TST-0001", "TST-0004", "TST-0005"])
        first = records[0]
        self.assertEqual((first["wavelength"], first["average power"], first["beam diameter"], first["divergence"]),
                         ("532 nm", "2 W", "2 mm", "1 mrad"))
        # Values read back through the register's own parser give the stored SI numbers.
        emission = self.world.emission
        self.assertTrue(math.isclose(parse_quantity(first["wavelength"], field="wavelength", unit="m"),
                                     emission.wavelength_m, rel_tol=1e-12))
        self.assertEqual(first["owner"], "rhea")
        self.assertEqual(first["nohd"], _metres(self.world.result.nohd_m))
        self.assertEqual(first["limit set"], "icnirp2013")


class RegistrationTests(TestCase):
    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def _post(self, persona: str, button: str, **overrides: str) -> object:
        data = {"asset_tag": "TST-0500", "manufacturer": "Tarrow Diodes", "model_name": "TD-2", "laser_type": "diode",
                "labelled_class": "4", "location": str(self.world.room.pk), "emissions-TOTAL_FORMS": "1",
                "emissions-INITIAL_FORMS": "0", "emissions-MIN_NUM_FORMS": "1", "emissions-MAX_NUM_FORMS": "12",
                "emissions-0-wavelength_m": "1.064 um", "emissions-0-temporal_mode": "q_switched",
                "emissions-0-average_power_W": "50 mW", "emissions-0-pulse_energy_J": "5 mJ",
                "emissions-0-pulse_duration_s": "35 fs", "emissions-0-prf_Hz": "10 Hz",
                "emissions-0-beam_diameter_m": "2 mm", "emissions-0-diameter_definition": "1/e2",
                "emissions-0-divergence_rad": "1 mrad", button: "1", **overrides}
        return _client(self.world, persona).post("/lasers/new/", data)

    def test_the_preview_shows_figures_and_the_room_and_saves_nothing(self) -> None:
        before = register_state()
        response = self._post("owner", "preview")
        self.assertEqual(response.status_code, 200)
        preview = response.context["preview"]
        self.assertEqual(register_state(), before)
        emission = preview.emissions[0]
        self.assertEqual(emission.emission.pulse_duration_s, 35e-15)
        self.assertIsNotNone(emission.result)
        # Class 4 added to a room of class 4 lasers: the door sign stays DANGER (BEAMKEEPER_SIGNAL_WORDS default).
        self.assertEqual((preview.signal_word_now, preview.signal_word_after), ("DANGER", "DANGER"))
        # The room's goggles are marked 520-540 nm only: they do not cover 1064 nm.
        self.assertEqual(emission.verdicts[self.world.eyewear.pk].status, "not_covered")
        self.assertIs(emission.protected, False)
        self.assertContains(response, "no eyewear kept in the room protects against it")
        self.assertContains(response, escape(CAUTION))
        self.assertContains(response, "Submit for review")

    def test_the_preview_names_the_eyewear_that_protects_the_room_today_but_not_against_the_new_laser(self) -> None:
        wide = services.eyewear_create(
            inventory_tag="TST-EW-2", location=self.world.room, by=self.world.lso, description="goggles for 400-540 nm",
            markings=[{"wavelength_min_m": "400 nm", "wavelength_max_m": "540 nm", "optical_density": 6.0}])
        # OD 6 over 400-540 nm covers the room's 405 nm and 532 nm lasers (OD 4 at most); the room's goggles
        # for 520-540 nm (TST-EW-1) never covered the 405 nm one. A 1064 nm laser is outside both.
        response = self._post("owner", "preview")
        self.assertEqual(response.context["preview"].no_longer_adequate, [wide])
        self.assertContains(response, '<span class="tag alert">TST-EW-2</span> goggles for 400-540 nm.')
        # A 520 nm laser the wide goggles stop changes nothing.
        response = self._post("owner", "preview", **{
            "emissions-0-wavelength_m": "520 nm", "emissions-0-temporal_mode": "cw", "emissions-0-average_power_W": "100 mW",
            "emissions-0-pulse_energy_J": "", "emissions-0-pulse_duration_s": "", "emissions-0-prf_Hz": ""})
        preview = response.context["preview"]
        self.assertEqual(preview.emissions[0].verdicts[wide.pk].status, "adequate")
        self.assertEqual(preview.no_longer_adequate, [])

    def test_submitting_registers_the_laser_and_its_emissions_for_review_in_the_researcher_s_name(self) -> None:
        response = self._post("owner", "submit", asset_tag="SOMETHING-ELSE")
        laser = Laser.objects.get(manufacturer="Tarrow Diodes")
        self.assertRedirects(response, f"/lasers/{laser.pk}/", fetch_redirect_response=False)
        # A researcher cannot choose the tag: the register's proposal is used.
        self.assertEqual(laser.asset_tag, "TST-0006")
        self.assertEqual((laser.status, laser.owner), (LaserStatus.PENDING_REVIEW, self.world.owner))
        emission = Emission.objects.get(laser=laser)
        self.assertEqual((emission.wavelength_m, emission.pulse_energy_J), (1.064e-6, 5e-3))
        self.assertEqual(emission.hazard_results.count(), 2)
        self.assertEqual(laser.history.first().history_user, self.world.owner.user)

    def test_the_lso_may_change_the_proposed_asset_tag_and_name_the_owner(self) -> None:
        self._post("lso", "submit", asset_tag="TST-0500", owner=str(self.world.outsider.pk))
        laser = Laser.objects.get(asset_tag="TST-0500")
        self.assertEqual(laser.owner, self.world.outsider)

    def test_a_bad_value_is_an_inline_error_naming_the_field_and_nothing_is_saved(self) -> None:
        before = register_state()
        for field, value, words in (("emissions-0-wavelength_m", "1.064 umm", "wavelength: unknown unit"),
                                    ("emissions-0-prf_Hz", "10 mW", "pulse repetition frequency: &#x27;10 mW&#x27; is not a frequency"),
                                    ("emissions-0-beam_diameter_m", "x" * 500, "beam diameter at the aperture: is 500 characters")):
            with self.subTest(field=field):
                response = self._post("owner", "submit", **{field: value})
                self.assertEqual(response.status_code, 200)
                self.assertContains(response, f'<ul class="errorlist" id="id_{field}_error"><li>{words}')
                self.assertContains(response, 'aria-invalid="true"')
        # A rule between two fields (the engine's, hazards.assessment.inputs) is shown on the field it names.
        response = self._post("owner", "submit", **{"emissions-0-pulse_duration_s": "2 s"})
        self.assertContains(response, '<ul class="errorlist" id="id_emissions-0-pulse_duration_s_error"><li>2 s is not '
                                      'shorter than the pulse period 100 ms at 10 Hz')
        self.assertEqual(register_state(), before)

    def test_another_emission_form_is_added_without_losing_what_was_typed(self) -> None:
        response = self._post("owner", "add_emission")
        self.assertEqual(response.context["emissions"].total_form_count(), 2)
        self.assertContains(response, 'value="1.064 um"')
        self.assertIsNone(response.context["preview"])


class ReviewTests(TestCase):
    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def test_the_queue_shows_each_pending_laser_with_figures_and_warnings(self) -> None:
        response = _client(self.world, "lso").get("/review/")
        self.assertEqual([entry["laser"].asset_tag for entry in response.context["entries"]], ["TST-0002"])
        result = self.world.pending_laser.emissions.get().hazard_results.get(limits="icnirp2013")
        self.assertContains(response, escape(result.warnings[0]))

    def test_the_queue_pages_the_longest_waiting_first_and_counts_them_all(self) -> None:
        waiting = [factories.LaserFactory.create(status="pending_review", owner=self.world.owner,
                                                 location=self.world.laser.location) for _ in range(REVIEW_PAGE_SIZE)]
        client = _client(self.world, "lso")
        first = client.get("/review/")
        tags = [entry["laser"].asset_tag for entry in first.context["entries"]]
        self.assertEqual(tags, ["TST-0002", *(laser.asset_tag for laser in waiting[:REVIEW_PAGE_SIZE - 1])])
        self.assertContains(first, f"{REVIEW_PAGE_SIZE + 1} registrations waiting")
        self.assertContains(first, 'href="?page=2"')
        second = client.get("/review/?page=2")
        self.assertEqual([entry["laser"].asset_tag for entry in second.context["entries"]], [waiting[-1].asset_tag])
        self.assertContains(second, f"Approve {waiting[-1].asset_tag}")
        self.assertContains(second, "Page 2 of 2")

    def test_the_lso_approves_a_pending_laser(self) -> None:
        response = _client(self.world, "lso").post(f"/review/{self.world.pending_laser.pk}/", {"approve": "1"})
        self.assertRedirects(response, "/review/", fetch_redirect_response=False)
        self.world.pending_laser.refresh_from_db()
        self.assertEqual(self.world.pending_laser.status, LaserStatus.ACTIVE)

    def test_two_lsos_deciding_the_same_registration_the_second_is_told_and_nothing_more_changes(self) -> None:
        second_lso = services.person_create(username="bo", role="lso")
        pk = self.world.pending_laser.pk
        first, second = _client(self.world, "lso"), Client()
        second.force_login(second_lso.user)
        # Both have the queue open; the first approves, then the second returns it with comments.
        self.assertContains(second.get("/review/"), "Approve TST-0002")
        first.post(f"/review/{pk}/", {"approve": "1"})
        response = second.post(f"/review/{pk}/", {"return": "1", f"laser-{pk}-comments": "Too late?"}, follow=True)
        self.assertContains(response, "TST-0002 was not changed")
        laser = Laser.objects.get(pk=pk)
        self.assertEqual((laser.status, laser.review_comments), (LaserStatus.ACTIVE, ""))
        self.assertEqual([entry.status for entry in laser.history.all()[:2]], ["active", "pending_review"])

    def test_returning_needs_comments_and_keeps_them_for_the_owner(self) -> None:
        pk = self.world.pending_laser.pk
        client = _client(self.world, "lso")
        response = client.post(f"/review/{pk}/", {"return": "1"}, follow=True)
        self.assertContains(response, "A comment for the owner is required")
        self.assertEqual(Laser.objects.get(pk=pk).status, LaserStatus.PENDING_REVIEW)
        client.post(f"/review/{pk}/", {"return": "1", f"laser-{pk}-comments": "State the divergence at 1/e2."})
        laser = Laser.objects.get(pk=pk)
        self.assertEqual((laser.status, laser.review_comments), (LaserStatus.RETURNED, "State the divergence at 1/e2."))

    def test_a_class_3b_laser_that_cannot_be_assessed_is_not_approved_and_the_reason_is_shown(self) -> None:
        laser = services.laser_register(by=self.world.owner, asset_tag="TST-0098", laser_type="diode",
                                        labelled_class="3B", location=self.world.room)
        services.emission_create(laser=laser, by=self.world.owner, wavelength_m="405 nm", temporal_mode="cw",
                                 average_power_W="100 mW", divergence_rad="1 mrad")  # no beam diameter
        response = _client(self.world, "lso").post(f"/review/{laser.pk}/", {"approve": "1"}, follow=True)
        self.assertContains(response, "TST-0098 was not changed")
        self.assertContains(response, "beam diameter at the aperture")
        laser.refresh_from_db()
        self.assertEqual(laser.status, LaserStatus.PENDING_REVIEW)


class RoomTests(TestCase):
    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def test_the_room_shows_the_matrix_entry_controls_and_the_largest_nohd_against_its_size(self) -> None:
        response = _client(self.world, "inspector").get(f"/locations/{self.world.room.pk}/")
        html = response.content.decode()
        # Goggles marked OD 4 at 520-540 nm: enough for the 532 nm lasers (OD 4 required), blind at 405 nm.
        self.assertIn("Eyewear inadequate: no usable eyewear kept here protects against TST-0002 405 nm.", html)
        matrix = html.split('class="matrix"')[1]
        self.assertIn('TST-0001 532 nm<br><span class="small">OD 4; D 532 LB6</span></th>\n    '
                      '<td class="verdict-adequate">adequate</td>', matrix)
        self.assertIn('<td class="verdict-not_covered">not covered</td>', matrix)
        self.assertIn("<dt>Entry interlock</dt><dd>none</dd>", html)
        self.assertIn("<dt>Longest dimension</dt><dd>6 m</dd>", html)
        self.assertIn("beyond the room", html)
        self.assertEqual(response.context["signal_word"], "DANGER")


class DocumentLinkTests(TestCase):
    """The pages link to the printed documents, for the roles the documents' own routes serve."""

    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def test_the_laser_page_links_its_label_for_those_who_may_print_it(self) -> None:
        link = f'href="/api/v1/lasers/{self.world.laser.pk}/label.pdf"'
        for persona, shown in (("lso", True), ("inspector", True), ("owner", True), ("user", False)):
            with self.subTest(persona=persona):
                html = _client(self.world, persona).get(f"/lasers/{self.world.laser.pk}/").content.decode()
                self.assertEqual(link in html, shown)
                if shown:
                    self.assertEqual(_client(self.world, persona).get(f"/api/v1/lasers/{self.world.laser.pk}/label.pdf")
                                     .status_code, 200)

    def test_the_room_page_links_its_door_sign_and_says_when_an_audit_is_due(self) -> None:
        html = _client(self.world, "lso").get(f"/locations/{self.world.room.pk}/").content.decode()
        self.assertIn(f'href="/api/v1/locations/{self.world.room.pk}/sign.pdf"', html)
        self.assertIn(f'href="/api/v1/locations/{self.world.room.pk}/sign.pdf?paper=letter"', html)
        # A room with a class 4 laser and no signed-off audit is overdue (settings.AUDIT_INTERVAL_MONTHS).
        self.assertIn("overdue: never audited", html)

    def test_the_inspectors_home_links_each_audit_report_as_pdf_and_json(self) -> None:
        audit = factories.AuditFactory.create(location=self.world.room)
        html = _client(self.world, "inspector").get("/").content.decode()
        self.assertIn(f'href="/api/v1/audits/{audit.pk}/report.pdf"', html)
        self.assertIn(f'href="/api/v1/audits/{audit.pk}/report.json"', html)


class PeopleTests(TestCase):
    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def test_the_lso_adds_a_person_with_a_role_and_the_account_is_created(self) -> None:
        response = _client(self.world, "lso").post("/people/new/", {
            "username": "nia", "first_name": "Nia", "last_name": "Orme", "role": "researcher",
            "research_group": self.world.owner.research_group_id, "password": "a long enough phrase"})
        person = Person.objects.get(user__username="nia")
        self.assertRedirects(response, f"/people/{person.pk}/", fetch_redirect_response=False)
        self.assertEqual(person.role, "researcher")
        self.assertIs(person.user.check_password("a long enough phrase"), True)

    def test_a_weak_password_is_an_inline_error_and_no_account_is_made(self) -> None:
        response = _client(self.world, "lso").post("/people/new/", {"username": "nia", "role": "user",
                                                                     "password": "nia"})
        self.assertEqual(response.status_code, 400)
        self.assertContains(response, "too short", status_code=400)
        self.assertIs(get_user_model().objects.filter(username="nia").exists(), False)

    def test_the_lso_records_training_verified_by_themselves(self) -> None:
        w = self.world
        response = _client(w, "lso").post(f"/people/{w.outsider.pk}/training/", {
            "training-course": "general", "training-completed_on": "2026-10-01", "training-valid_until": "2028-10-01",
            "training-evidence": "Attendance list 12"})
        self.assertRedirects(response, f"/people/{w.outsider.pk}/", fetch_redirect_response=False)
        record = TrainingRecord.objects.get(person=w.outsider)
        self.assertEqual((record.valid_until, record.verified_by), (datetime.date(2028, 10, 1), w.lso))

    def test_training_whose_expiry_precedes_completion_is_refused_beside_the_field(self) -> None:
        w = self.world
        response = _client(w, "lso").post(f"/people/{w.outsider.pk}/training/", {
            "training-course": "general", "training-completed_on": "2026-10-01", "training-valid_until": "2025-10-01"})
        self.assertContains(response, "cannot be before", status_code=400)
        self.assertIs(TrainingRecord.objects.filter(person=w.outsider).exists(), False)

    def test_approval_shows_the_missing_prerequisites_and_is_refused_while_they_are_missing(self) -> None:
        w = self.world
        TrainingRecord.objects.filter(person=w.user).update(valid_until=timezone.localdate() - datetime.timedelta(days=1))
        page = _client(w, "lso").get(f"/people/{w.user.pk}/")
        self.assertContains(page, "has no valid general laser safety training")
        response = _client(w, "lso").post(f"/authorizations/{w.authorization.pk}/decision/", {"approve": "1"},
                                          follow=True)
        self.assertContains(response, "Nothing was changed")
        w.authorization.refresh_from_db()
        self.assertEqual(w.authorization.status, AuthorizationStatus.REQUESTED)

    def test_the_lso_approves_or_refuses_with_a_reason(self) -> None:
        w = self.world
        _client(w, "lso").post(f"/authorizations/{w.authorization.pk}/decision/", {
            "approve": "1", f"decide-{w.authorization.pk}-valid_until": "2027-06-30"})
        w.authorization.refresh_from_db()
        self.assertEqual((w.authorization.status, w.authorization.valid_until),
                         (AuthorizationStatus.APPROVED, datetime.date(2027, 6, 30)))

    def test_a_researcher_requests_an_authorization_for_someone_of_their_group(self) -> None:
        w = self.world
        response = _client(w, "owner").post(f"/people/{w.user.pk}/authorizations/", {
            "request-laser": w.other_laser.pk, "request-conditions": "Supervised only."})
        self.assertRedirects(response, f"/people/{w.user.pk}/", fetch_redirect_response=False)
        authorization = Authorization.objects.get(person=w.user, laser=w.other_laser)
        self.assertEqual((authorization.status, authorization.requested_by), (AuthorizationStatus.REQUESTED, w.owner))


class IncidentTests(TestCase):
    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def test_a_laser_user_reports_an_incident_on_the_laser_they_are_authorized_on(self) -> None:
        w = self.world
        response = _client(w, "user").post("/incidents/new/", {
            "kind": "near_miss", "occurred_at": "2026-11-30T10:15", "laser": w.authorized_laser.pk,
            "description": "The beam block slipped during alignment."})
        self.assertRedirects(response, f"/lasers/{w.authorized_laser.pk}/", fetch_redirect_response=False)
        incident = Incident.objects.get(laser=w.authorized_laser)
        self.assertEqual((incident.reported_by, incident.location, incident.reference), (w.user, w.room, "TST-INC-3"))

    def test_a_laser_the_reporter_cannot_see_is_refused_beside_the_field(self) -> None:
        w = self.world
        before = register_state()
        response = _client(w, "user").post("/incidents/new/", {
            "kind": "near_miss", "occurred_at": "2026-11-30T10:15", "laser": w.other_laser.pk,
            "description": "Seen through the door."})
        self.assertContains(response, "Select a valid choice", status_code=400)
        self.assertEqual(register_state(), before)


class HomeAttentionTests(TestCase):
    """The LSO's home counts each kind of item, names the most urgent first and links to the full list; the
    inspector's home shows the first rooms of the rooms list. Figures written by the test set the order only."""

    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()
        today = timezone.localdate()
        cls.rooms = []
        for number in range(1, 7):
            room = factories.LocationFactory.create(longest_dimension_m=10.0, building="Cedar Hall", room=f"C{number}")
            laser = factories.LaserFactory.create(location=room, labelled_class="4", asset_tag=f"CDR-{number:04d}")
            for limits in ("icnirp2013", "eu2006"):
                factories.HazardResultFactory.create(emission=factories.EmissionFactory.create(laser=laser)
                                                     if limits == "icnirp2013" else laser.emissions.get(),
                                                     limits=limits, od_required=10.0 + number, nohd_m=1000.0 * number)
            room_standings_refresh(locations=[room.pk])
            cls.rooms.append(room)
            pending = factories.LaserFactory.create(status="pending_review", asset_tag=f"WAIT-{number:04d}")
            Laser.objects.filter(pk=pending.pk).update(created_at=timezone.now() - datetime.timedelta(days=10 + number))
        factories.FindingFactory.create(severity="critical", description="Interlock bypassed.",
                                        due_on=today + datetime.timedelta(days=3))
        factories.FindingFactory.create(severity="observation", description="Sign faded.",
                                        due_on=today - datetime.timedelta(days=2))
        factories.FindingFactory.create(severity="major", description="Curtain torn.",
                                        due_on=today - datetime.timedelta(days=1))
        factories.TrainingRecordFactory.create(person=cls.world.owner, valid_until=today + datetime.timedelta(days=10))
        unassessed = factories.LaserFactory.create(location=cls.world.room, asset_tag="NOFIG-0001")
        factories.EmissionFactory.create(laser=unassessed, divergence_rad=None,
                                         assessment_problem="full-angle divergence: needed to assess the hazard")
        room_standings_refresh(locations=[cls.world.room.pk])

    def test_the_lso_home_counts_each_kind_and_names_the_most_urgent_first(self) -> None:
        attention = _client(self.world, "lso").get("/").context["attention"]
        # The world's TST-0002, then the six registrations, the oldest (WAIT-0006) waiting longest.
        self.assertEqual(attention.awaiting_review.count, 7)
        self.assertEqual([laser.asset_tag for laser in attention.awaiting_review.first],
                         ["WAIT-0006", "WAIT-0005", "WAIT-0004", "WAIT-0003", "WAIT-0002"])
        # Six rooms of the test's own with nothing to protect against OD 11 to 16 and NOHDs of 1 to 6 km in
        # 10 m; the world's room too for NOHD (its 2 W beams reach beyond 6 m), never among the first.
        world_room = selectors.room_hazards(locations=[self.world.room])[0]
        self.assertEqual(attention.eyewear_inadequate.count, 6 + bool(world_room.matrix.unprotected))
        self.assertEqual([room.standing.location.room for room in attention.eyewear_inadequate.first],
                         ["C6", "C5", "C4", "C3", "C2"])
        self.assertEqual([room.standing.location.room for room in attention.nohd_beyond_room.first],
                         ["C6", "C5", "C4", "C3", "C2"])
        self.assertEqual(attention.nohd_beyond_room.count, 6 + bool(world_room.beyond_room))
        self.assertEqual(attention.training_due.count, 1)
        self.assertEqual([emission.laser.asset_tag for emission in attention.not_assessed.first], ["NOFIG-0001"])
        first = attention.eyewear_inadequate.first[0]
        self.assertEqual([(result.emission.laser.asset_tag, result.od_required) for result in first.first],
                         [("CDR-0006", 16.0)])
        # Overdue first, then by severity: the major one (due yesterday), the observation (two days ago), the
        # critical one due in three days, then the world's minor finding.
        self.assertEqual(attention.findings.count, 4)
        self.assertEqual(attention.findings_overdue, 2)
        self.assertEqual([finding.description for finding in attention.findings.first][:3],
                         ["Curtain torn.", "Sign faded.", "Interlock bypassed."])

    def test_each_card_links_to_its_full_list(self) -> None:
        client = _client(self.world, "lso")
        html = client.get("/").content.decode()
        links = {"/review/": "TST-0002", "/lasers/?status=pending_review": "WAIT-0001",
                 "/locations/?needs=eyewear": "Cedar Hall C1", "/locations/?needs=nohd": "Cedar Hall C1",
                 "/locations/?needs=audit": "Cedar Hall C1", "/people/": "Rhea Tallis",
                 "/admin/registry/authorization/?status__exact=requested&retired_at__isempty=1": "TST-0001",
                 "/admin/registry/finding/?status__exact=open&retired_at__isempty=1": "TST-AUD-2",
                 "/admin/registry/emission/?assessment_problem__isempty=0&in_care=yes": "NOFIG-0001"}
        for link, listed in links.items():
            with self.subTest(link=link):
                self.assertIn(f'href="{escape(link)}"', html)
                # The full list holds what the home leaves out.
                self.assertContains(client.get(link), listed)
        self.assertNotIn("Cedar Hall C1", html.split("Rooms whose eyewear is inadequate")[1].split("</section>")[0])

    def test_the_back_office_lists_behind_the_cards_hold_what_the_cards_count(self) -> None:
        """Retired requests and findings, and emissions of a disposed laser, are in neither."""
        retired = timezone.now()
        factories.AuthorizationFactory.create(person=self.world.user, status="requested", retired_at=retired)
        factories.FindingFactory.create(severity="minor", description="Withdrawn.", retired_at=retired)
        disposed = factories.LaserFactory.create(location=self.world.room, status="disposed", asset_tag="GONE-0001",
                                                 retired_on=timezone.localdate())
        factories.EmissionFactory.create(laser=disposed, divergence_rad=None, assessment_problem="no divergence")
        client = _client(self.world, "lso")
        attention = client.get("/").context["attention"]
        for link, counted in (
                ("/admin/registry/authorization/?status__exact=requested&retired_at__isempty=1",
                 attention.authorizations_pending.count),
                ("/admin/registry/finding/?status__exact=open&retired_at__isempty=1", attention.findings.count),
                ("/admin/registry/emission/?assessment_problem__isempty=0&in_care=yes", attention.not_assessed.count)):
            with self.subTest(link=link):
                self.assertEqual(client.get(link).context["cl"].result_count, counted)
        self.assertNotContains(client.get("/admin/registry/emission/?assessment_problem__isempty=0&in_care=yes"),
                               "GONE-0001")

    def test_the_rooms_list_pages_the_rooms_most_urgent_first(self) -> None:
        client = _client(self.world, "inspector")
        listing = client.get("/locations/?needs=eyewear").context["rooms"]
        self.assertEqual([row.standing.location.room for row in listing][:6], ["C6", "C5", "C4", "C3", "C2", "C1"])
        everything = client.get("/locations/").context["rooms"]
        self.assertEqual(everything.paginator.count, 7)
        self.assertEqual(client.get("/locations/?needs=nohd").context["rooms"].paginator.count,
                         6 + bool(selectors.room_hazards(locations=[self.world.room])[0].beyond_room))
        home = client.get("/").context["rooms"]
        self.assertEqual([row.standing for row in home], [row.standing for row in everything][:10])
        self.assertContains(client.get("/"), 'href="/locations/"')

    def test_the_rooms_list_costs_a_fixed_number_of_queries(self) -> None:
        client = _client(self.world, "inspector")
        # 1 session, 2 account, 3 person; 4 count, 5 the page's stored standings with their rooms, 6 those of
        # them with class 3B/4 lasers, 7 the audits covering them.
        with self.assertNumQueries(7):
            self.assertEqual(client.get("/locations/").status_code, 200)
        # 1 session, 2 account, 3 person; 4 rooms with class 3B/4 lasers, 5 the audits covering them (every
        # room, to find those due), 6 the page's stored standings.
        with self.assertNumQueries(6):
            self.assertEqual(client.get("/locations/?needs=audit").status_code, 200)


class QueryCountTests(TestCase):
    """The register and the home pages cost a fixed number of queries however many lasers the register holds."""

    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def _more_lasers(self, count: int) -> None:
        """``count`` more active lasers (each with an emission, results under both sets, eyewear in its own room,
        a pending one too) owned by the owner, with the user authorized on each, and a group member per laser."""
        w = self.world
        for number in range(count):
            room = factories.LocationFactory.create()
            factories.EyewearMarkingFactory.create(eyewear=factories.EyewearFactory.create(location=room))
            for status in ("active", "pending_review"):
                laser = factories.LaserFactory.create(owner=w.owner, location=room, status=status)
                emission = factories.EmissionFactory.create(laser=laser)
                for limits in ("icnirp2013", "eu2006"):
                    factories.HazardResultFactory.create(emission=emission, limits=limits, nohd_m=40.0 + number,
                                                         od_required=3.0)
            factories.AuthorizationFactory.create(person=w.user, laser=laser, status="approved", decided_by=w.lso,
                                                  decided_at=timezone.now())
            member = factories.PersonFactory.create(research_group=w.owner.research_group)
            factories.TrainingRecordFactory.create(person=member)
            factories.AuthorizationFactory.create(person=member, laser=laser)
            # Factories skip the services, which keep each room's stored standing.
            room_standings_refresh(locations=[room.pk])

    def _assert_fixed(self, persona: str, path: str, queries: int) -> None:
        client = _client(self.world, persona)
        with self.assertNumQueries(queries):
            self.assertEqual(client.get(path).status_code, 200)
        self._more_lasers(8)
        with self.assertNumQueries(queries):
            self.assertEqual(client.get(path).status_code, 200)

    def test_the_register_page(self) -> None:
        # 1 session, 2 account, 3 person; 4 count for the pages; 5 rooms (and their buildings) and 6 owners
        # for the filters; 7 the page's lasers (owner, account, group, room joined, sorted by the NOHD
        # annotation; the page's keys chosen in a subquery), 8 their emissions, 9 the emissions' results.
        self._assert_fixed("lso", "/lasers/?ordering=-nohd", 9)

    def test_the_review_queue(self) -> None:
        # 1 session, 2 account, 3 person; 4 count for the pages; 5 the page's lasers (owner, account,
        # group, room joined; the page's keys chosen in a subquery), 6 their emissions, 7 the emissions'
        # results with their working.
        self._assert_fixed("lso", "/review/", 7)

    def test_the_lso_home(self) -> None:
        # 1 session, 2 account, 3 person; training: 4 people with general training, 5 their records;
        # findings: 6 open and overdue counts, 7 the first open ones; rooms: the stored standings 8 with
        # eyewear inadequate, 9 with a NOHD beyond the room, 10 the results of the first emissions they name;
        # audits due: 11 rooms with class 3B/4 lasers, 12 audits covering them; lasers awaiting review:
        # 13 count, 14 the first; requested authorizations: 15 count, 16 the first; emissions that could not
        # be assessed: 17 count, 18 the first.
        self._assert_fixed("lso", "/", 18)

    def test_the_researcher_home(self) -> None:
        # 1 session, 2 account, 3 person; group: 4 people, 5 their training, 6 their authorizations;
        # own lasers: 7 lasers, 8 emissions, 9 results.
        self._assert_fixed("owner", "/", 9)

    def test_the_laser_user_home(self) -> None:
        # 1 session, 2 account, 3 person; 4 authorizations in force; their lasers: 5 lasers, 6 emissions,
        # 7 results; their rooms: 8 rooms, 9 lasers, 10 emissions, 11 results, 12 eyewear, 13 markings;
        # 14 training standing; 15 training records; 16 all the user's authorizations.
        self._assert_fixed("user", "/", 16)

    def test_the_inspector_home(self) -> None:
        # 1 session, 2 account, 3 person; rooms: 4 count, 5 the first stored standings with their rooms,
        # 6 those of them with class 3B/4 lasers, 7 audits covering them; audits: 8 audits, 9 their lasers,
        # 10 checklists, 11 findings.
        self._assert_fixed("inspector", "/", 11)
