"""Reads: querysets with their related rows loaded, and questions the workflows ask.

List selectors return querysets (callers may filter and paginate further) with the
joins and prefetches their usual display needs, so a page of lasers costs a fixed number
of queries however many rows it shows.
"""
from __future__ import annotations

import datetime
import math
import re
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from typing import Any, Generic, TypeVar

from django.conf import settings
from django.core.paginator import Page, Paginator
from django.db.models import (
    BooleanField,
    Case,
    CharField,
    Count,
    Exists,
    F,
    FloatField,
    Func,
    Max,
    OuterRef,
    Prefetch,
    Q,
    QuerySet,
    Value,
    When,
)
from django.db.models.functions import Length, Substr
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
    LaserStatus,
    Location,
    Person,
    Role,
    RoomStanding,
    SOPAcknowledgement,
    SOPStatus,
    TrainingRecord,
    effective_class,
)


def laser_list(*, with_working: bool = False) -> QuerySet[Laser]:
    """Every laser with owner, account, group, location, emissions and their hazard results.

    The emissions are the list ``laser.current_emissions`` (by wavelength), each with its
    results in the list ``emission.current_results`` (by limit set): plain lists, because a
    prefetch into ``.emissions.all()`` and ``.hazard_results.all()`` builds a queryset per
    row, a tenth of an API page's time. The emissions' lasers are not joined again (the
    prefetch links each to its laser). Results are loaded without ``working`` (kB of JSON
    each, shown only by the working endpoint and the laser page, which ask ``with_working``).
    """
    results = HazardResult.objects.all() if with_working else HazardResult.objects.defer("working")
    return _with_emissions(Laser.objects.select_related("owner__user", "owner__research_group", "location"),
                           Emission.objects.all(), results)


def _with_emissions(lasers: QuerySet[Laser], emissions: QuerySet[Emission],
                    results: QuerySet[HazardResult]) -> QuerySet[Laser]:
    return lasers.prefetch_related(
        Prefetch("emissions", queryset=emissions, to_attr="current_emissions"),
        Prefetch("current_emissions__hazard_results", queryset=results, to_attr="current_results"),
    )


def emission_list() -> QuerySet[Emission]:
    """Emissions with their laser and, in the list ``emission.current_results``, their hazard results."""
    return Emission.objects.select_related("laser").prefetch_related(
        Prefetch("hazard_results", queryset=HazardResult.objects.order_by("limits"), to_attr="current_results")
    )


def emissions_not_assessed(*, laser: Laser) -> list[str]:
    """Each of ``laser``'s emissions that has no hazard figures, with why: the engine's refusal
    kept in ``assessment_problem``, or that no result is stored."""
    emissions = Emission.objects.filter(laser=laser).select_related("laser").annotate(
        assessed=Exists(HazardResult.objects.filter(emission=OuterRef("pk"))))
    return [f"{emission}: {emission.assessment_problem or 'no hazard result is stored'}"
            for emission in emissions if emission.assessment_problem or not emission.assessed]


def person_list() -> QuerySet[Person]:
    return Person.objects.select_related("user", "research_group", "supervisor__user")


def laser_owners() -> QuerySet[Person]:
    """The people who own a laser, with their accounts (the register's owner filter). A semi-join
    stops at each person's first laser, where joining every laser and removing the duplicates
    read the whole register."""
    return Person.objects.select_related("user").filter(Exists(Laser.objects.filter(owner=OuterRef("pk"))))


def people_with_role(*, role: Role) -> QuerySet[Person]:
    """People of ``role`` whose account is active (who may act, and whom mail reaches)."""
    return person_list().filter(role=role, user__is_active=True)


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


def training_expiring(*, within_days: int, on: datetime.date | None = None,
                      include_expired: bool = False) -> QuerySet[TrainingRecord]:
    """Unretired records still valid on ``on`` (today) that expire within ``within_days`` and were not renewed.

    With ``include_expired``, records that have already expired and were not renewed come too,
    however long ago. A record is renewed when the person has a later unretired record of the
    same course (any general or refresher course for general training; the same laser for
    equipment training) that expires after it or never: then only the later one counts.
    """
    day = on or timezone.localdate()
    records = training_list().filter(
        retired_at__isnull=True, valid_until__lte=day + datetime.timedelta(days=within_days),
    ).exclude(_training_renewed())
    return records if include_expired else records.filter(valid_until__gte=day)


def _training_renewed() -> Q:
    later = TrainingRecord.objects.filter(person=OuterRef("person"), retired_at__isnull=True).filter(
        Q(valid_until__isnull=True) | Q(valid_until__gt=OuterRef("valid_until"))
        # Two records with the same end: the later entered one counts, so one of them still shows.
        | Q(valid_until=OuterRef("valid_until"), pk__gt=OuterRef("pk")))
    general = later.filter(course__in=GENERAL_COURSES)
    same_equipment = later.filter(course=OuterRef("course"), laser=OuterRef("laser"))
    return (Q(course__in=GENERAL_COURSES) & Exists(general)) | (~Q(course__in=GENERAL_COURSES) & Exists(same_equipment))


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


def authorizations_lapsing(*, within_days: int, on: datetime.date | None = None) -> QuerySet[Authorization]:
    """Approved, unretired authorizations whose validity ends within ``within_days`` of ``on`` (today) or has
    ended while they are still marked approved; soonest first."""
    day = on or timezone.localdate()
    return authorization_list().filter(
        status=AuthorizationStatus.APPROVED, retired_at__isnull=True,
        valid_until__lte=day + datetime.timedelta(days=within_days),
    ).order_by("valid_until", "pk")


def sop_reviews_due(*, within_days: int, on: datetime.date | None = None) -> QuerySet[SOP]:
    """SOP versions in force whose review is due within ``within_days`` of ``on`` (today) or overdue; soonest first."""
    day = on or timezone.localdate()
    return SOP.objects.select_related("laser").filter(
        status=SOPStatus.APPROVED, retired_at__isnull=True, review_due__lte=day + datetime.timedelta(days=within_days),
    ).order_by("review_due", "pk")


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


def findings_overdue(*, on: datetime.date | None = None) -> QuerySet[Finding]:
    """Open findings whose corrective action was due before ``on`` (today); the longest overdue first."""
    day = on or timezone.localdate()
    return finding_open_list().filter(due_on__lt=day).order_by("due_on", "pk")


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
    """The eyewear adequacy of ``location`` (five queries: lasers, emissions, results, eyewear, markings).

    The lasers are those in the register's care in the room (every status but disposed and transferred).
    A caller that has loaded exactly those with ``laser_list()`` passes them as ``lasers_in_room``,
    which saves their three queries.
    """
    if lasers_in_room is None:
        return room_hazards(locations=[location], limits=limits)[0].matrix
    return _eyewear_matrix(location, lasers_in_room, room_eyewear(location=location), limits or register_limits())


def room_eyewear(*, location: Location) -> list[Eyewear]:
    """The unretired eyewear kept in ``location``, with its markings (two queries)."""
    return list(eyewear_list().filter(location=location, retired_at__isnull=True))


def eyewear_bands(items: Iterable[Eyewear]) -> dict[int, list[EyewearBand]]:
    """Each item's marked bands as the engine reads them, by item id (from the prefetched markings)."""
    return {item.pk: [eyewear_band(marking) for marking in item.markings.all()] for item in items}


def _eyewear_matrix(location: Location, lasers: list[Laser], items: list[Eyewear], chosen: str) -> EyewearMatrix:
    bands = eyewear_bands(items)
    emissions: list[Emission] = []
    not_assessed: list[Emission] = []
    unprotected: list[Emission] = []
    cells: dict[tuple[int, int], Adequacy] = {}
    for laser in lasers:
        for emission in laser.current_emissions:
            result = result_under(emission, chosen)
            if result is None or result.od_required is None:
                not_assessed.append(emission)
                continue
            emissions.append(emission)
            verdicts = eyewear_verdicts(emission, result, items, bands)
            for item in items:
                cells[(emission.pk, item.pk)] = verdicts[item.pk]
            if result.od_required > 0 and not protects(verdicts, items):
                unprotected.append(emission)
    return EyewearMatrix(location=location, limits=chosen, lasers=lasers, emissions=emissions, eyewear=items, cells=cells,
                         not_assessed=not_assessed, unprotected=unprotected)


@dataclass(frozen=True)
class EyewearNeed:
    """What an assessed emission asks of eyewear: its wavelength (the shortest, for a range), the
    longest of a range, and its result's required OD and EN 207 requirements. A verdict reads nothing else."""

    wavelength_m: float
    wavelength_max_m: float | None
    od_required: float
    en207_requirements: list[dict[str, Any]]


def eyewear_verdicts(emission: Emission, result: HazardResult, items: list[Eyewear],
                     bands: dict[int, list[EyewearBand]] | None = None) -> dict[int, Adequacy]:
    """The engine's verdict on each eyewear item against one emission's (stored or previewed) result, by item id."""
    assert result.od_required is not None
    need = EyewearNeed(emission.wavelength_m, emission.wavelength_max_m, result.od_required, result.en207_requirements)
    return need_verdicts(need, items, bands)


def need_verdicts(need: EyewearNeed, items: list[Eyewear],
                  bands: dict[int, list[EyewearBand]] | None = None) -> dict[int, Adequacy]:
    """The engine's verdict on each eyewear item against ``need``, by item id."""
    if bands is None:
        bands = eyewear_bands(items)
    requirements = [LbRequirement.from_dict(record) for record in need.en207_requirements]
    # A tunable emission needs eyewear over its whole range: the worse of its two ends counts.
    ends = [need.wavelength_m] + ([need.wavelength_max_m] if need.wavelength_max_m else [])
    return {item.pk: max((eyewear_adequacy(wavelength, int(need.od_required), requirements, bands[item.pk])
                          for wavelength in ends), key=lambda verdict: _VERDICT_SEVERITY[verdict.status])
            for item in items}


def room_eyewear_needs(*, location: Location, limits: str | None = None) -> list[EyewearNeed]:
    """The distinct needs of the emissions in the register's care in ``location`` that need eyewear
    (a required OD above 0 under ``limits``), in one query. Emissions asking the same of eyewear
    come once: a room of a thousand lasers of a few dozen models has a few dozen needs, and the
    verdicts are worked out per need, not per emission."""
    rows = HazardResult.objects.filter(
        limits=limits or register_limits(), od_required__gt=0, emission__laser__location=location,
    ).exclude(emission__laser__status__in=RETIRED_STATUSES).order_by().values_list(
        "emission__wavelength_m", "emission__wavelength_max_m", "od_required", "en207_requirements").distinct()
    return [EyewearNeed(*row) for row in rows]


def room_laser_classes(*, location: Location) -> set[str]:
    """The effective classes of the lasers in the register's care in ``location`` (one query)."""
    pairs = Laser.objects.filter(location=location).exclude(status__in=RETIRED_STATUSES).order_by().values_list(
        "labelled_class", "embedded_class").distinct()
    return {effective_class(labelled, embedded) for labelled, embedded in pairs}


def protects(verdicts: dict[int, Adequacy], items: list[Eyewear]) -> bool:
    """Whether an adequate item in usable condition is among ``items`` (damaged eyewear protects nobody)."""
    return any(verdicts[item.pk].status == "adequate" for item in items if item.condition != EyewearCondition.DAMAGED)


def result_under(emission: Emission, limits: str) -> HazardResult | None:
    """The emission's stored result under ``limits``, from the prefetched ``current_results``."""
    return next((result for result in emission.current_results if result.limits == limits), None)


def nohd_exceeds(result: HazardResult, location: Location) -> bool:
    """Whether the result's NOHD reaches beyond the room's longest dimension (unbounded always does)."""
    if location.longest_dimension_m is None:
        return False
    return result.nohd_unbounded or (result.nohd_m is not None and result.nohd_m > location.longest_dimension_m)


def _nohd_key(result: HazardResult) -> float:
    return math.inf if result.nohd_unbounded else (result.nohd_m or 0.0)


@dataclass(frozen=True)
class RoomHazards:
    """What a room's lasers mean for the room, under one limit set.

    ``lasers`` are those in the register's care in the room; ``matrix`` is its eyewear
    adequacy; ``largest`` is the emission with the longest NOHD and its result (None when no
    emission has one); ``beyond_room`` lists the emissions whose NOHD exceeds the room's
    longest dimension, with their results.
    """

    location: Location
    lasers: list[Laser]
    matrix: EyewearMatrix
    largest: tuple[Emission, HazardResult] | None
    beyond_room: list[tuple[Emission, HazardResult]]


def room_hazards(*, locations: Iterable[Location] | None = None, limits: str | None = None,
                 summary: bool = False) -> list[RoomHazards]:
    """RoomHazards for ``locations`` (every room holding a laser in the register's care when None).

    Five queries however many rooms and lasers: the rooms (when not given), the lasers with
    emissions and results, and the eyewear with markings. With ``summary`` (the homes' lists of
    rooms, which read only each room's matrix, NOHDs and laser count) the lasers come without
    owner, account and group, only their identity, class and status, the emissions without
    their timestamps, and only the results under ``limits``, with only the figures the matrix
    and the NOHD checks read: over a whole register of 10,000 lasers, building the full rows
    (80,000 model instances, 180,000 timestamps) was most of the LSO's home's 20 seconds.
    """
    chosen = limits or register_limits()
    lasers = Laser.objects.filter(location__isnull=False).exclude(status__in=RETIRED_STATUSES)
    if locations is None:
        rooms = list(Location.objects.filter(pk__in=lasers.values("location_id")))
    else:
        rooms = list(locations)
    lasers = lasers.filter(location__in=rooms)
    in_room: dict[int, list[Laser]] = {room.pk: [] for room in rooms}
    for laser in (_room_summary_lasers(lasers, chosen) if summary else laser_list().filter(pk__in=lasers)):
        in_room[laser.location_id].append(laser)
    items = list(eyewear_list().filter(location__in=rooms, retired_at__isnull=True))
    summaries: list[RoomHazards] = []
    for room in rooms:
        here = in_room[room.pk]
        assessed = [(emission, result) for laser in here for emission in laser.current_emissions
                    if (result := result_under(emission, chosen)) is not None]
        largest = max(assessed, key=lambda pair: _nohd_key(pair[1]), default=None)
        summaries.append(RoomHazards(
            location=room, lasers=here,
            matrix=_eyewear_matrix(room, here, [item for item in items if item.location_id == room.pk], chosen),
            largest=largest, beyond_room=[(emission, result) for emission, result in assessed
                                          if nohd_exceeds(result, room)]))
    return summaries


def _room_summary_lasers(lasers: QuerySet[Laser], limits: str) -> list[Laser]:
    """``lasers`` as room_hazards(summary=True) needs them (see there); any other field read is a
    query. Three queries; the emissions and results are chosen by a subquery over ``lasers``,
    where a prefetch would send the ids of the whole register in each query."""
    chosen = list(lasers.only("asset_tag", "labelled_class", "embedded_class", "status", "location_id"))
    by_pk = {laser.pk: laser for laser in chosen}
    for laser in chosen:
        laser.current_emissions = []  # type: ignore[attr-defined]
    emissions: dict[int, Emission] = {}
    for emission in Emission.objects.filter(laser__in=lasers.values("pk")).defer("created_at", "updated_at"):
        laser = by_pk.get(emission.laser_id)
        if laser is None:  # a laser registered between the two queries: left for the next request
            continue
        emission.laser = laser
        emission.current_results = []  # type: ignore[attr-defined]
        laser.current_emissions.append(emission)  # type: ignore[attr-defined]
        emissions[emission.pk] = emission
    results = HazardResult.objects.filter(limits=limits, emission__laser__in=lasers.values("pk")).only(
        "emission_id", "limits", "nohd_m", "nohd_unbounded", "od_required", "en207_requirements")
    for result in results:
        owner = emissions.get(result.emission_id)
        if owner is not None:
            result.emission = owner
            owner.current_results.append(result)  # type: ignore[attr-defined]
    return chosen


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


def audits_due(*, today: datetime.date | None = None, within_days: int | None = 30,
               locations: Iterable[Location] | None = None) -> list[AuditDue]:
    """Locations with a class 3B/4 laser in the register's care that are due within ``within_days``, or overdue
    (``within_days=None``: whenever they are due); ``locations`` narrows the rooms looked at.

    Two queries: the locations and the audits covering them. Overdue first, then by due date.
    """
    day = today or timezone.localdate()
    # A semi-join: each room is settled by its first such laser, where a join read them all.
    hazardous = Laser.objects.filter(Q(labelled_class__in=HAZARDOUS_CLASSES) | Q(embedded_class__in=HAZARDOUS_CLASSES),
                                     location=OuterRef("pk")).exclude(status__in=RETIRED_STATUSES)
    rooms = Location.objects.filter(Exists(hazardous))
    if locations is not None:
        rooms = rooms.filter(pk__in=[location.pk for location in locations])
    locations = list(rooms.order_by("site", "building", "room"))
    covering = Q(scope=AuditScope.LOCATION, location__in=locations) | Q(scope=AuditScope.SITE)
    audits = Audit.objects.filter(covering, retired_at__isnull=True).select_related("location").order_by("conducted_on")
    signed_off = [audit for audit in audits if audit.status == AuditStatus.SIGNED_OFF]
    open_audits = [audit for audit in audits if audit.status != AuditStatus.SIGNED_OFF]
    due: list[AuditDue] = []
    for location in locations:
        last = next((audit for audit in reversed(signed_off) if _covers(audit, location)), None)
        due_on = None if last is None else _add_months(last.conducted_on, settings.AUDIT_INTERVAL_MONTHS)
        if due_on is not None and within_days is not None and due_on > day + datetime.timedelta(days=within_days):
            continue
        planned = next((audit for audit in open_audits if _covers(audit, location)), None)
        due.append(AuditDue(location=location, last=last, due_on=due_on, overdue=due_on is None or due_on < day,
                            planned=planned))
    return sorted(due, key=lambda item: (not item.overdue, item.due_on or datetime.date.min))


@dataclass(frozen=True)
class InspectionDue:
    """An eyewear item due for its recorded inspection; ``due_on`` is None for an item never inspected (overdue)."""

    eyewear: Eyewear
    due_on: datetime.date | None
    overdue: bool


def eyewear_inspections_due(*, today: datetime.date | None = None, within_days: int = 30) -> list[InspectionDue]:
    """Unretired eyewear whose inspection (settings.EYEWEAR_INSPECTION_MONTHS after the last) is due within
    ``within_days`` or overdue. One query; never inspected first, then by due date."""
    day = today or timezone.localdate()
    horizon = day + datetime.timedelta(days=within_days)
    months = settings.EYEWEAR_INSPECTION_MONTHS
    # Month arithmetic clamps to month ends (31 August + 6 months is 28 February), so the database
    # is asked a few days wide and the exact due date decides.
    last_due = _add_months(horizon, -months)
    assert last_due is not None
    items = Eyewear.objects.select_related("location").filter(retired_at__isnull=True).filter(
        Q(last_inspected_on__isnull=True) | Q(last_inspected_on__lte=last_due + datetime.timedelta(days=3)))
    due: list[InspectionDue] = []
    for item in items:
        due_on = _add_months(item.last_inspected_on, months)
        if due_on is None or due_on <= horizon:
            due.append(InspectionDue(eyewear=item, due_on=due_on, overdue=due_on is None or due_on < day))
    return sorted(due, key=lambda entry: (entry.due_on or datetime.date.min, entry.eyewear.inventory_tag))


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


# --- the pages' questions -----------------------------------------------------------------

# How far ahead the register warns of expiring training and authorizations (issue 10).
EXPIRY_WARNING_DAYS = 30


@dataclass(frozen=True)
class TrainingStanding:
    """A person's general laser safety training as of a day.

    ``valid_until`` is the latest expiry among their unretired general and refresher records
    (None with ``trained`` set: one of them never expires; None without: no such training).
    """

    person: Person
    trained: bool
    valid_until: datetime.date | None
    current: bool
    expiring: bool


def training_standings(*, people: Iterable[Person], on: datetime.date | None = None) -> dict[int, TrainingStanding]:
    """TrainingStanding of each of ``people`` by person id (one query)."""
    day = on or timezone.localdate()
    chosen = list(people)
    records = TrainingRecord.objects.filter(person__in=chosen, course__in=GENERAL_COURSES, retired_at__isnull=True,
                                            completed_on__lte=day).values_list("person_id", "valid_until")
    latest: dict[int, list[datetime.date | None]] = {}
    for person_id, valid_until in records:
        latest.setdefault(person_id, []).append(valid_until)
    standings: dict[int, TrainingStanding] = {}
    for person in chosen:
        dates = latest.get(person.pk)
        if not dates:
            standings[person.pk] = TrainingStanding(person, False, None, False, False)
            continue
        until = None if None in dates else max(date for date in dates if date is not None)
        current = until is None or until >= day
        expiring = until is not None and current and until <= day + datetime.timedelta(days=EXPIRY_WARNING_DAYS)
        standings[person.pk] = TrainingStanding(person, True, until, current, expiring)
    return standings


# How many items of each kind a home page names, the most urgent first; its counts cover them all
# and it links to the full lists.
HOME_FIRST_ITEMS = 5

T = TypeVar("T")


@dataclass(frozen=True)
class FirstItems(Generic[T]):
    """How many items a list holds, and the first HOME_FIRST_ITEMS of them."""

    count: int
    first: list[T]


def _first_items(rows: QuerySet[Any]) -> FirstItems[Any]:
    """Two queries: the count and the first rows."""
    return FirstItems(count=rows.count(), first=list(rows[:HOME_FIRST_ITEMS]))


@dataclass(frozen=True)
class RoomAttention:
    """A room's stored standing with ``count`` emissions to attend to, the first of them named, each as its
    result (emission and laser loaded)."""

    standing: RoomStanding
    count: int
    first: list[HazardResult]

    @property
    def more(self) -> int:
        """How many of the ``count`` are not named."""
        return self.count - len(self.first)


# Findings by severity, the gravest first.
_SEVERITY_RANK = Case(*(When(severity=severity, then=Value(rank)) for rank, severity in enumerate(
    ("critical", "major", "minor", "observation"))), default=Value(9))


@dataclass(frozen=True)
class Attention:
    """What needs the LSO's attention today (the LSO's home page): of each kind, how many and the most urgent."""

    awaiting_review: FirstItems[Laser]
    training_due: FirstItems[TrainingStanding]
    authorizations_pending: FirstItems[Authorization]
    audits_due: FirstItems[AuditDue]
    findings: FirstItems[Finding]  # each with ``is_overdue``: overdue first, then by severity and due date
    findings_overdue: int
    eyewear_inadequate: FirstItems[RoomAttention]
    nohd_beyond_room: FirstItems[RoomAttention]
    not_assessed: FirstItems[Emission]


def lso_attention(*, today: datetime.date | None = None, limits: str | None = None) -> Attention:
    """Everything the LSO's home lists, in 15 queries however big the register: each kind's count
    and its first HOME_FIRST_ITEMS. The rooms come from their stored standing (RoomStanding, under
    ``limits``), never from the register's lasers. Lists of people (training) and rooms (audits,
    standings) are read whole, since they grow with the site, not with the register."""
    day = today or timezone.localdate()
    trained = person_list().filter(training_records__course__in=GENERAL_COURSES).distinct()
    standings = training_standings(people=trained, on=day)
    due = sorted((standing for standing in standings.values() if not standing.current or standing.expiring),
                 key=lambda standing: standing.valid_until or datetime.date.min)
    findings = finding_open_list().annotate(
        is_overdue=Case(When(due_on__lt=day, then=Value(True)), default=Value(False), output_field=BooleanField()),
        severity_rank=_SEVERITY_RANK,
    ).order_by("-is_overdue", "severity_rank", F("due_on").asc(nulls_last=True), "pk")
    open_findings = finding_open_list().aggregate(count=Count("pk"), overdue=Count("pk", filter=Q(due_on__lt=day)))
    eyewear = list(room_standings(limits=limits, needs="eyewear"))
    beyond = list(room_standings(limits=limits, needs="nohd"))
    shown = _rooms_with_first_emissions(eyewear[:HOME_FIRST_ITEMS], beyond[:HOME_FIRST_ITEMS], limits=limits)
    audits = audits_due(today=day, within_days=AUDIT_NOTICE_DAYS)
    return Attention(
        awaiting_review=_first_items(Laser.objects.select_related("owner__user").filter(
            status=LaserStatus.PENDING_REVIEW).order_by("created_at", "pk")),
        training_due=FirstItems(len(due), due[:HOME_FIRST_ITEMS]),
        authorizations_pending=_first_items(authorization_list().filter(
            status=AuthorizationStatus.REQUESTED, retired_at__isnull=True).order_by("requested_at", "pk")),
        audits_due=FirstItems(len(audits), audits[:HOME_FIRST_ITEMS]),
        findings=FirstItems(open_findings["count"], list(findings[:HOME_FIRST_ITEMS])),
        findings_overdue=open_findings["overdue"],
        eyewear_inadequate=FirstItems(len(eyewear), shown["eyewear"]),
        nohd_beyond_room=FirstItems(len(beyond), shown["nohd"]),
        # In the order the lasers were registered, which the index of emissions not assessed reads first.
        not_assessed=_first_items(Emission.objects.select_related("laser").exclude(assessment_problem="")
                                  .exclude(laser__status__in=RETIRED_STATUSES).order_by("laser_id", "wavelength_m",
                                                                                        "pk")),
    )


# What a room may need attention for (the rooms list's ?needs=): eyewear that leaves an emission
# unprotected, a NOHD beyond the room, an audit due within AUDIT_NOTICE_DAYS or overdue.
ROOM_NEEDS = ("eyewear", "nohd", "audit")
AUDIT_NOTICE_DAYS = 30


def room_standings(*, limits: str | None = None, needs: str = "") -> QuerySet[RoomStanding]:
    """The stored standing (under ``limits``) of each room holding a laser in the register's care, with
    its room; the most urgent first: rooms whose eyewear leaves an emission unprotected (the highest OD
    required first), then rooms where a NOHD exceeds the room (the longest first), then the others by
    site, building and room. ``needs="eyewear"`` or ``"nohd"`` keeps only those rooms, the latter
    ordered by their longest NOHD."""
    standings = RoomStanding.objects.select_related("location").filter(limits=limits or register_limits(), lasers__gt=0)
    by_room = ["location__site", "location__building", "location__room"]
    longest_first = [F("largest_nohd_unbounded").desc(), F("largest_nohd_m").desc(nulls_last=True)]
    if needs == "nohd":
        return standings.filter(beyond_room__gt=0).order_by(*longest_first, *by_room)
    if needs == "eyewear":
        standings = standings.filter(unprotected__gt=0)
    urgency = Case(When(unprotected__gt=0, then=Value(0)), When(beyond_room__gt=0, then=Value(1)), default=Value(2))
    return standings.order_by(urgency, F("unprotected_od_max").desc(nulls_last=True), "-unprotected",
                              *longest_first, *by_room)


@dataclass(frozen=True)
class RoomRow:
    """A room of the rooms list: its stored standing and when its audit is due (None: no class 3B/4 laser)."""

    standing: RoomStanding
    audit: AuditDue | None


ROOMS_PER_PAGE = 50
# The inspector's home shows the first rooms of the list.
HOME_ROOMS = 10


def room_list_page(*, number: str | int | None, needs: str = "", limits: str | None = None,
                   today: datetime.date | None = None, per_page: int = ROOMS_PER_PAGE) -> Page:
    """Page ``number`` of the rooms list: RoomRows, the most urgent first (room_standings), or with
    ``needs="audit"`` the rooms whose audit is due within AUDIT_NOTICE_DAYS or overdue, overdue first
    (audits_due). Four queries however many rooms and lasers: the count, the standings, and two for
    the audit dates of the page's rooms; with ``needs="audit"`` three: the rooms due (two), then the
    standings of the page's."""
    day = today or timezone.localdate()
    if needs == "audit":
        page = Paginator(audits_due(today=day, within_days=AUDIT_NOTICE_DAYS), per_page).get_page(number)
        standings = {standing.location_id: standing for standing in room_standings(limits=limits).filter(
            location__in=[due.location for due in page])}
        page.object_list = [RoomRow(standings[due.location.pk], due) for due in page if due.location.pk in standings]
        return page
    page = Paginator(room_standings(limits=limits, needs=needs), per_page).get_page(number)
    audits = {due.location.pk: due for due in audits_due(
        today=day, within_days=None, locations=[standing.location for standing in page])}
    page.object_list = [RoomRow(standing, audits.get(standing.location_id)) for standing in page]
    return page


def _rooms_with_first_emissions(eyewear: list[RoomStanding], nohd: list[RoomStanding], *,
                                limits: str | None) -> dict[str, list[RoomAttention]]:
    """The rooms of each list with the first emissions their standing names (one query for both)."""
    wanted = {pk for standing in eyewear for pk in standing.unprotected_first} | {
        pk for standing in nohd for pk in standing.beyond_room_first}
    results = {result.emission_id: result for result in HazardResult.objects.filter(
        limits=limits or register_limits(), emission_id__in=wanted).select_related("emission__laser").only(
        "emission_id", "limits", "nohd_m", "nohd_unbounded", "od_required", "emission__wavelength_m",
        "emission__wavelength_max_m", "emission__laser_id", "emission__laser__asset_tag")} if wanted else {}
    return {
        "eyewear": [RoomAttention(standing, standing.unprotected,
                                  [results[pk] for pk in standing.unprotected_first if pk in results])
                    for standing in eyewear],
        "nohd": [RoomAttention(standing, standing.beyond_room,
                               [results[pk] for pk in standing.beyond_room_first if pk in results])
                 for standing in nohd],
    }


@dataclass(frozen=True)
class GroupMember:
    person: Person
    training: TrainingStanding
    authorizations: list[Authorization]


def group_members(*, researcher: Person, on: datetime.date | None = None) -> list[GroupMember]:
    """The other people of ``researcher``'s group with their training and open or decided authorizations (3 queries)."""
    people = list(people_visible_to(viewer=researcher).exclude(pk=researcher.pk))
    standings = training_standings(people=people, on=on)
    authorizations = list(authorization_list().filter(person__in=people, retired_at__isnull=True)
                          .order_by("laser__asset_tag"))
    return [GroupMember(person, standings[person.pk],
                        [item for item in authorizations if item.person_id == person.pk]) for person in people]


@dataclass(frozen=True)
class AuthorizedLaser:
    """A laser a user is authorized on, with the room's eyewear that protects against each emission."""

    authorization: Authorization
    laser: Laser
    room: RoomHazards | None
    protecting: dict[int, list[Eyewear]]


def authorized_lasers(*, person: Person, on: datetime.date | None = None) -> list[AuthorizedLaser]:
    """The lasers ``person`` holds an authorization in force on, with figures and eyewear (fixed query count)."""
    authorizations = list(authorizations_in_force(person=person, on=on))
    lasers = {laser.pk: laser for laser in laser_list().filter(pk__in=[item.laser_id for item in authorizations])}
    rooms = {room.location.pk: room for room in room_hazards(
        locations=Location.objects.filter(lasers__in=list(lasers)).distinct())} if lasers else {}
    found: list[AuthorizedLaser] = []
    for authorization in authorizations:
        laser = lasers[authorization.laser_id]
        room = rooms.get(laser.location_id) if laser.location_id is not None else None
        protecting: dict[int, list[Eyewear]] = {}
        for emission in laser.current_emissions:
            protecting[emission.pk] = [] if room is None else [
                item for item in room.matrix.eyewear if item.condition != EyewearCondition.DAMAGED
                and (cell := room.matrix.cells.get((emission.pk, item.pk))) is not None and cell.status == "adequate"]
        found.append(AuthorizedLaser(authorization, laser, room, protecting))
    return found


# Register sort keys (the page's ?ordering=): a column or a hazard figure under the lead set.
REGISTER_ORDERINGS = {
    "asset_tag": "asset_tag",
    "labelled_class": "labelled_class",
    "status": "status",
    "location": "location__room",
    "owner": "owner__user__last_name",
    "nohd": "nohd_key",
    "od": "od_key",
}
# An unbounded NOHD sorts beyond every finite one.
_UNBOUNDED_SORT_M = 1e30


# What a row of the register page shows (templates/pages/register.html): any other field read on
# a row loaded with ``page_rows`` costs a query per row.
_PAGE_ROW_LASER = ("asset_tag", "manufacturer", "model_name", "labelled_class", "embedded_class", "status", "owner",
                   "location", "owner__user__username", "owner__user__first_name", "owner__user__last_name",
                   "location__building", "location__room")
_PAGE_ROW_EMISSION = ("laser", "wavelength_m", "wavelength_max_m", "temporal_mode")
_PAGE_ROW_RESULT = ("emission", "limits", "nohd_m", "nohd_unbounded", "od_required")


def laser_register(*, limits: str | None = None, ordering: str = "asset_tag", page_rows: bool = False) -> QuerySet[Laser]:
    """laser_list() for the register sorted by ``ordering`` (a register_ordering key). Sorting by
    NOHD or OD annotates ``nohd_key`` and ``od_key``: the largest NOHD and required OD of each
    laser's emissions under ``limits`` (null when none was computed). Other orders go without:
    that annotation joins every laser's emissions and results and groups them, so that a page
    of 50 and its count cost a pass over the whole register (a third of a second at 10,000
    lasers) instead of an index scan.

    With ``page_rows`` the lasers (with their owner's account and room), emissions and results
    carry only the columns a row of the register page shows: building the full rows, with
    their timestamps, free text and the owner's group, was about half of the page's CPU time.
    """
    if page_rows:
        lasers = _with_emissions(Laser.objects.select_related("owner__user", "location").only(*_PAGE_ROW_LASER),
                                 Emission.objects.only(*_PAGE_ROW_EMISSION),
                                 HazardResult.objects.only(*_PAGE_ROW_RESULT))
    else:
        lasers = laser_list()
    if REGISTER_ORDERINGS.get(ordering.lstrip("-")) not in ("nohd_key", "od_key"):
        return lasers
    chosen = limits or register_limits()
    under = Q(emissions__hazard_results__limits=chosen)
    return lasers.annotate(
        nohd_key=Max(Case(When(emissions__hazard_results__nohd_unbounded=True, then=Value(_UNBOUNDED_SORT_M)),
                          default=F("emissions__hazard_results__nohd_m"), output_field=FloatField()), filter=under),
        od_key=Max("emissions__hazard_results__od_required", filter=under),
    )


def register_ordering(key: str) -> list[Any]:
    """The order_by() terms for a register sort key ("-nohd": longest first); unknown keys sort by asset tag.
    Lasers without the figure come last either way."""
    descending = key.startswith("-")
    field = REGISTER_ORDERINGS.get(key.lstrip("-"), "asset_tag")
    term = F(field).desc(nulls_last=True) if descending else F(field).asc(nulls_last=True)
    return [term, "asset_tag"]


def next_asset_tag() -> str:
    """The asset tag the register proposes for a new laser: the newest tag's prefix, numbered
    one past the highest number in use with that prefix ("FV-0028" -> "FV-0029"). Two queries."""
    return _next_code(Laser.objects.all(), "asset_tag", default="LSR-0001")


def next_incident_reference() -> str:
    return _next_code(Incident.objects.all(), "reference", default="INC-0001")


# A code is a prefix (not ending in a digit) and a number.
_CODE = re.compile(r"^(.*?)([0-9]+)$")


def _next_code(records: QuerySet[Any], field: str, *, default: str) -> str:
    newest = records.order_by("-created_at").values_list(field, flat=True).first()
    match = _CODE.match(newest or "")
    if match is None:
        return default
    prefix, digits = match.groups()
    # The highest number in use after the prefix, found by the database rather than by reading
    # every code (10,000 of them for a grown register): without leading zeros, the longer
    # number is the larger, and numbers of one length order as text.
    number = Func(Substr(field, len(prefix) + 1), Value("0"), function="LTRIM", output_field=CharField())
    highest = records.filter(**{f"{field}__regex": rf"^{re.escape(prefix)}[0-9]+$"}).annotate(number=number).order_by(
        Length("number").desc(), F("number").desc()).values_list("number", flat=True).first()
    return f"{prefix}{int(highest or 0) + 1:0{len(digits)}d}"


@dataclass(frozen=True)
class HistoryEntry:
    """One change to a laser or one of its emissions: who, when, what."""

    when: datetime.datetime
    who: str
    record: str
    kind: str
    changes: list[tuple[str, str, str]]


_HISTORY_KINDS = {"+": "created", "~": "changed", "-": "deleted"}


def laser_history(*, laser: Laser) -> list[HistoryEntry]:
    """The laser's and its emissions' history, newest first, each change with the fields it changed.

    Values read as on the pages: choices by their label, the owner and the room by name (two
    queries for the history, one more each when an owner or a room changed).
    """
    versions: list[tuple[str, list[Any]]] = []
    for rows, kind in ((laser.history.select_related("history_user"), "laser"),
                       (Emission.history.filter(laser_id=laser.pk).select_related("history_user"), "emission")):
        by_record: dict[int, list[Any]] = {}
        for row in rows.order_by("history_date", "history_id"):
            by_record.setdefault(row.id, []).append(row)
        versions += [(kind, rows_of_one) for rows_of_one in by_record.values()]
    changes: list[tuple[Any, Any, list[Any]]] = []
    for _, rows_of_one in versions:
        for previous, entry in zip([None, *rows_of_one[:-1]], rows_of_one):
            changes.append((entry, previous, [] if previous is None else entry.diff_against(previous).changes))
    named = _named_references([change for _, _, delta in changes for change in delta])
    entries: list[HistoryEntry] = []
    for entry, previous, delta in changes:
        model = entry.instance_type
        record = "laser" if model is Laser else f"emission {entry.label or entry.id}"
        user = entry.history_user
        entries.append(HistoryEntry(
            when=entry.history_date, who=user.get_username() if user else "", record=record,
            kind=_HISTORY_KINDS.get(entry.history_type, ""),
            changes=[(str(model._meta.get_field(change.field).verbose_name),
                      _shown(model, change.field, change.old, named), _shown(model, change.field, change.new, named))
                     for change in delta]))
    return sorted(entries, key=lambda item: item.when, reverse=True)


# Foreign keys a laser's history names by their record rather than by id.
_NAMED_REFERENCES: dict[str, Callable[[], QuerySet[Any]]] = {
    "owner": lambda: Person.objects.select_related("user"), "location": lambda: Location.objects.all()}


def _named_references(changes: list[Any]) -> dict[str, dict[Any, Any]]:
    wanted: dict[str, set[Any]] = {}
    for change in changes:
        if change.field in _NAMED_REFERENCES:
            wanted.setdefault(change.field, set()).update(value for value in (change.old, change.new) if value)
    return {field: _NAMED_REFERENCES[field]().in_bulk(ids) for field, ids in wanted.items()}


def _shown(model: Any, field: str, value: Any, named: dict[str, dict[Any, Any]]) -> str:
    if value is None or value == "":
        return ""
    if field in named:
        return str(named[field].get(value, value))
    choices = dict(model._meta.get_field(field).flatchoices)
    return str(choices.get(value, value))
