"""Benchmark of the printed documents: the audit report of a 500-laser site and the door sign of a
20-laser room.

Seeds, in a fresh SQLite database in a temporary directory (DATABASE_URL is ignored on
purpose, so the benchmark never touches a real register), 25 rooms of 20 class 3B/4 lasers,
each with one emission and its two stored hazard results (figures and working from the
engine, varied by row), two authorized users per laser with general training (one in ten
expired), two pairs of goggles per room, and a site audit in progress whose checklist (the
control measures of every laser and room, about 3,100 items) is answered, ten of them failed
with findings. Then renders each document ``--runs`` times and prints, per document, the
median seconds to read the register and fill the template (HTML), to lay out and write the
PDF, the page count, pages per second and the queries made. The machine is shared, so the
same run also renders a reference (a plain 500-row, 5-column table, straight to WeasyPrint)
and prints each document's time as a multiple of it, and the CPU seconds the render took: both
move far less with the machine's load than the wall-clock seconds do.

Run from the project root: ``python bench/documents.py [--runs 3]``.
"""
from __future__ import annotations

import argparse
import datetime
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

ROOMS = 25
LASERS_PER_ROOM = 20
GENERATED_AT = datetime.datetime(2026, 12, 1, 9, 0, tzinfo=datetime.timezone.utc)


def _setup_django(database_url: str) -> None:
    sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
    os.environ.setdefault("DJANGO_SETTINGS_MODULE", "registry.settings")
    os.environ["DATABASE_URL"] = database_url
    import django

    django.setup()


def _seed() -> tuple[int, int]:
    """The site in bulk; returns the audit's and the first room's primary keys."""
    from django.contrib.auth import get_user_model
    from django.core.management import call_command
    from django.utils import timezone

    from registry import services
    from registry.models import (
        Audit,
        AuditChecklistItem,
        Authorization,
        Emission,
        Eyewear,
        EyewearMarking,
        Finding,
        HazardResult,
        Laser,
        Location,
        Person,
        TrainingRecord,
    )
    from registry.services.checklist import checklist_for
    from registry.services.hazards import emission_assess

    call_command("migrate", verbosity=0)
    now = timezone.now()
    today = GENERATED_AT.date()
    lso = services.person_create(username="bench-lso", role="lso", first_name="Bench", last_name="Officer")
    owner = services.person_create(username="bench-owner", role="researcher", first_name="Rue", last_name="Owner")
    rooms = Location.objects.bulk_create(
        Location(code=f"bench-{number:02d}", site="Bench Site", building="Bench Hall", room=f"{number:02d}",
                 is_controlled_area=True, interlock="door_switch", has_warning_light=True, longest_dimension_m=8.0)
        for number in range(ROOMS))
    lasers = Laser.objects.bulk_create(
        Laser(asset_tag=f"B-{number:04d}", laser_type="solid_state", labelled_class="4" if number % 3 else "3B",
              status="active", owner=owner, location=rooms[number // LASERS_PER_ROOM], manufacturer="Bench Optics",
              model_name=f"BX-{number % 40}")
        for number in range(ROOMS * LASERS_PER_ROOM))
    wavelengths = (355e-9, 532e-9, 808e-9, 1064e-9, 1550e-9)
    emissions = Emission.objects.bulk_create(
        Emission(laser=laser, label="output", wavelength_m=wavelengths[index % len(wavelengths)], temporal_mode="cw",
                 average_power_W=0.2 + index % 7 * 0.3, beam_diameter_m=2e-3, divergence_rad=1e-3)
        for index, laser in enumerate(lasers))
    # One real assessment per wavelength and limit set; every row gets its wavelength's result,
    # with NOHD and OD varied by row as in a register.
    templates = {}
    for emission in emissions[:len(wavelengths)]:
        for limits in ("icnirp2013", "eu2006"):
            result = emission_assess(emission=emission, limits=limits)
            templates[(emission.wavelength_m, limits)] = {
                field.attname: getattr(result, field.attname) for field in HazardResult._meta.concrete_fields
                if field.attname not in ("id", "emission_id")}
    HazardResult.objects.all().delete()
    HazardResult.objects.bulk_create(
        HazardResult(**{**templates[(emission.wavelength_m, limits)], "emission": emission,
                        "nohd_m": 20.0 + emission.pk % 97 * 3.1, "computed_at": now})
        for emission in emissions for limits in ("icnirp2013", "eu2006"))

    users = get_user_model().objects.bulk_create(
        get_user_model()(username=f"bench-user-{number}", first_name="User", last_name=f"{number:04d}")
        for number in range(ROOMS * LASERS_PER_ROOM * 2))
    people = Person.objects.bulk_create(Person(user=user, role="user") for user in users)
    TrainingRecord.objects.bulk_create(
        TrainingRecord(person=person, course="general", completed_on=today - datetime.timedelta(days=700),
                       valid_until=today - datetime.timedelta(days=5) if number % 10 == 0
                       else today + datetime.timedelta(days=300))
        for number, person in enumerate(people))
    Authorization.objects.bulk_create(
        Authorization(person=person, laser=lasers[number // 2], status="approved", requested_by=owner,
                      requested_at=now, decided_by=lso, decided_at=now)
        for number, person in enumerate(people))
    goggles = Eyewear.objects.bulk_create(
        Eyewear(inventory_tag=f"EW-{room.code}-{pair}", location=room, quantity=4)
        for room in rooms for pair in (1, 2))
    EyewearMarking.objects.bulk_create(
        EyewearMarking(eyewear=item, wavelength_min_m=low, wavelength_max_m=high, optical_density=6.0,
                       en207_conditions="D", en207_scale=6)
        for item in goggles for low, high in ((190e-9, 540e-9), (780e-9, 1600e-9)))

    audit = Audit.objects.create(reference="AUD-BENCH", scope="site", site="Bench Site", auditor=lso,
                                 planned_on=today, conducted_on=today, status="in_progress")
    scoped = list(Laser.objects.select_related("location").order_by("asset_tag"))
    items = AuditChecklistItem.objects.bulk_create(
        AuditChecklistItem(audit=audit, position=position, question=entry.question, control=entry.control.code,
                           laser=entry.laser, location=entry.location,
                           answer="fail" if position % 300 == 0 else "pass",
                           comment="Found wanting on the day." if position % 300 == 0 else "")
        for position, entry in enumerate(checklist_for(scoped), start=1))
    Finding.objects.bulk_create(
        Finding(audit=audit, checklist_item=item, laser=item.laser, location=item.location, severity="minor",
                description=f"{item.question}: {item.comment}", corrective_action="Put it right.", owner=owner,
                due_on=today + datetime.timedelta(days=30))
        for item in items if item.answer == "fail")
    return audit.pk, rooms[0].pk


REFERENCE_ROWS = "".join(
    f"<tr><td>Row {number}</td><td>{number * 3.1:.1f} mW</td><td>532 nm</td><td>OD {number % 7}</td>"
    f"<td>Cell text {number}</td></tr>" for number in range(500))
REFERENCE = ("<html><head><style>@page { size: A4; @bottom-center { content: counter(page) } } "
             "table { width: 100%; border-collapse: collapse } td { border-bottom: 1px solid #999 }</style>"
             "</head><body><table><thead><tr><th>A</th><th>B</th><th>C</th><th>D</th><th>E</th></tr></thead>"
             f"<tbody>{REFERENCE_ROWS}</tbody></table></body></html>")


def _reference(runs: int) -> float:
    from weasyprint import HTML

    seconds = []
    for _ in range(runs):
        started = time.perf_counter()
        HTML(string=REFERENCE).write_pdf()
        seconds.append(time.perf_counter() - started)
    return statistics.median(seconds)


def _measure(label: str, render: object, runs: int, reference: float) -> None:
    from django.db import connection
    from django.test.utils import CaptureQueriesContext

    html_seconds, pdf_seconds, cpu_seconds, pages, queries = [], [], [], 0, 0
    for _ in range(runs):
        cpu_started = time.process_time()
        started = time.perf_counter()
        with CaptureQueriesContext(connection) as captured:
            document = render()  # type: ignore[operator]
        html_seconds.append(time.perf_counter() - started)
        started = time.perf_counter()
        pdf = document.to_pdf()
        pdf_seconds.append(time.perf_counter() - started)
        cpu_seconds.append(time.process_time() - cpu_started)
        pages, queries = pdf.pages, len(captured)
    html, laid_out = statistics.median(html_seconds), statistics.median(pdf_seconds)
    total = html + laid_out
    print(f"{label:<34} {html:6.2f} s HTML + {laid_out:6.2f} s PDF = {total:6.2f} s "
          f"({total / reference:4.1f} x reference, {statistics.median(cpu_seconds):6.2f} s of CPU); "
          f"{pages:4d} pages, {pages / total:5.1f} pages/s; {queries} queries")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--runs", type=int, default=3, help="Renders of each document; the median is printed.")
    options = parser.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        _setup_django(f"sqlite:///{Path(folder) / 'bench.sqlite3'}")
        started = time.perf_counter()
        audit_pk, room_pk = _seed()
        print(f"seeded {ROOMS} rooms x {LASERS_PER_ROOM} lasers in {time.perf_counter() - started:.1f} s; "
              f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")

        from registry.documents import render_audit_report, render_door_sign
        from registry.models import Audit, Location

        # The first render in a process also loads WeasyPrint and the fonts; it is not counted.
        render_door_sign(Location.objects.get(pk=room_pk), generated_at=GENERATED_AT).to_pdf()
        reference = _reference(options.runs)
        print(f"{'reference: 500 x 5 table':<34} {reference:6.2f} s")
        _measure(f"audit report, {ROOMS * LASERS_PER_ROOM} lasers",
                 lambda: render_audit_report(Audit.objects.get(pk=audit_pk), generated_at=GENERATED_AT),
                 options.runs, reference)
        _measure(f"door sign, {LASERS_PER_ROOM}-laser room",
                 lambda: render_door_sign(Location.objects.get(pk=room_pk), generated_at=GENERATED_AT), options.runs,
                 reference)


if __name__ == "__main__":
    main()
