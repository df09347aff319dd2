"""What each printed document says, read from the live register.

One builder per document returns a plain dataclass; the PDF template and the JSON serializer
both read it, so the two never disagree. Decisions (which eyewear a sign lists, what counts as
expired) are made here, not in templates.
"""
from __future__ import annotations

import datetime
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

from django.db.models import Q
from django.urls import reverse

from hazards.caution import CAUTION
from hazards.classes import LASER_CLASSES
from registry import selectors
from registry.models import (
    GENERAL_COURSES,
    RETIRED_STATUSES,
    Audit,
    AuditChecklistItem,
    AuditScope,
    AuthorizationStatus,
    Authorization,
    ChecklistAnswer,
    Emission,
    EyewearCondition,
    Eyewear,
    Finding,
    HazardResult,
    InterlockKind,
    Laser,
    Location,
    Person,
    TrainingRecord,
)
from registry.selectors import EyewearMatrix
from registry.services.checklist import CONTROLS, CONTROLS_BY_CODE, Control, checklist_for

# What each class means for someone at the door, in the register's own words.
CLASS_MEANINGS = {
    "1": "Class 1 laser product: safe in normal use.",
    "1C": "Class 1C laser product: applied in contact with the skin; its design keeps the beam from the eye.",
    "1M": "Class 1M laser: never look into the beam through binoculars, telescopes or microscopes.",
    "2": "Class 2 laser: visible beam. Do not look into it, and do not rely on blinking to protect you.",
    "2M": "Class 2M laser: visible beam. Do not look into it, and never through optical instruments.",
    "3R": "Class 3R laser: looking into the beam can harm your eyes.",
    "3B": "Class 3B laser: the beam and its mirror-like reflections can injure your eyes instantly.",
    "4": "Class 4 laser: the beam, its reflections and even scattered light can injure eyes and skin, "
         "and the beam can start a fire.",
}

_INTERLOCK_INSTRUCTIONS = {
    InterlockKind.DOOR_SWITCH: "The door is interlocked: opening it stops the laser.",
    InterlockKind.KEYPAD: "Entry by keypad or card, for authorized users only.",
    InterlockKind.DEFEATABLE: "The door interlock may be overridden only by an authorized user, as the SOP says.",
    InterlockKind.ENCLOSURE: "The beam is interlocked inside its enclosure: never open the enclosure.",
    InterlockKind.NONE: "No entry interlock: knock and wait to be let in while a laser is on.",
}


def _highest(classes: Iterable[str]) -> str | None:
    present = [label for label in classes if label]
    return max(present, key=LASER_CLASSES.index) if present else None


def result_under(emission: Emission, limits: str) -> HazardResult | None:
    """The emission's stored result under ``limits``, from the ``current_results`` prefetch."""
    return next((result for result in emission.current_results if result.limits == limits), None)


@dataclass(frozen=True)
class WavelengthLine:
    """Everything emitted at one wavelength (or tunable range) in a room, and the eyewear it needs.

    Powers and energies are the largest among the room's emissions at that wavelength;
    ``pulse_duration_s`` belongs to the most energetic pulse. ``eyewear`` are the items kept in
    the room, not damaged, that the engine finds adequate for every one of these emissions.
    """

    wavelength_m: float
    wavelength_max_m: float | None
    classes: list[str]
    max_power_W: float | None
    max_pulse_energy_J: float | None
    pulse_duration_s: float | None
    od_required: float | None
    en207_markings: list[str]
    eyewear: list[Eyewear]
    assessed: bool

    @property
    def needs_eyewear(self) -> bool:
        return bool(self.od_required)

    @property
    def unprotected(self) -> bool:
        """Eyewear is needed here and none kept in the room is adequate (or not assessed: unknown)."""
        return not self.assessed or (self.needs_eyewear and not self.eyewear)


def wavelength_lines(matrix: EyewearMatrix) -> list[WavelengthLine]:
    """The room's emissions grouped by wavelength, shortest first, each with the eyewear it needs."""
    groups: dict[tuple[float, float | None], list[Emission]] = {}
    for emission in [*matrix.emissions, *matrix.not_assessed]:
        groups.setdefault((emission.wavelength_m, emission.wavelength_max_m), []).append(emission)
    assessed = {emission.pk for emission in matrix.emissions}
    lines: list[WavelengthLine] = []
    for (low, high), emissions in sorted(groups.items(), key=lambda item: item[0][0]):
        results = [result for emission in emissions if (result := result_under(emission, matrix.limits))]
        pulses = [emission for emission in emissions if emission.pulse_energy_J is not None]
        strongest = max(pulses, key=lambda emission: emission.pulse_energy_J or 0.0, default=None)
        all_assessed = all(emission.pk in assessed for emission in emissions)
        # The matrix rates eyewear only against assessed emissions: none fits a line with one that is not.
        fitting = [item for item in matrix.eyewear if item.condition != EyewearCondition.DAMAGED
                   and all(matrix.cells[(emission.pk, item.pk)].status == "adequate" for emission in emissions)
                   ] if all_assessed else []
        lines.append(WavelengthLine(
            wavelength_m=low, wavelength_max_m=high,
            classes=sorted({emission.laser.effective_class for emission in emissions}, key=LASER_CLASSES.index),
            max_power_W=max((emission.average_power_W for emission in emissions
                             if emission.average_power_W is not None), default=None),
            max_pulse_energy_J=strongest.pulse_energy_J if strongest else None,
            pulse_duration_s=strongest.pulse_duration_s if strongest else None,
            od_required=max((result.od_required for result in results if result.od_required is not None),
                            default=None),
            en207_markings=sorted({result.en207_marking for result in results if result.en207_marking}),
            eyewear=fitting, assessed=all_assessed,
        ))
    return lines


@dataclass(frozen=True)
class Nohd:
    """The largest NOHD among results; ``unbounded`` when a collimated beam never drops below the MPE."""

    metres: float | None
    unbounded: bool

    @classmethod
    def largest(cls, results: Iterable[HazardResult]) -> Nohd:
        results = list(results)
        distances = [result.nohd_m for result in results if result.nohd_m is not None]
        return cls(metres=max(distances, default=None), unbounded=any(result.nohd_unbounded for result in results))


@dataclass(frozen=True)
class DoorSign:
    location: Location
    limits: str
    signal_word: str | None
    highest_class: str | None
    class_meaning: str
    lasers: list[Laser]
    lines: list[WavelengthLine]
    largest_nohd: Nohd
    entry_instructions: list[str]
    contacts: list[Person]
    caution: str = CAUTION

    @property
    def heading(self) -> str:
        """The signal word; a room whose classes call for none is headed plainly."""
        return self.signal_word or "LASER"

    @property
    def subheading(self) -> str:
        if self.signal_word is None:
            return "No class in this room calls for a warning sign"
        return "Laser controlled area" if self.location.is_controlled_area else "Laser in use"


def door_sign(location: Location, *, limits: str | None = None) -> DoorSign:
    """The door sign of ``location`` (six queries: the room's eyewear matrix and the LSOs)."""
    matrix = selectors.location_eyewear_matrix(location=location, limits=limits)
    classes = [laser.effective_class for laser in matrix.lasers]
    highest = _highest(classes)
    lines = wavelength_lines(matrix)
    instructions: list[str] = []
    if location.is_controlled_area:
        instructions.append("Laser controlled area: authorized personnel only.")
    if highest in {"3B", "4"} or location.interlock != InterlockKind.NONE:
        instructions.append(_INTERLOCK_INSTRUCTIONS[InterlockKind(location.interlock)])
    if location.has_warning_light:
        instructions.append("Do not enter while the warning light is lit.")
    if any(line.needs_eyewear for line in lines):
        instructions.append("Put on the eyewear listed for the wavelengths in use before you enter.")
    results = [result for emission in matrix.emissions if (result := result_under(emission, matrix.limits))]
    return DoorSign(
        location=location, limits=matrix.limits, signal_word=selectors.signal_word(classes), highest_class=highest,
        class_meaning=CLASS_MEANINGS.get(highest or "", "No laser is registered in this room."),
        lasers=matrix.lasers, lines=lines, largest_nohd=Nohd.largest(results), entry_instructions=instructions,
        contacts=list(selectors.lso_contacts()),
    )


def laser_page_path(laser: Laser) -> str:
    """The path of the laser's page in the register, which its label's QR code points to."""
    return reverse("laser", args=[laser.pk])


@dataclass(frozen=True)
class LaserLabel:
    laser: Laser
    page_url: str
    wavelengths: list[Emission]
    caution: str = CAUTION


def laser_label(laser: Laser, *, page_url: str) -> LaserLabel:
    """The equipment label of ``laser`` (loaded by ``selectors.laser_list()``), pointing to ``page_url``."""
    return LaserLabel(laser=laser, page_url=page_url, wavelengths=list(laser.current_emissions))


# --- the audit report ---------------------------------------------------------------------

@dataclass(frozen=True)
class HazardRow:
    laser: Laser
    emission: Emission
    result: HazardResult | None


@dataclass(frozen=True)
class PersonRow:
    """One person's authorization on one laser of the scope, with their general training.

    ``training_valid_until`` is the latest validity among their general or refresher training
    (None with ``has_training`` set: it does not expire). ``flags`` say what is expired or missing.
    """

    person: Person
    laser: Laser
    authorization: Authorization
    has_training: bool
    training_valid_until: datetime.date | None
    flags: list[str]


@dataclass(frozen=True)
class LaserPeople:
    """The authorizations on one laser, for the printed table (one row per laser)."""

    laser: Laser
    rows: list[PersonRow]

    @property
    def flagged(self) -> list[PersonRow]:
        return [row for row in self.rows if row.flags]


def room_name(location: Location | None) -> str:
    """A room as the report names it above its rows: "Alder Hall 101, North Site"."""
    return "In no room" if location is None else f"{location}, {location.site}"


@dataclass(frozen=True)
class RoomLasers:
    """The lasers of the scope in one room (None: in no room), for the printed snapshot, which
    names each room once."""

    location: Location | None
    lasers: list[Laser]

    @property
    def name(self) -> str:
        return room_name(self.location)


@dataclass(frozen=True)
class WarningGroup:
    """One warning of the engine, or one reason an emission is not assessed, with the emissions it concerns."""

    text: str
    emissions: list[HazardRow]


@dataclass(frozen=True)
class RoomEyewear:
    location: Location
    eyewear: list[Eyewear]
    lines: list[WavelengthLine]

    @property
    def name(self) -> str:
        return room_name(self.location)


@dataclass(frozen=True)
class ChecklistRow:
    position: int | None
    question: str
    control: Control | None
    laser: Laser | None
    location: Location | None
    answer: str
    answer_label: str
    comment: str


@dataclass(frozen=True)
class ChecklistGrid:
    """The answers laid out for print: rooms x room controls and lasers x laser controls.

    Rows whose every answer is a pass are only named (``rooms_passed``, ``lasers_passed``), so a
    site's report shows in full what needs a look. ``cells[control code]`` is a row's answer; a
    control the row's class does not call for has no cell. ``notes`` are the items with a note.
    """

    room_controls: list[Control]
    laser_controls: list[Control]
    rooms: list[tuple[Location, dict[str, str]]]
    lasers: list[tuple[Laser, dict[str, str]]]
    rooms_passed: list[Location]
    lasers_passed: list[Laser]
    questions: list[ChecklistRow]
    notes: list[ChecklistRow]


@dataclass(frozen=True)
class AuditReport:
    title: str
    audit: Audit | None
    reference: str
    scope: str
    scope_label: str
    site: str
    location: Location | None
    period_start: datetime.date | None
    period_end: datetime.date | None
    auditor: Person | None
    planned_on: datetime.date | None
    conducted_on: datetime.date | None
    status: str
    status_label: str
    summary: str
    signed_off_by: Person | None
    signed_off_at: datetime.datetime | None
    as_of: datetime.date
    limits: str
    contacts: list[Person]
    lasers: list[Laser]
    hazards: list[HazardRow]
    people: list[PersonRow]
    rooms: list[RoomEyewear]
    checklist: list[ChecklistRow]
    grid: ChecklistGrid
    findings: list[Finding]
    warnings: list[WarningGroup]
    caution: str = CAUTION

    @property
    def flagged_count(self) -> int:
        return sum(1 for row in self.people if row.flags)

    @property
    def lasers_by_room(self) -> list[RoomLasers]:
        grouped: dict[int | None, RoomLasers] = {}
        for laser in self.lasers:
            grouped.setdefault(laser.location_id, RoomLasers(location=laser.location, lasers=[])).lasers.append(laser)
        return list(grouped.values())

    @property
    def people_by_laser(self) -> list[LaserPeople]:
        grouped: dict[int, LaserPeople] = {}
        for row in self.people:
            grouped.setdefault(row.laser.pk, LaserPeople(laser=row.laser, rows=[])).rows.append(row)
        return list(grouped.values())


def audit_report(audit: Audit, *, as_of: datetime.date, limits: str | None = None) -> AuditReport:
    """The report of ``audit``: its plan, the register of its scope as on ``as_of``, its checklist
    and findings. Nine queries, and two per room in scope (its eyewear); three more per room
    for an audit of selected lasers, whose rooms may hold others. The audit is read afresh with
    its room and people joined, whatever the caller's instance has loaded."""
    chosen = limits or selectors.register_limits()
    audit = Audit.objects.select_related("location", "auditor__user", "signed_off_by__user").get(pk=audit.pk)
    lasers = list(selectors.audit_scope_lasers(audit))
    items = list(audit.checklist.filter(retired_at__isnull=True).order_by("position"))
    lasers_by_pk, rooms_by_pk = _checklist_subjects(items, lasers)
    checklist = [ChecklistRow(position=item.position, question=item.question,
                              control=CONTROLS_BY_CODE.get(item.control), laser=lasers_by_pk.get(item.laser_id),
                              location=rooms_by_pk.get(item.location_id), answer=item.answer,
                              answer_label=str(item.get_answer_display()), comment=item.comment)
                 for item in items]
    findings = list(selectors.finding_list().filter(audit=audit, retired_at__isnull=True)
                    .order_by("status", "due_on", "pk"))
    return _report(
        title="Audit report", audit=audit, reference=audit.reference, scope=audit.scope,
        scope_label=str(audit.get_scope_display()), site=audit.site, location=audit.location,
        period_start=audit.period_start, period_end=audit.period_end, auditor=audit.auditor,
        planned_on=audit.planned_on, conducted_on=audit.conducted_on, status=audit.status,
        status_label=str(audit.get_status_display()), summary=audit.summary, signed_off_by=audit.signed_off_by,
        signed_off_at=audit.signed_off_at, as_of=as_of, limits=chosen, lasers=lasers, checklist=checklist,
        findings=findings, rooms_hold_only_scope=audit.scope != AuditScope.LASERS,
    )


def _checklist_subjects(items: Sequence[AuditChecklistItem], lasers: Sequence[Laser],
                        ) -> tuple[dict[int, Laser], dict[int, Location]]:
    """The lasers and rooms the checklist items are about, from the scope already loaded; those no
    longer in scope (a laser since disposed of, a plan changed after the start) cost one query each kind."""
    lasers_by_pk = {laser.pk: laser for laser in lasers}
    rooms_by_pk = {laser.location.pk: laser.location for laser in lasers if laser.location is not None}
    missing_lasers = {item.laser_id for item in items if item.laser_id is not None} - set(lasers_by_pk)
    if missing_lasers:
        lasers_by_pk.update(Laser.objects.in_bulk(missing_lasers))
    missing_rooms = {item.location_id for item in items if item.location_id is not None} - set(rooms_by_pk)
    if missing_rooms:
        rooms_by_pk.update(Location.objects.in_bulk(missing_rooms))
    return lasers_by_pk, rooms_by_pk


def pre_audit_pack(location: Location, *, as_of: datetime.date, limits: str | None = None) -> AuditReport:
    """What an auditor takes to a room that is due: the report's sections for the room as it is,
    the checklist its lasers call for (unanswered) and the findings still open there."""
    chosen = limits or selectors.register_limits()
    lasers = list(selectors.audit_scope_lasers(Audit(scope=AuditScope.LOCATION, location=location)))
    checklist = [ChecklistRow(position=None, question=entry.question, control=entry.control, laser=entry.laser,
                              location=entry.location, answer="", answer_label="not answered yet", comment="")
                 for entry in checklist_for(lasers)]
    findings = list(selectors.finding_open_list().filter(Q(location=location) | Q(laser__in=lasers))
                    .order_by("due_on", "pk"))
    return _report(
        title="Pre-audit pack", audit=None, reference=f"pre-audit {location.code}", scope=AuditScope.LOCATION,
        scope_label=str(AuditScope.LOCATION.label), site=location.site, location=location, period_start=None,
        period_end=None, auditor=None, planned_on=None, conducted_on=None, status="due", status_label="due",
        summary="", signed_off_by=None, signed_off_at=None, as_of=as_of, limits=chosen, lasers=lasers,
        checklist=checklist, findings=findings, rooms_hold_only_scope=True,
    )


def _report(*, lasers: list[Laser], limits: str, as_of: datetime.date, checklist: list[ChecklistRow],
            rooms_hold_only_scope: bool, **fields: object) -> AuditReport:
    hazards = [HazardRow(laser=laser, emission=emission, result=result_under(emission, limits))
               for laser in lasers for emission in laser.current_emissions]
    # A site repeats the same few warnings over hundreds of emissions: each is printed once.
    warnings: dict[str, WarningGroup] = {}
    for row in hazards:
        texts = row.result.warnings if row.result is not None else [
            f"Not assessed: {row.emission.assessment_problem or 'no result under this limit set.'}"]
        for text in texts:
            warnings.setdefault(text, WarningGroup(text=text, emissions=[])).emissions.append(row)
    return AuditReport(
        lasers=lasers, limits=limits, as_of=as_of, hazards=hazards, people=_people(lasers, as_of=as_of),
        rooms=_rooms(lasers, limits=limits, whole_rooms=rooms_hold_only_scope), warnings=list(warnings.values()),
        contacts=list(selectors.lso_contacts()),
        checklist=checklist, grid=checklist_grid(checklist), **fields,  # type: ignore[arg-type]
    )


def _people(lasers: Sequence[Laser], *, as_of: datetime.date) -> list[PersonRow]:
    """Authorizations on ``lasers`` that are approved or awaiting approval, with general training (two queries)."""
    by_pk = {laser.pk: laser for laser in lasers}
    # Only the person is joined: the lasers are the scope's, already loaded.
    authorizations = list(Authorization.objects.select_related("person__user").filter(
        laser__in=list(by_pk), retired_at__isnull=True,
        status__in=[AuthorizationStatus.APPROVED, AuthorizationStatus.REQUESTED],
    ).order_by("laser__asset_tag", "person__user__last_name", "person__user__first_name"))
    training: dict[int, list[TrainingRecord]] = {}
    for record in TrainingRecord.objects.filter(
            person__in={authorization.person_id for authorization in authorizations}, course__in=GENERAL_COURSES,
            retired_at__isnull=True, completed_on__lte=as_of).only("person_id", "valid_until"):
        training.setdefault(record.person_id, []).append(record)
    rows: list[PersonRow] = []
    for authorization in authorizations:
        records = training.get(authorization.person_id, [])
        # A record without an end date never expires, so it outlasts any dated one.
        latest = max((record.valid_until or datetime.date.max for record in records), default=None)
        valid_until = None if latest in (None, datetime.date.max) else latest
        flags: list[str] = []
        if not records:
            flags.append("no general laser safety training on record")
        elif valid_until is not None and valid_until < as_of:
            flags.append(f"training expired on {valid_until:%Y-%m-%d}")
        if authorization.status == AuthorizationStatus.REQUESTED:
            flags.append("authorization requested, not yet approved")
        elif authorization.valid_until is not None and authorization.valid_until < as_of:
            flags.append(f"authorization expired on {authorization.valid_until:%Y-%m-%d}")
        rows.append(PersonRow(person=authorization.person, laser=by_pk[authorization.laser_id],
                              authorization=authorization, has_training=bool(records),
                              training_valid_until=valid_until, flags=flags))
    return rows


def _rooms(lasers: Sequence[Laser], *, limits: str, whole_rooms: bool) -> list[RoomEyewear]:
    """Eyewear adequacy of each room of ``lasers``; ``whole_rooms``: they are every laser in the
    register's care in their rooms (a room or site scope), so the matrix need not load them again."""
    by_room: dict[int, list[Laser]] = {}
    rooms: dict[int, Location] = {}
    for laser in lasers:
        if laser.location is not None:
            rooms[laser.location.pk] = laser.location
            if laser.status not in RETIRED_STATUSES:
                by_room.setdefault(laser.location.pk, []).append(laser)
    report: list[RoomEyewear] = []
    for room in sorted(rooms.values(), key=lambda room: (room.site, room.building, room.room)):
        matrix = selectors.location_eyewear_matrix(location=room, limits=limits,
                                                   lasers_in_room=by_room.get(room.pk, []) if whole_rooms else None)
        report.append(RoomEyewear(location=room, eyewear=matrix.eyewear, lines=wavelength_lines(matrix)))
    return report


def checklist_grid(rows: Sequence[ChecklistRow]) -> ChecklistGrid:
    room_cells: dict[int, tuple[Location, dict[str, str]]] = {}
    laser_cells: dict[int, tuple[Laser, dict[str, str]]] = {}
    questions: list[ChecklistRow] = []
    for row in rows:
        if row.control is None:
            questions.append(row)
        elif row.laser is not None:
            laser_cells.setdefault(row.laser.pk, (row.laser, {}))[1][row.control.code] = _grid_answer(row)
        elif row.location is not None:
            room_cells.setdefault(row.location.pk, (row.location, {}))[1][row.control.code] = _grid_answer(row)
    used = {row.control.code for row in rows if row.control is not None}
    passed = str(ChecklistAnswer.PASS.label)
    return ChecklistGrid(
        room_controls=[control for control in CONTROLS if control.about == "location" and control.code in used],
        laser_controls=[control for control in CONTROLS if control.about == "laser" and control.code in used],
        rooms=[cells for cells in room_cells.values() if set(cells[1].values()) != {passed}],
        lasers=[cells for cells in laser_cells.values() if set(cells[1].values()) != {passed}],
        rooms_passed=[room for room, answers in room_cells.values() if set(answers.values()) == {passed}],
        lasers_passed=[laser for laser, answers in laser_cells.values() if set(answers.values()) == {passed}],
        questions=questions, notes=[row for row in rows if row.comment],
    )


def _grid_answer(row: ChecklistRow) -> str:
    # An open box to tick on paper where the item is not answered yet.
    return row.answer_label if row.answer else "\u2610"
