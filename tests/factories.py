"""factory_boy factories for the register's models.

Each factory builds the smallest valid row: a class 3B laser in a room with an owner, a
10 mW CW emission at 532 nm, and so on. ``.create()`` goes straight to the database
(no full_clean), which is what the constraint tests rely on.
"""
from __future__ import annotations

import datetime

import factory
from django.contrib.auth import get_user_model
from django.utils import timezone

from registry.models import (
    SOP,
    Audit,
    AuditChecklistItem,
    Authorization,
    Emission,
    Eyewear,
    EyewearMarking,
    Finding,
    HazardResult,
    Incident,
    Laser,
    Location,
    Person,
    ResearchGroup,
    SentReminder,
    SOPAcknowledgement,
    TrainingRecord,
)


class UserFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = get_user_model()
        django_get_or_create = ("username",)

    username = factory.Sequence(lambda n: f"person{n}")
    first_name = factory.Sequence(lambda n: f"Given{n}")
    last_name = factory.Sequence(lambda n: f"Family{n}")
    email = factory.LazyAttribute(lambda user: f"{user.username}@campus.example")
    password = factory.django.Password("test-password")


class ResearchGroupFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = ResearchGroup

    slug = factory.Sequence(lambda n: f"group-{n}")
    name = factory.Sequence(lambda n: f"Group {n}")


class PersonFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Person

    user = factory.SubFactory(UserFactory)
    role = Person.Role.USER
    research_group = factory.SubFactory(ResearchGroupFactory)


class LocationFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Location

    code = factory.Sequence(lambda n: f"room-{n}")
    site = "Test site"
    building = "Test building"
    room = factory.Sequence(lambda n: f"R{n}")
    is_controlled_area = True
    longest_dimension_m = 6.0


class LaserFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Laser

    asset_tag = factory.Sequence(lambda n: f"T-{n:04d}")
    manufacturer = "Test Optics"
    model_name = "TL-1"
    serial_number = factory.Sequence(lambda n: f"SN{n:05d}")
    laser_type = "solid_state"
    labelled_class = "3B"
    status = "active"
    owner = factory.SubFactory(PersonFactory, role=Person.Role.RESEARCHER)
    location = factory.SubFactory(LocationFactory)


class EmissionFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Emission

    laser = factory.SubFactory(LaserFactory)
    label = "output"
    wavelength_m = 532e-9
    temporal_mode = "cw"
    average_power_W = 0.01
    beam_diameter_m = 1e-3
    divergence_rad = 1e-3


class HazardResultFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = HazardResult

    emission = factory.SubFactory(EmissionFactory)
    limits = "icnirp2013"
    exposure_s = 0.25
    eye_mpe_J_m2 = 6.4
    eye_mpe_W_m2 = 25.6
    engine_version = "test"
    computed_at = factory.LazyFunction(timezone.now)


class TrainingRecordFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = TrainingRecord

    person = factory.SubFactory(PersonFactory)
    course = "general"
    title = "Laser safety induction"
    completed_on = factory.LazyFunction(lambda: timezone.localdate() - datetime.timedelta(days=30))
    valid_until = factory.LazyFunction(lambda: timezone.localdate() + datetime.timedelta(days=335))


class SOPFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = SOP

    laser = factory.SubFactory(LaserFactory)
    title = "Routine operation"
    version = factory.Sequence(lambda n: n + 1)
    status = "draft"


class SOPAcknowledgementFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = SOPAcknowledgement

    sop = factory.SubFactory(SOPFactory)
    person = factory.SubFactory(PersonFactory)
    acknowledged_at = factory.LazyFunction(timezone.now)


class AuthorizationFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Authorization

    person = factory.SubFactory(PersonFactory)
    laser = factory.SubFactory(LaserFactory)
    requested_by = factory.SelfAttribute("laser.owner")
    requested_at = factory.LazyFunction(timezone.now)


class EyewearFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Eyewear

    inventory_tag = factory.Sequence(lambda n: f"EW-T{n:03d}")
    description = "Test goggles"
    location = factory.SubFactory(LocationFactory)


class EyewearMarkingFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = EyewearMarking

    eyewear = factory.SubFactory(EyewearFactory)
    wavelength_min_m = 520e-9
    wavelength_max_m = 540e-9
    optical_density = 5.0


class AuditFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Audit

    reference = factory.Sequence(lambda n: f"AUD-T{n:03d}")
    scope = "location"
    location = factory.SubFactory(LocationFactory)
    planned_on = factory.LazyFunction(timezone.localdate)
    auditor = factory.SubFactory(PersonFactory, role=Person.Role.LSO, research_group=None)


class AuditChecklistItemFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = AuditChecklistItem

    audit = factory.SubFactory(AuditFactory)
    position = factory.Sequence(lambda n: n + 1)
    question = "Is the warning light working?"


class FindingFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Finding

    audit = factory.SubFactory(AuditFactory)
    severity = "minor"
    description = "Beam dump missing."
    owner = factory.SubFactory(PersonFactory, role=Person.Role.RESEARCHER)


class IncidentFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Incident

    reference = factory.Sequence(lambda n: f"INC-T{n:03d}")
    kind = "near_miss"
    occurred_at = factory.LazyFunction(timezone.now)
    reported_by = factory.SubFactory(PersonFactory)
    description = "A stray reflection reached the wall."


class SentReminderFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = SentReminder

    kind = "training"
    recipient = factory.SubFactory(PersonFactory)
    sent_on = factory.LazyFunction(timezone.localdate)
    sent_at = factory.LazyFunction(timezone.now)
    address = factory.LazyAttribute(lambda reminder: reminder.recipient.user.email)
    subject = "Laser safety training to renew"
    body = "Hello"
