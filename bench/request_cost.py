"""What one request of the load test costs the server: CPU milliseconds and queries, per route.

Runs the routes of ``bench/load.py``'s mix (the homes aside) in-process through the whole
middleware stack, DEBUG off, against a register that is already there (the campus of
``bench/grow_campus.py``: a copy of it; nothing is written but sessions and API tokens), signed in
as the load test's demo accounts (a session for the pages, a token for the API). Each route
is requested ``--warm`` times first (the first request of a process loads templates, limit
sets and URL patterns), then ``--repeat`` times. It prints medians of the CPU time of this
process (``time.process_time``: what the request costs Django, whatever else the machine is
doing), of the wall time, and of the time spent waiting for the database's answers, the mean
CPU time of the PostgreSQL process serving the connection (read from /proc when the server is
local: its work runs on the same cores in the load test), and the number of queries. The
connection is kept between requests, as in production. ``--profile ROUTE``
prints that route's cProfile instead (the 40 heaviest functions by ``--sort``).

Run from the project root:
``python bench/request_cost.py --database postgres://postgres@127.0.0.1:5432/bk_copy [--repeat 9]``.
"""
from __future__ import annotations

import argparse
import cProfile
import os
import pstats
import statistics
import sys
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

ROUTES = ("register page", "laser list (API)", "laser page", "registration preview", "evaluate (API)")


def _setup_django(database_url: str) -> None:
    sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
    os.environ.setdefault("DJANGO_SETTINGS_MODULE", "registry.settings")
    os.environ["DATABASE_URL"] = database_url
    os.environ["DEBUG"] = "false"
    os.environ.setdefault("ALLOWED_HOSTS", "testserver")
    # The request log would print a line per request.
    os.environ.setdefault("LOG_LEVEL", "WARNING")
    import django

    django.setup()


def _requests() -> dict[str, Callable[[], object]]:
    """Each route as a call of the test client, on records picked as load.py picks them."""
    from django.contrib.auth.models import User
    from django.test import Client
    from rest_framework.authtoken.models import Token

    from registry.models import Laser, Location

    def session(username: str) -> Client:
        client = Client()
        client.force_login(User.objects.get(username=username))
        return client

    def token(username: str) -> dict[str, str]:
        key = Token.objects.get_or_create(user=User.objects.get(username=username))[0].key
        return {"HTTP_AUTHORIZATION": f"Token {key}"}

    inspector, researcher, api = session("inspector"), session("researcher"), Client()
    inspector_token, user_token = token("inspector"), token("user")
    pages = -(-Laser.objects.count() // 50)
    middle = pages // 2
    laser = Laser.objects.filter(status="active", emissions__isnull=False).order_by("pk")[Laser.objects.count() // 2]
    location = Location.objects.first()  # the first room the form offers, as load.py picks
    assert location is not None
    preview = {
        "laser_type": "diode", "labelled_class": "3B", "location": str(location.pk),
        "emissions-TOTAL_FORMS": "1", "emissions-INITIAL_FORMS": "0", "emissions-MIN_NUM_FORMS": "1",
        "emissions-MAX_NUM_FORMS": "12", "emissions-0-wavelength_m": "520 nm", "emissions-0-temporal_mode": "cw",
        "emissions-0-average_power_W": "120 mW", "emissions-0-beam_diameter_m": "1.5 mm",
        "emissions-0-diameter_definition": "1/e2", "emissions-0-divergence_rad": "1 mrad", "preview": "Preview"}
    evaluate = {"wavelength": "532 nm", "power": "120 mW", "beam_diameter": "2 mm", "divergence": "0.8 mrad"}
    return {
        "register page": lambda: inspector.get(f"/lasers/?page={middle}"),
        "laser list (API)": lambda: api.get(f"/api/v1/lasers/?page={middle}", **inspector_token),
        "laser page": lambda: researcher.get(f"/lasers/{laser.pk}/"),
        "registration preview": lambda: researcher.post("/lasers/new/", preview),
        "evaluate (API)": lambda: api.post("/api/v1/evaluate/", evaluate, content_type="application/json",
                                           **user_token),
    }


@dataclass
class Cost:
    cpu_ms: float
    wall_ms: float
    database_ms: float
    database_cpu_ms: float | None
    queries: int
    status: int


def _database_cpu_ns() -> int | None:
    """CPU time so far of the PostgreSQL process serving this connection (Linux, local server), or None."""
    from django.db import connection

    if connection.vendor != "postgresql":
        return None
    with connection.cursor() as cursor:
        cursor.execute("SELECT pg_backend_pid()")
        pid = cursor.fetchone()[0]
    try:
        return int(Path(f"/proc/{pid}/schedstat").read_text().split()[0])
    except OSError:
        return None


def _measure(call: Callable[[], object], *, warm: int, repeat: int) -> Cost:
    """Medians over ``repeat`` requests; the queries and the status are those of the last."""
    from django.db import connection

    for _ in range(warm):
        call()
    cpu, wall, database, queries = [], [], [], []
    status = 0
    database_cpu_before = _database_cpu_ns()
    for _ in range(repeat):
        waits: list[float] = []

        def timed(execute: Callable[..., object], *args: object) -> object:
            started = time.perf_counter()
            try:
                return execute(*args)
            finally:
                waits.append(time.perf_counter() - started)

        started_cpu, started = time.process_time(), time.perf_counter()
        with connection.execute_wrapper(timed):
            answer = call()
        cpu.append((time.process_time() - started_cpu) * 1000)
        wall.append((time.perf_counter() - started) * 1000)
        database.append(sum(waits) * 1000)
        queries.append(len(waits))
        status = getattr(answer, "status_code", 0)
    database_cpu_after = _database_cpu_ns()
    database_cpu = (None if database_cpu_before is None or database_cpu_after is None
                    else (database_cpu_after - database_cpu_before) / repeat / 1e6)
    return Cost(statistics.median(cpu), statistics.median(wall), statistics.median(database), database_cpu,
                queries[-1], status)


def main() -> None:
    parser = argparse.ArgumentParser(description="CPU time and queries of one request per load-test route.")
    parser.add_argument("--database", required=True, help="URL of a copy of the grown register (never the load test's own).")
    parser.add_argument("--repeat", type=int, default=9, help="Measured requests per route (default 9).")
    parser.add_argument("--warm", type=int, default=2, help="Unmeasured requests per route first (default 2).")
    parser.add_argument("--profile", choices=ROUTES, help="Print this route's cProfile instead.")
    parser.add_argument("--sort", default="cumulative", choices=("cumulative", "tottime"),
                        help="The profile's order (default %(default)s).")
    parser.add_argument("--route", action="append", choices=ROUTES, help="Measure only these routes (repeatable).")
    arguments = parser.parse_args()
    _setup_django(arguments.database)
    calls = _requests()
    if arguments.profile:
        for _ in range(arguments.warm):
            calls[arguments.profile]()
        profile = cProfile.Profile()
        profile.runcall(calls[arguments.profile])
        pstats.Stats(profile).sort_stats(arguments.sort).print_stats(40)
        return
    print(f"{'route':<24} {'CPU ms':>8} {'wall ms':>8} {'query ms':>9} {'PG CPU ms':>10} {'queries':>8}  status")
    for route in arguments.route or ROUTES:
        cost = _measure(calls[route], warm=arguments.warm, repeat=arguments.repeat)
        database_cpu = "-" if cost.database_cpu_ms is None else f"{cost.database_cpu_ms:.1f}"
        print(f"{route:<24} {cost.cpu_ms:>8.1f} {cost.wall_ms:>8.1f} {cost.database_ms:>9.1f} {database_cpu:>10} "
              f"{cost.queries:>8}  {cost.status}", flush=True)


if __name__ == "__main__":
    main()
