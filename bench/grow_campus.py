"""Grow the demo campus to a register of 10,000 lasers, for the load test (bench/load.py).

Loads the fictional demo campus into the database named by ``--database URL`` through the
same service as ``manage.py seed_campus`` (with the demo passwords, which the load test signs
in with), then copies its lasers, each with its emissions and their stored hazard results,
under new asset tags (``<tag>-G00001``...) until the register holds ``--lasers`` lasers. The
copies keep the demo's mix of classes, statuses, owners and rooms, and their results are the
engine's own (computed once for the demo); they are written with bulk inserts, without
history rows, since the load test reads them and edits only a few; each room's stored standing
(services.standings) is computed once at the end.

The database must be a scratch one: every table is emptied first (``flush``). DATABASE_URL
from the environment is ignored on purpose, as in bench/api.py.

Run from the project root: ``python bench/grow_campus.py --database postgres://postgres@127.0.0.1:5432/bk_load``.
"""
from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

BATCH = 500


def _setup_django(database_url: str) -> None:
    sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
    os.environ.setdefault("DJANGO_SETTINGS_MODULE", "registry.settings")
    os.environ["DATABASE_URL"] = database_url
    import django

    django.setup()


def grow(*, lasers: int) -> None:
    from django.core.management import call_command
    from django.db import connection, transaction

    from registry.models import Emission, HazardResult, Laser, Location
    from registry.services.campus import campus_load, campus_read
    from registry.services.standings import room_standings_refresh

    call_command("migrate", verbosity=0)
    call_command("createcachetable", verbosity=0)
    call_command("flush", interactive=False, verbosity=0)
    campus_load(data=campus_read(), set_demo_passwords=True)
    templates = list(Laser.objects.order_by("asset_tag").prefetch_related("emissions__hazard_results"))
    missing = lasers - len(templates)
    print(f"demo campus: {len(templates)} lasers; adding {max(missing, 0)} copies", flush=True)
    started = time.perf_counter()
    number = 0
    while number < missing:
        with transaction.atomic():
            batch = []
            for _ in range(min(BATCH, missing - number)):
                number += 1
                batch.append((templates[number % len(templates)], number))
            copies = Laser.objects.bulk_create(
                [_copy(template, asset_tag=f"{template.asset_tag}-G{number:05d}") for template, number in batch])
            emissions = [(_copy(emission, laser=copy), emission)
                         for copy, (template, _) in zip(copies, batch) for emission in template.emissions.all()]
            Emission.objects.bulk_create([copy for copy, _ in emissions])
            HazardResult.objects.bulk_create([_copy(result, emission=copy) for copy, template in emissions
                                              for result in template.hazard_results.all()])
        print(f"  {number}/{missing} ({time.perf_counter() - started:.0f} s)", flush=True)
    # Bulk inserts skip the services, which keep each room's stored standing.
    room_standings_refresh(locations=Location.objects.values_list("pk", flat=True))
    if connection.vendor == "postgresql":
        with connection.cursor() as cursor:
            cursor.execute("ANALYZE")  # the planner's statistics, for the register's new size
    print(f"register: {Laser.objects.count()} lasers, {Emission.objects.count()} emissions, "
          f"{HazardResult.objects.count()} stored results", flush=True)


def _copy(record, **changes):  # type: ignore[no-untyped-def]
    """An unsaved copy of ``record`` with ``changes``; its primary key left to the database."""
    values = {field.attname: getattr(record, field.attname) for field in record._meta.concrete_fields
              if not field.primary_key}
    copy = type(record)(**values)
    for name, value in changes.items():
        setattr(copy, name, value)
    return copy


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--database", required=True, help="URL of a scratch database; every table is emptied.")
    parser.add_argument("--lasers", type=int, default=10_000, help="Lasers in the register at the end (10,000).")
    arguments = parser.parse_args()
    _setup_django(arguments.database)
    grow(lasers=arguments.lasers)


if __name__ == "__main__":
    main()
