"""Reads: querysets with their related rows loaded, and questions the workflows ask.

List selectors return querysets (callers may filter and paginate further) with the
joins and prefetches their usual display needs, so a page of lasers costs a fixed number
of queries however many rows it shows.
"""
from __future__ import annotations

import datetime
from collections.abc import Iterable
from dataclasses import dataclass

from django.conf import settings
from django.db.models import Prefetch, Q, QuerySet
from django.utils import timezone

from hazards.classes import LASER_CLASSES
from hazards.eyewear import Adequacy, EyewearBand, LbRequirement, eyewear_adequacy

from registry.models import (
    GENERAL_COURSES,
    HAZARDOUS_CLASSES,
    SOP,
    Audit,
    Authorization,
    AuthorizationStatus,
    AuditScope,
    AuditStatus,
    RETIRED_STATUSES,
    Emission,
    Eyewear,
    EyewearCondition,
    EyewearMarking,
    Finding,
    FindingStatus,
    HazardResult,
    Incident,
    Laser,
    Location,
    Person,
    Role,
    SOPAcknowledgement,
    SOPStatus,
    TrainingRecord,
)


def laser_list() -> QuerySet[Laser]:
    """Every laser with owner, account, group, location, emissions and their hazard results.

    The emissions are the list ``laser.current_emissions`` (by wavelength), each with its
    results in the list ``emission.current_results`` (by limit set): plain lists, because a
    prefetch into ``.emissions.all()`` and ``.hazard_results.all()`` builds a queryset per
    row, a tenth of an API page's time. The emissions' lasers are not joined again (the
    prefetch links each to its laser). Results are loaded without ``working`` (kB of JSON
    each, shown only by the working endpoint); reading it from these rows costs a query each.
    """
    return Laser.objects.select_related("owner__user", "owner__research_group", "location").prefetch_related(
        Prefetch("emissions", to_attr="current_emissions"),
        Prefetch("current_emissions__hazard_results", queryset=HazardResult.objects.defer("working"),
                 to_attr="current_results"),
    )


def emission_list() -> QuerySet[Emission]:
    """Emissions with their laser and, in the list ``emission.current_results``, their hazard results."""
    return Emission.objects.select_related("laser").prefetch_related(
        Prefetch("hazard_results", queryset=HazardResult.objects.order_by("limits"), to_attr="current_results")
    )


def person_list() -> QuerySet[Person]:
    return Person.objects.select_related("user", "research_group", "supervisor__user")


def people_visible_to(*, viewer: Person) -> QuerySet[Person]:
    """The people records ``viewer`` may see: everyone for an LSO or inspector, the own
    research group for a researcher, only themselves for a laser user."""
    people = person_list()
    if viewer.role in (Role.LSO, Role.INSPECTOR):
        return people
    if viewer.role == Role.RESEARCHER and viewer.research_group_id is not None:
        return people.filter(Q(research_group_id=viewer.research_group_id) | Q(pk=viewer.pk))
    return people.filter(pk=viewer.pk)


def training_list() -> QuerySet[TrainingRecord]:
    return TrainingRecord.objects.select_related("person__user", "laser", "verified_by__user")


def training_current(*, person: Person, on: datetime.date | None = None) -> QuerySet[TrainingRecord]:
    """Unretired general or refresher training of ``person`` that is valid on ``on`` (today)."""
    day = on or timezone.localdate()
    return training_list().filter(
        person=person, course__in=GENERAL_COURSES, retired_at__isnull=True, completed_on__lte=day,
    ).filter(Q(valid_until__isnull=True) | Q(valid_until__gte=day))


def training_expiring(*, within_days: int, on: datetime.date | None = None) -> QuerySet[TrainingRecord]:
    """Unretired records that are still valid on ``on`` but expire within ``within_days``."""
    day = on or timezone.localdate()
    return training_list().filter(
        retired_at__isnull=True, valid_until__gte=day, valid_until__lte=day + datetime.timedelta(days=within_days),
    )


def sop_current(*, laser: Laser) -> SOP | None:
    """The approved, unretired SOP version in force for ``laser``, if any."""
    return SOP.objects.filter(laser=laser, status=SOPStatus.APPROVED, retired_at__isnull=True).first()


def authorization_list() -> QuerySet[Authorization]:
    return Authorization.objects.select_related(
        "person__user", "laser__location", "requested_by__user", "decided_by__user"
    )


def authorization_missing_prerequisites(*, person: Person, laser: Laser,
                                        on: datetime.date | None = None) -> list[str]:
    """What stands between ``person`` and an approved authorization on ``laser``; empty when nothing."""
    missing: list[str] = []
    if not training_current(person=person, on=on).exists():
        missing.append(f"{person} has no valid general laser safety training.")
    sop = sop_current(laser=laser)
    if sop is None:
        missing.append(f"{laser.asset_tag} has no approved SOP.")
    elif not SOPAcknowledgement.objects.filter(sop=sop, person=person, retired_at__isnull=True).exists():
        missing.append(f"{person} has not acknowledged {sop}.")
    return missing


def authorizations_in_force(*, person: Person, on: datetime.date | None = None) -> QuerySet[Authorization]:
    day = on or timezone.localdate()
    return authorization_list().filter(
        person=person, status=AuthorizationStatus.APPROVED, retired_at__isnull=True,
    ).filter(Q(valid_until__isnull=True) | Q(valid_until__gte=day))


def eyewear_list() -> QuerySet[Eyewear]:
    return Eyewear.objects.select_related("location").prefetch_related("markings")


def audit_list() -> QuerySet[Audit]:
    return Audit.objects.select_related("location", "auditor__user", "signed_off_by__user").prefetch_related(
        "lasers", "checklist", Prefetch("findings", queryset=finding_list()),
    )


def audit_scope_lasers(audit: Audit) -> QuerySet[Laser]:
    """The lasers ``audit`` covers, as ``laser_list()`` loads them: those chosen for a laser audit;
    for a room or a site, those in the register's care there (every status but disposed and
    transferred; a site audit without a site name covers every room)."""
    lasers = laser_list().order_by("location__site", "location__building", "location__room", "asset_tag")
    if audit.scope == AuditScope.LASERS:
        return lasers.filter(audits=audit)
    lasers = lasers.exclude(status__in=RETIRED_STATUSES)
    if audit.scope == AuditScope.LOCATION:
        return lasers.filter(location_id=audit.location_id)
    return lasers.filter(location__site=audit.site) if audit.site else lasers.filter(location__isnull=False)


def audits_signed_off_between(start: datetime.date, end: datetime.date) -> QuerySet[Audit]:
    """Unretired audits signed off from ``start`` to ``end`` (inclusive, local dates), oldest first."""
    return audit_list().filter(status=AuditStatus.SIGNED_OFF, retired_at__isnull=True,
                               signed_off_at__date__gte=start, signed_off_at__date__lte=end).order_by("signed_off_at")


def lso_contacts() -> QuerySet[Person]:
    """The laser safety officers a sign or report names as the contact."""
    return person_list().filter(role=Role.LSO, user__is_active=True)


def finding_list() -> QuerySet[Finding]:
    return Finding.objects.select_related("audit", "laser", "location", "owner__user", "closed_by__user")


def finding_open_list() -> QuerySet[Finding]:
    return finding_list().filter(status=FindingStatus.OPEN, retired_at__isnull=True)


def incident_list() -> QuerySet[Incident]:
    return Incident.objects.select_related("laser", "location", "reported_by__user").prefetch_related(
        "people_involved__user"
    )


def register_limits() -> str:
    """The limit set the register leads with (settings.HAZARD_LIMITS); both sets are always stored."""
    return str(settings.HAZARD_LIMITS)


def eyewear_band(marking: EyewearMarking) -> EyewearBand:
    """The engine's view of one marked band: its OD and an LB number under each marked test letter."""
    scale_numbers = ({letter: marking.en207_scale for letter in marking.en207_conditions.upper()}
                     if marking.en207_scale is not None else {})
    return EyewearBand(marking.wavelength_min_m, marking.wavelength_max_m, optical_density=marking.optical_density,
                       scale_numbers=scale_numbers)


@dataclass(frozen=True)
class EyewearMatrix:
    """Each emission of a room's lasers against each eyewear item kept there, under one limit set.

    ``cells[(emission.pk, eyewear.pk)]`` is the engine's verdict from the item's marked bands.
    An emission without a result under the limit set is in ``not_assessed`` and has no cells.
    Damaged eyewear is judged on its marking like any other, but never protects anyone:
    ``unprotected`` lists the assessed emissions that need eyewear (OD above 0) and have no
    adequate item in good or worn condition.
    """

    location: Location
    limits: str
    lasers: list[Laser]
    emissions: list[Emission]
    eyewear: list[Eyewear]
    cells: dict[tuple[int, int], Adequacy]
    not_assessed: list[Emission]
    unprotected: list[Emission]


_VERDICT_SEVERITY = {"adequate": 0, "inadequate": 1, "not_covered": 2}


def location_eyewear_matrix(*, location: Location, limits: str | None = None,
                             lasers_in_room: list[Laser] | None = None) -> EyewearMatrix:
    """The eyewear adequacy of ``location`` (five queries: lasers with emissions and results, eyewear with markings).

    The lasers are those in the register's care in the room (every status but disposed and transferred).
    A caller that has loaded exactly those with ``laser_list()`` passes them as ``lasers_in_room``,
    which saves their three queries.
    """
    chosen = limits or register_limits()
    lasers = lasers_in_room if lasers_in_room is not None else list(
        laser_list().filter(location=location).exclude(status__in=RETIRED_STATUSES))
    items = list(eyewear_list().filter(location=location, retired_at__isnull=True))
    bands = {item.pk: [eyewear_band(marking) for marking in item.markings.all()] for item in items}
    emissions: list[Emission] = []
    not_assessed: list[Emission] = []
    unprotected: list[Emission] = []
    cells: dict[tuple[int, int], Adequacy] = {}
    for laser in lasers:
        for emission in laser.current_emissions:
            result = next((r for r in emission.current_results if r.limits == chosen), None)
            if result is None or result.od_required is None:
                not_assessed.append(emission)
                continue
            emissions.append(emission)
            requirements = [LbRequirement.from_dict(record) for record in result.en207_requirements]
            # A tunable emission needs eyewear over its whole range: the worse of its two ends counts.
            ends = [emission.wavelength_m] + ([emission.wavelength_max_m] if emission.wavelength_max_m else [])
            for item in items:
                cells[(emission.pk, item.pk)] = max(
                    (eyewear_adequacy(wavelength, int(result.od_required), requirements, bands[item.pk])
                     for wavelength in ends), key=lambda verdict: _VERDICT_SEVERITY[verdict.status])
            protected = any(cells[(emission.pk, item.pk)].status == "adequate"
                            for item in items if item.condition != EyewearCondition.DAMAGED)
            if result.od_required > 0 and not protected:
                unprotected.append(emission)
    return EyewearMatrix(location=location, limits=chosen, lasers=lasers, emissions=emissions, eyewear=items, cells=cells,
                         not_assessed=not_assessed, unprotected=unprotected)


def signal_word(classes: Iterable[str]) -> str | None:
    """The door sign's signal word for the highest of ``classes`` (settings.SIGNAL_WORDS); None: no sign needed."""
    present = [label for label in classes if label]
    if not present:
        return None
    highest = max(present, key=LASER_CLASSES.index)
    word = settings.SIGNAL_WORDS.get(highest)
    return str(word) if word else None


@dataclass(frozen=True)
class AuditDue:
    """When a location that holds a class 3B or 4 laser is next due for audit.

    ``last`` is the last signed-off audit covering it (its own, or the whole site's), None if
    it was never audited; ``due_on`` is None for a location never audited, which is overdue.
    ``planned`` is an audit of it planned or in progress, if any.
    """

    location: Location
    last: Audit | None
    due_on: datetime.date | None
    overdue: bool
    planned: Audit | None


def audits_due(*, today: datetime.date | None = None, within_days: int = 30) -> list[AuditDue]:
    """Locations with a class 3B/4 laser in the register's care that are due within ``within_days``, or overdue.

    Three queries: the locations, the signed-off audits and the open ones. Overdue first, then by due date.
    """
    day = today or timezone.localdate()
    hazardous = (Q(lasers__labelled_class__in=HAZARDOUS_CLASSES) | Q(lasers__embedded_class__in=HAZARDOUS_CLASSES)) \
        & ~Q(lasers__status__in=RETIRED_STATUSES)
    locations = list(Location.objects.filter(hazardous).distinct().order_by("site", "building", "room"))
    covering = Q(scope=AuditScope.LOCATION, location__in=locations) | Q(scope=AuditScope.SITE)
    audits = Audit.objects.filter(covering, retired_at__isnull=True).select_related("location").order_by("conducted_on")
    signed_off = [audit for audit in audits if audit.status == AuditStatus.SIGNED_OFF]
    open_audits = [audit for audit in audits if audit.status != AuditStatus.SIGNED_OFF]
    due: list[AuditDue] = []
    for location in locations:
        last = next((audit for audit in reversed(signed_off) if _covers(audit, location)), None)
        due_on = None if last is None else _add_months(last.conducted_on, settings.AUDIT_INTERVAL_MONTHS)
        if due_on is not None and due_on > day + datetime.timedelta(days=within_days):
            continue
        planned = next((audit for audit in open_audits if _covers(audit, location)), None)
        due.append(AuditDue(location=location, last=last, due_on=due_on, overdue=due_on is None or due_on < day,
                            planned=planned))
    return sorted(due, key=lambda item: (not item.overdue, item.due_on or datetime.date.min))


def _covers(audit: Audit, location: Location) -> bool:
    if audit.scope == AuditScope.LOCATION:
        return audit.location_id == location.pk
    return not audit.site or audit.site == location.site


def _add_months(day: datetime.date | None, months: int) -> datetime.date | None:
    if day is None:
        return None
    month = day.month - 1 + months
    year, month = day.year + month // 12, month % 12 + 1
    last_day = (datetime.date(year + month // 12, month % 12 + 1, 1) - datetime.timedelta(days=1)).day
    return datetime.date(year, month, min(day.day, last_day))
