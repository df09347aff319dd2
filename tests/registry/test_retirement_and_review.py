"""Retirement and review that hold, at every way in (API, services, admin).

- A disposed or transferred laser, its emissions, SOPs and authorizations are read-only:
  edits and additions answer 409 naming the status (registry.services.refuse_if_read_only).
- The admin's history can be read but not reverted.
- A class 3B or 4 laser whose emissions the engine could not assess is not approved, and
  why an emission is not assessed is shown in the API and the admin.
- A researcher lowering an approved laser's class sends it back to review; the LSO does not.
- An admin form that breaks a named constraint is a form error, not a 500.
"""
from __future__ import annotations

from typing import Any

from django.core.exceptions import ValidationError
from django.db.models import Model
from django.db.models.fields.files import FieldFile
from django.forms import MultiWidget
from django.test import Client, TestCase
from django.urls import reverse
from rest_framework.response import Response

from registry import services
from registry.models import SOP, Authorization, Emission, Laser, LaserStatus, TrainingRecord
from tests.registry.api_world import World, build_world, register_state

V = "/api/v1"
EMISSION = {"wavelength": "633 nm", "temporal_mode": "cw", "average_power": "1 mW", "beam_diameter": "1 mm",
            "divergence": "1 mrad"}


class WorldTestCase(TestCase):
    world: World

    @classmethod
    def setUpTestData(cls) -> None:
        cls.world = build_world()

    def api(self, persona: str) -> Any:
        client = self.world.client(persona)
        client.raise_request_exception = False
        return client

    def admin_client(self) -> Client:
        client = Client(raise_request_exception=False)
        client.force_login(self.world.lso.user)
        return client

    def assertRefused(self, response: Response, *, status: int, key: str, words: str) -> None:
        self.assertEqual(response.status_code, status, response.content[:400])
        self.assertIn(words, " ".join(response.json()[key]))


def _columns(record: Model) -> dict[str, Any]:
    record.refresh_from_db()
    return {field.attname: getattr(record, field.attname) for field in record._meta.concrete_fields}


def _admin_form_data(response: Any) -> dict[str, Any]:
    """The POST a browser would send for an admin change page as shown (forms and inlines)."""
    data: dict[str, Any] = {}

    def add(form: Any) -> None:
        for name, field in form.fields.items():
            value = form[name].value()
            if isinstance(field.widget, MultiWidget):
                for index, part in enumerate(field.widget.decompress(value)):
                    data[f"{form.add_prefix(name)}_{index}"] = "" if part is None else part
            elif value is True:
                data[form.add_prefix(name)] = "on"
            elif isinstance(value, FieldFile):
                continue  # no new upload: the file stays as it is
            elif value is not None and value is not False:
                data[form.add_prefix(name)] = value

    add(response.context["adminform"].form)
    for inline in response.context.get("inline_admin_formsets", []):
        formset = inline.formset
        add(formset.management_form)
        for form in formset.forms:
            add(form)
    return data


class RetiredLaserTests(WorldTestCase):
    @classmethod
    def setUpTestData(cls) -> None:
        super().setUpTestData()
        world = cls.world
        cls.disposed = services.laser_retire(laser=Laser.objects.get(pk=world.laser.pk), by=world.lso,
                                             status="disposed", reason="Scrapped after a tube failure.")

    def test_a_patch_of_a_disposed_laser_is_a_409_naming_its_status_and_changes_nothing(self) -> None:
        url = f"{V}/lasers/{self.disposed.pk}/"
        before, rows = _columns(self.disposed), register_state()
        for persona in ("lso", "owner"):
            with self.subTest(persona=persona):
                client = self.api(persona)
                response = client.patch(url, {"description": "still here"}, format="json",
                                         HTTP_IF_MATCH=client.get(url)["ETag"])
                self.assertRefused(response, status=409, key="status", words="is disposed")
        self.assertEqual(_columns(self.disposed), before)
        self.assertEqual(register_state(), rows)

    def test_a_new_emission_or_sop_on_a_disposed_laser_is_a_409_naming_its_status(self) -> None:
        rows = register_state()
        self.assertRefused(self.api("owner").post(f"{V}/emissions/", {**EMISSION, "laser": self.disposed.pk},
                                                  format="json"), status=409, key="laser", words="is disposed")
        self.assertRefused(self.api("owner").post(f"{V}/sops/", {"laser": self.disposed.pk, "title": "Decommissioning"},
                                                  format="json"), status=409, key="laser", words="is disposed")
        self.assertRefused(self.api("owner").post(f"{V}/authorizations/", {"person": self.world.owner.pk,
                                                                           "laser": self.disposed.pk},
                                                  format="json"), status=409, key="laser", words="is disposed")
        self.assertEqual(register_state(), rows)

    def test_its_emissions_sops_and_authorizations_take_no_change_and_say_why(self) -> None:
        world = self.world
        emission_url = f"{V}/emissions/{world.emission.pk}/"
        draft_url = f"{V}/sops/{world.draft_sop.pk}/"
        authorization_url = f"{V}/authorizations/{world.authorization.pk}/"
        records = [world.emission, world.draft_sop, world.authorization, world.sop]
        before, rows = [_columns(record) for record in records], register_state()
        client = self.api("lso")
        for response in (
            client.patch(emission_url, {"label": "renamed"}, format="json", HTTP_IF_MATCH="*"),
            client.patch(draft_url, {"title": "renamed"}, format="json", HTTP_IF_MATCH="*"),
            client.post(f"{draft_url}approve/", {}, format="json"),
            client.post(f"{V}/sops/{world.sop.pk}/acknowledge/", {}, format="json"),
            client.post(f"{V}/sops/{world.sop.pk}/retire/", {"reason": "tidy up"}, format="json"),
            client.post(f"{authorization_url}approve/", {}, format="json"),
            client.post(f"{authorization_url}withdraw/", {}, format="json"),
        ):
            with self.subTest(url=response.wsgi_request.path):
                self.assertRefused(response, status=409, key="laser", words="TST-0001 is disposed")
        self.assertEqual([_columns(record) for record in records], before)
        self.assertEqual(register_state(), rows)

    def test_the_services_refuse_the_same_for_every_other_way_in(self) -> None:
        transferred = services.laser_retire(laser=Laser.objects.get(pk=self.world.other_laser.pk), by=self.world.lso,
                                            status="transferred", reason="Lent to a partner lab.")
        for change in (
            lambda: services.laser_update(laser=transferred, by=self.world.lso, description="edited"),
            lambda: services.emission_create(laser=transferred, by=self.world.lso, wavelength_m="532 nm",
                                             temporal_mode="cw", average_power_W="1 W"),
            lambda: services.sop_create(laser=transferred, title="New", by=self.world.lso),
            lambda: services.emission_update(emission=transferred.emissions.get(), by=self.world.lso, label="x"),
        ):
            with self.assertRaises(services.StateError) as refused:
                change()
            self.assertIn("is transferred", str(refused.exception))

    def test_the_admin_shows_a_disposed_laser_and_its_emission_to_read_and_refuses_additions(self) -> None:
        admin = self.admin_client()
        page = admin.get(reverse("admin:registry_laser_change", args=[self.disposed.pk]))
        self.assertEqual(page.status_code, 200)
        self.assertFalse(page.context["has_change_permission"])
        before = _columns(self.disposed)
        posted = admin.post(reverse("admin:registry_laser_change", args=[self.disposed.pk]),
                            {"asset_tag": "TST-0001", "laser_type": "gas", "labelled_class": "1",
                             "description": "edited in the admin"})
        self.assertEqual(posted.status_code, 403)
        self.assertEqual(_columns(self.disposed), before)
        emission_page = admin.get(reverse("admin:registry_emission_change", args=[self.world.emission.pk]))
        self.assertFalse(emission_page.context["has_change_permission"])
        emissions = Emission.objects.count()
        added = admin.post(reverse("admin:registry_emission_add"), {
            "laser": self.disposed.pk, "label": "new line", "wavelength_m": "532 nm", "temporal_mode": "cw",
            "average_power_W": "5 mW", "diameter_definition": "1/e2", "source_size_rad": "0"})
        self.assertEqual(added.status_code, 200)
        self.assertIn("TST-0001 is disposed", " ".join(added.context["adminform"].form.non_field_errors()))
        self.assertEqual(Emission.objects.count(), emissions)


class RevertTests(WorldTestCase):
    def _revert(self, record: Model, version: Any) -> Any:
        admin = self.admin_client()
        name = record._meta.model_name
        url = reverse(f"admin:registry_{name}_simple_history", args=[record.pk, version.history_id])
        shown = admin.get(url)
        self.assertEqual(shown.status_code, 200)
        self.assertNotContains(shown, 'name="_save"')
        return admin.post(url, _admin_form_data(shown))

    def test_a_revert_post_changes_neither_a_disposed_laser_a_revoked_authorization_nor_a_retired_record(
            self) -> None:
        world = self.world
        lso = world.lso
        services.training_record_update(training_record=world.training, by=lso, evidence="Certificate 1")
        training = services.record_retire(record=TrainingRecord.objects.get(pk=world.training.pk), by=lso,
                                          reason="Entered twice.")
        laser = services.laser_retire(laser=Laser.objects.get(pk=world.other_laser.pk), by=lso, status="disposed",
                                      reason="Scrapped.")
        services.training_record(person=world.user, course="general", completed_on=training.completed_on,
                                 by=lso, valid_until=training.valid_until)
        services.sop_acknowledge(sop=world.sop, person=world.user)
        approved = services.authorization_approve(authorization=Authorization.objects.get(pk=world.authorization.pk),
                                                  by=lso)
        revoked = services.authorization_revoke(authorization=approved, by=lso, reason="Left the group.")
        for record, status_field, earlier in ((laser, "status", "active"), (revoked, "status", "approved"),
                                              (training, "retired_at", None)):
            with self.subTest(record=str(record)):
                version = record.history.filter(**{status_field: earlier}).latest("history_date")
                before, rows = _columns(record), record.history.count()
                response = self._revert(record, version)
                self.assertEqual(response.status_code, 403)
                self.assertEqual(_columns(record), before)
                self.assertEqual(record.history.count(), rows)

    def test_history_stays_readable(self) -> None:
        admin = self.admin_client()
        page = admin.get(reverse("admin:registry_laser_history", args=[self.world.laser.pk]))
        self.assertEqual(page.status_code, 200)
        self.assertContains(page, "View history")


class ApprovalNeedsAnAssessmentTests(WorldTestCase):
    def _pending(self, asset_tag: str, labelled_class: str, embedded_class: str = "", **emission: Any) -> Laser:
        world = self.world
        laser = services.laser_register(by=world.owner, asset_tag=asset_tag, laser_type="diode",
                                        labelled_class=labelled_class, embedded_class=embedded_class,
                                        owner=world.owner, location=world.room)
        services.emission_create(laser=laser, by=world.owner, **{"wavelength_m": "405 nm", "temporal_mode": "cw",
                                                                 "average_power_W": "100 mW", **emission})
        return laser

    def test_a_class_3b_or_4_laser_with_an_emission_that_cannot_be_assessed_is_not_approved(self) -> None:
        cases = [
            # (labelled, embedded, the emission's beam, words the refusal holds)
            ("3B", "", {"beam_diameter_m": "1 mm"}, "divergence"),
            ("4", "", {"divergence_rad": "1 mrad"}, "beam diameter"),
            ("1", "4", {}, "beam diameter"),
        ]
        for number, (labelled, embedded, beam, words) in enumerate(cases):
            with self.subTest(labelled=labelled, embedded=embedded):
                laser = self._pending(f"TST-01{number}", labelled, embedded, **beam)
                emission = laser.emissions.get()
                self.assertIn(words, emission.assessment_problem)
                history = laser.history.count()
                response = self.api("lso").post(f"{V}/lasers/{laser.pk}/approve/", {}, format="json")
                self.assertRefused(response, status=409, key="emissions", words="a hazard assessment of")
                self.assertIn(words, response.json()["emissions"][0])
                laser.refresh_from_db()
                self.assertEqual((laser.status, laser.history.count()), ("pending_review", history))

    def test_an_emission_the_engine_refused_blocks_approval_with_its_reason(self) -> None:
        # The register stores a single pulse given by its average power; the engine needs the
        # pulse energy of a single pulse and refuses it.
        laser = self._pending("TST-0120", "4", temporal_mode="single_pulse", pulse_duration_s="10 ns",
                              average_power_W="1 W", beam_diameter_m="1 mm", divergence_rad="1 mrad")
        emission = laser.emissions.get()
        self.assertIn("required for a single pulse", emission.assessment_problem)
        self.assertFalse(emission.hazard_results.exists())
        with self.assertRaises(services.PrerequisiteError) as refused:
            services.laser_approve(laser=laser, by=self.world.lso)
        self.assertIn("required for a single pulse", str(refused.exception))
        laser.refresh_from_db()
        self.assertEqual(laser.status, "pending_review")

    def test_a_hazardous_laser_whose_emissions_are_assessed_and_a_low_class_laser_are_approved(self) -> None:
        assessed = self._pending("TST-0130", "3B", beam_diameter_m="1 mm", divergence_rad="1 mrad")
        low = self._pending("TST-0131", "2", average_power_W="0.5 mW")
        for laser in (assessed, low):
            with self.subTest(laser=laser.asset_tag):
                response = self.api("lso").post(f"{V}/lasers/{laser.pk}/approve/", {}, format="json")
                self.assertEqual(response.status_code, 200, response.content[:300])
                laser.refresh_from_db()
                self.assertEqual(laser.status, "active")

    def test_why_an_emission_is_not_assessed_is_shown_read_only_in_the_api_and_the_admin(self) -> None:
        laser = self._pending("TST-0140", "4", beam_diameter_m="1 mm")
        emission = laser.emissions.get()
        client = self.api("owner")
        url = f"{V}/emissions/{emission.pk}/"
        shown = client.get(url).json()
        self.assertIn("divergence", shown["assessment_problem"])
        self.assertEqual(shown["hazard_results"], [])
        embedded = client.get(f"{V}/lasers/{laser.pk}/").json()["emissions"][0]
        self.assertEqual(embedded["assessment_problem"], shown["assessment_problem"])
        refused = client.patch(url, {"assessment_problem": ""}, format="json", HTTP_IF_MATCH=client.get(url)["ETag"])
        self.assertRefused(refused, status=400, key="assessment_problem", words="read-only")
        emission.refresh_from_db()
        self.assertEqual(emission.assessment_problem, shown["assessment_problem"])
        admin = self.admin_client()
        page = admin.get(reverse("admin:registry_emission_change", args=[emission.pk]))
        self.assertNotIn("assessment_problem", page.context["adminform"].form.fields)
        self.assertContains(page, "divergence")
        laser_page = admin.get(reverse("admin:registry_laser_change", args=[laser.pk]))
        inline = laser_page.context["inline_admin_formsets"][0]
        self.assertIn("assessment_problem", inline.readonly_fields)
        self.assertNotIn("assessment_problem", inline.formset.forms[0].fields)


class LoweredClassTests(WorldTestCase):
    def _patch(self, persona: str, laser: Laser, body: dict[str, Any]) -> Response:
        client = self.api(persona)
        url = f"{V}/lasers/{laser.pk}/"
        response: Response = client.patch(url, body, format="json", HTTP_IF_MATCH=client.get(url)["ETag"])
        return response

    def test_a_researcher_lowering_an_approved_lasers_class_sends_it_back_to_review_with_history(self) -> None:
        laser = self.world.laser
        for body, old, new in (({"labelled_class": "1"}, "4", "1"),
                               ({"embedded_class": "1"}, "4", "4 (embedded 1)")):
            with self.subTest(body=body):
                Laser.objects.filter(pk=laser.pk).update(status="active", labelled_class="4", embedded_class="")
                response = self._patch("owner", laser, body)
                self.assertEqual(response.status_code, 200, response.content[:300])
                laser.refresh_from_db()
                self.assertEqual(laser.status, LaserStatus.PENDING_REVIEW)
                self.assertIn(f"lowered the class from {old} to {new}", laser.status_note)
                latest = laser.history.latest("history_date")
                self.assertEqual((latest.status, latest.history_user), ("pending_review", self.world.owner.user))
                self.assertEqual(response.json()["status"], "pending_review")

    def test_the_lso_lowering_the_class_or_a_researcher_raising_it_keeps_the_laser_in_service(self) -> None:
        laser = self.world.laser
        for persona, body in (("lso", {"labelled_class": "1"}), ("owner", {"labelled_class": "4",
                                                                            "embedded_class": ""})):
            with self.subTest(persona=persona):
                response = self._patch(persona, laser, body)
                self.assertEqual(response.status_code, 200, response.content[:300])
                laser.refresh_from_db()
                self.assertEqual(laser.status, "active")
                self.assertEqual(laser.labelled_class, body["labelled_class"])


class AdminConstraintTests(WorldTestCase):
    def test_adding_or_editing_a_class_4_laser_without_owner_or_location_is_a_form_error(self) -> None:
        admin = self.admin_client()
        lasers = Laser.objects.count()
        added = admin.post(reverse("admin:registry_laser_add"), {
            "asset_tag": "TST-0900", "laser_type": "gas", "labelled_class": "4",
            "emissions-TOTAL_FORMS": "0", "emissions-INITIAL_FORMS": "0"})
        self.assertEqual(added.status_code, 200)
        self.assertIn("needs an owner and a location", " ".join(added.context["adminform"].form.non_field_errors()))
        self.assertEqual(Laser.objects.count(), lasers)
        laser = self.world.returned_laser
        page = admin.get(reverse("admin:registry_laser_change", args=[laser.pk]))
        data = {**_admin_form_data(page), "labelled_class": "4"}
        del data["owner"], data["location"]
        edited = admin.post(reverse("admin:registry_laser_change", args=[laser.pk]), data)
        self.assertEqual(edited.status_code, 200)
        self.assertIn("needs an owner and a location", " ".join(edited.context["adminform"].form.non_field_errors()))
        laser.refresh_from_db()
        self.assertEqual((laser.labelled_class, laser.owner_id), ("2", self.world.owner.pk))

    def test_every_constraint_on_a_field_the_admin_form_does_not_show_is_a_form_error(self) -> None:
        world = self.world
        admin = self.admin_client()
        second_approved = SOP.objects.create(laser=world.other_laser, title="Other", version=1, status="approved",
                                             approved_by=world.lso, approved_on=world.sop.approved_on)
        open_request = services.authorization_request(person=world.user, laser=world.other_laser, by=world.lso)
        closing = services.incident_close(incident=world.investigated_incident, by=world.lso,
                                          follow_up="Goggles issued to everyone.")
        cases = [
            # (record, a change its form allows, words of the constraint it breaks)
            (second_approved, {"laser": world.laser.pk}, "Constraint"),
            (open_request, {"laser": world.laser.pk}, "Constraint"),
            (closing, {"follow_up": ""}, "needs its follow-up"),
        ]
        for record, change, words in cases:
            with self.subTest(record=type(record).__name__):
                name = record._meta.model_name
                url = reverse(f"admin:registry_{name}_change", args=[record.pk])
                data = {**_admin_form_data(admin.get(url)), **change}
                before = _columns(record)
                response = admin.post(url, data)
                self.assertEqual(response.status_code, 200, response.content[:300])
                errors = " ".join(response.context["adminform"].form.non_field_errors())
                self.assertIn(words.lower(), errors.lower())
                self.assertEqual(_columns(record), before)

    def test_a_form_refused_by_a_service_rule_shows_each_message_once(self) -> None:
        admin = self.admin_client()
        added = admin.post(reverse("admin:registry_laser_add"), {
            "asset_tag": "TST-0901", "laser_type": "gas", "labelled_class": "4",
            "emissions-TOTAL_FORMS": "0", "emissions-INITIAL_FORMS": "0"})
        errors = list(added.context["adminform"].form.non_field_errors())
        self.assertEqual(len(errors), len(set(errors)))
        self.assertEqual(len([error for error in errors if "needs an owner and a location" in error]), 1)


def test_refuse_if_read_only_is_silent_for_a_record_in_the_register(db: None) -> None:
    world = build_world()
    for record in (world.laser, world.emission, world.sop, world.authorization, world.training):
        services.refuse_if_read_only(record)
    Laser.objects.filter(pk=world.laser.pk).update(status="transferred")
    world.emission.refresh_from_db()
    try:
        services.refuse_if_read_only(world.emission)
    except ValidationError as refused:
        assert "is transferred" in refused.messages[0]
    else:
        raise AssertionError("an emission of a transferred laser was not refused")
