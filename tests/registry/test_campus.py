"""The demo campus: it loads, loads again without duplicates, and is self-consistent."""
from __future__ import annotations

import datetime
from io import StringIO

import pytest
from pytest_django.fixtures import Settings
from django.contrib.auth import get_user_model
from django.core.management import call_command
from django.db.models import Count, Q
from django.test import RequestFactory, TestCase
from django.utils import timezone

from registry.models import (
    HAZARDOUS_CLASSES,
    RETIRED_STATUSES,
    SOP,
    Audit,
    Authorization,
    AuthorizationStatus,
    Emission,
    Eyewear,
    EyewearMarking,
    Finding,
    Incident,
    Laser,
    Location,
    Person,
    Role,
    SOPAcknowledgement,
    TrainingRecord,
)
from registry.selectors import authorization_missing_prerequisites, training_expiring
from registry.services.campus import campus_load, campus_read, demo_password

CAMPUS_MODELS = [Location, Laser, Emission, Person, TrainingRecord, Authorization, SOP, SOPAcknowledgement,
                 Eyewear, EyewearMarking, Audit, Finding, Incident]


def _wavelengths_nm() -> set[float]:
    return {round(value * 1e9, 1) for value in Emission.objects.values_list("wavelength_m", flat=True)}


class CampusContentTests(TestCase):
    @classmethod
    def setUpTestData(cls) -> None:
        cls.summary = campus_load(data=campus_read(), set_demo_passwords=True)

    def test_it_is_a_campus_of_the_size_the_demo_promises(self) -> None:
        self.assertGreaterEqual(Location.objects.values("building").distinct().count(), 3)
        self.assertGreaterEqual(Location.objects.count(), 10)
        self.assertGreaterEqual(Laser.objects.count(), 25)

    def test_it_holds_the_kinds_of_laser_a_research_facility_has(self) -> None:
        expected_nm = {800.0, 1064.0, 532.0, 355.0, 10600.0, 632.8, 405.0, 1550.0, 248.0, 488.0, 514.5, 694.3}
        self.assertLessEqual(expected_nm, _wavelengths_nm())
        cutter = Laser.objects.get(gain_medium="CO2")
        self.assertEqual((cutter.labelled_class, cutter.embedded_class), ("1", "4"))
        ruby = Emission.objects.get(laser__gain_medium__startswith="Ruby")
        self.assertAlmostEqual(ruby.pulse_duration_s, 1e-3)
        photocoagulator = Emission.objects.get(wavelength_m=532e-9, laser__location__building__contains="Clinical")
        self.assertEqual(photocoagulator.temporal_mode, "cw")
        pointer = Laser.objects.get(description__contains="pointer")
        self.assertLess(pointer.emissions.get().average_power_W, 5e-3)

    def test_every_class_3b_or_4_laser_in_service_has_a_room_an_owner_and_an_emission(self) -> None:
        hazardous = Laser.objects.filter(
            Q(labelled_class__in=HAZARDOUS_CLASSES) | Q(embedded_class__in=HAZARDOUS_CLASSES)
        ).annotate(lines=Count("emissions"))
        self.assertGreater(hazardous.count(), 15)
        for laser in hazardous:
            with self.subTest(laser=laser.asset_tag):
                self.assertGreaterEqual(laser.lines, 1)
                if laser.status not in RETIRED_STATUSES:
                    self.assertIsNotNone(laser.location_id)
                    self.assertIsNotNone(laser.owner_id)

    def test_one_pending_registration_cannot_be_assessed_and_says_why(self) -> None:
        self.assertEqual([(emission, reason.split(":")[0]) for emission, reason in self.summary.not_assessed],
                         [("FV-0029 450 nm continuous wave", "full-angle divergence (rad)")])
        self.assertEqual(Laser.objects.get(asset_tag="FV-0029").status, "pending_review")

    def test_pulsed_emissions_agree_with_their_average_power(self) -> None:
        # Average power = pulse energy x repetition rate, to the rounding of a data sheet.
        pulsed = Emission.objects.filter(pulse_energy_J__isnull=False, prf_Hz__isnull=False,
                                         average_power_W__isnull=False)
        self.assertGreater(pulsed.count(), 5)
        for emission in pulsed:
            with self.subTest(emission=str(emission)):
                self.assertAlmostEqual(emission.pulse_energy_J * emission.prf_Hz / emission.average_power_W, 1.0,
                                       delta=0.05)

    def test_it_has_people_of_every_role_and_a_demo_login_for_each(self) -> None:
        self.assertEqual(set(Person.objects.values_list("role", flat=True)), set(Role.values))
        self.assertEqual({login.role for login in self.summary.logins}, set(Role.values))
        for login in self.summary.logins:
            with self.subTest(login=login.username):
                # The lockout backend (django-axes) counts each sign-in against its request.
                self.assertTrue(self.client.login(request=RequestFactory().post("/login/"), username=login.username,
                                                  password=demo_password(login.username)))

    def test_training_includes_records_expiring_soon_and_records_expired(self) -> None:
        today = timezone.localdate()
        self.assertTrue(training_expiring(within_days=30).exists())
        self.assertTrue(TrainingRecord.objects.filter(valid_until__lt=today).exists())

    def test_every_approved_authorization_meets_its_prerequisites(self) -> None:
        approved = Authorization.objects.filter(status=AuthorizationStatus.APPROVED)
        self.assertGreaterEqual(approved.count(), 3)
        for authorization in approved:
            with self.subTest(authorization=str(authorization)):
                self.assertEqual(
                    authorization_missing_prerequisites(person=authorization.person, laser=authorization.laser), [])
        # The open requests show the check at work: each lacks something.
        for authorization in Authorization.objects.filter(status=AuthorizationStatus.REQUESTED):
            with self.subTest(request=str(authorization)):
                self.assertNotEqual(
                    authorization_missing_prerequisites(person=authorization.person, laser=authorization.laser), [])

    def test_the_past_audit_is_signed_off_with_findings_still_open(self) -> None:
        audit = Audit.objects.get()
        self.assertEqual(audit.status, "signed_off")
        self.assertLess(audit.conducted_on, timezone.localdate())
        self.assertGreaterEqual(audit.findings.filter(status="open").count(), 1)

    def test_every_eyewear_item_has_a_marking(self) -> None:
        self.assertFalse(Eyewear.objects.filter(markings__isnull=True).exists())

    def test_loading_again_duplicates_nothing_and_writes_no_history(self) -> None:
        counts = {model: model.objects.count() for model in CAMPUS_MODELS}
        history = {model: model.history.count() for model in CAMPUS_MODELS}
        users = get_user_model().objects.count()
        again = campus_load(data=campus_read(), set_demo_passwords=True)
        self.assertEqual(again.saved_rows, 0)
        self.assertEqual({model: model.objects.count() for model in CAMPUS_MODELS}, counts)
        self.assertEqual({model: model.history.count() for model in CAMPUS_MODELS}, history)
        self.assertEqual(get_user_model().objects.count(), users)


@pytest.mark.django_db
def test_seed_campus_prints_demo_credentials_in_development(settings: Settings) -> None:
    settings.DEBUG = True
    out = StringIO()
    call_command("seed_campus", stdout=out)
    output = out.getvalue()
    assert output.startswith("Fenwick Vale Research Campus: 12 locations, 29 lasers")
    for username in ("lso", "researcher", "user", "inspector"):
        assert f"username {username:<11} password {demo_password(username)}" in output
    call_command("seed_campus", stdout=StringIO())
    assert Laser.objects.count() == 29


@pytest.mark.django_db
def test_seed_campus_sets_no_demo_password_when_debug_is_off(settings: Settings) -> None:
    settings.DEBUG = False
    out = StringIO()
    call_command("seed_campus", stdout=out)
    assert "password lso-demo" not in out.getvalue()
    assert "set one with: manage.py changepassword lso" in out.getvalue()
    assert not get_user_model().objects.get(username="lso").has_usable_password()


@pytest.mark.django_db
def test_relative_dates_follow_the_load_day() -> None:
    day = datetime.date(2030, 6, 1)
    campus_load(data=campus_read(), today=day)
    user_training = TrainingRecord.objects.get(person__user__username="user", course="general")
    assert user_training.valid_until == day + datetime.timedelta(days=20)
