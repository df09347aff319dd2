"""Benchmark of the laser list endpoint against a bare values() JSON view over the same rows.

Seeds 10,000 lasers (each with one emission and one stored hazard result, whose figures
and working come from the engine) in a fresh SQLite database in a temporary directory, or
in the scratch database named by ``--scratch-database URL`` (emptied first: every table is
flushed). DATABASE_URL from the environment is deliberately ignored, so that the benchmark
can never empty the register a shell happens to point at. Then requests pages of 100 in-process through the whole
middleware stack, token-authenticated as the LSO, and prints p50/p95 latency and the
query count per request of

- GET /api/v1/lasers/?page_size=100 (emissions and hazard results embedded);
- "bare same content": a bare Django view returning the same page as JSON straight from
  three ``values()`` queries (lasers, their emissions, the emissions' results; the same
  stored columns the API shows), nested in Python, no serializers. The goal is measured
  against this view: the API within 3x of it, with a constant query count;
- "bare laser rows": for scale, a bare view returning only 12 laser columns of the same
  100 rows (about a sixth of the JSON), from one ``values()`` query.

Run from the project root: ``python bench/api.py [--requests 200] [--scratch-database URL]``.
"""
from __future__ import annotations

import argparse
import os
import statistics
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

LASERS = 10_000
PAGE_SIZE = 100


def _setup_django(database_url: str) -> None:
    sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
    os.environ.setdefault("DJANGO_SETTINGS_MODULE", "registry.settings")
    os.environ["DATABASE_URL"] = database_url
    os.environ.setdefault("ALLOWED_HOSTS", "testserver")
    import django

    django.setup()


def _seed() -> str:
    """The lasers, emissions and results, in bulk; returns the LSO's API token."""
    from django.core.management import call_command
    from django.utils import timezone
    from rest_framework.authtoken.models import Token

    from registry import services
    from registry.models import Emission, HazardResult, Laser, Person
    from registry.services.hazards import emission_assess

    call_command("migrate", verbosity=0)
    call_command("flush", interactive=False, verbosity=0)
    lso = services.person_create(username="bench-lso", role="lso")
    owner = services.person_create(username="bench-owner", role="researcher")
    room = services.location_create(code="bench-1", site="Bench", building="Bench Hall", room="1", by=lso)
    lasers = Laser.objects.bulk_create(
        (Laser(asset_tag=f"B-{number:05d}", laser_type="diode", labelled_class="3B", status="active", owner=owner,
               location=room, manufacturer="Bench Optics", model_name=f"BX-{number % 40}")
         for number in range(LASERS)), batch_size=2000)
    emissions = Emission.objects.bulk_create(
        (Emission(laser=laser, wavelength_m=405e-9 + (laser.pk % 300) * 1e-9, temporal_mode="cw",
                  average_power_W=0.1, beam_diameter_m=1e-3, divergence_rad=1e-3) for laser in lasers),
        batch_size=2000)
    # One real assessment gives every stored result a working of realistic size (kB of JSON);
    # the figures vary by row as they would in a register.
    assessed = emission_assess(emission=emissions[0], limits="icnirp2013")
    template = {field.attname: getattr(assessed, field.attname)
                for field in HazardResult._meta.concrete_fields if field.attname not in ("id", "emission_id")}
    HazardResult.objects.filter(emission=emissions[0]).delete()
    HazardResult.objects.bulk_create(
        (HazardResult(**{**template, "emission": emission, "nohd_m": 2.0 + emission.pk % 997 * 0.11,
                         "od_required": 1.0 + emission.pk % 50 * 0.1, "computed_at": timezone.now()})
         for emission in emissions), batch_size=2000)
    assert Person.objects.count() == 2
    return Token.objects.create(user=lso.user).key


# The stored columns the API shows (the API adds the unit texts, links and the caution).
_LASER_COLUMNS = ("id", "asset_tag", "manufacturer", "model_name", "serial_number", "laser_type", "gain_medium",
                  "labelled_class", "embedded_class", "status", "owner_id", "location_id", "description",
                  "received_on", "commissioned_on", "retired_on", "review_comments", "status_note", "created_at",
                  "updated_at")
_EMISSION_COLUMNS = ("id", "laser_id", "label", "wavelength_m", "wavelength_max_m", "temporal_mode",
                     "average_power_W", "pulse_energy_J", "pulse_duration_s", "prf_Hz", "beam_diameter_m",
                     "diameter_definition", "divergence_rad", "source_size_rad", "fibre_na", "notes", "created_at",
                     "updated_at")
_RESULT_COLUMNS = ("id", "emission_id", "limits", "exposure_s", "eye_mpe_J_m2", "eye_mpe_W_m2",
                   "eye_mpe_per_pulse_J_m2", "pulse_rule", "skin_exposure_s", "skin_mpe_J_m2", "skin_mpe_W_m2",
                   "nohd_m", "nohd_unbounded", "diffuse_hazard_distance_m", "skin_hazard_distance_m", "od_required",
                   "en207_marking", "warnings", "engine_version", "computed_at")


def bare_laser_page(request: object) -> object:
    """For scale: 12 columns of the same page of laser rows, straight from values() to JSON."""
    from django.http import JsonResponse

    from registry.models import Laser

    page = int(request.GET.get("page", "1"))  # type: ignore[attr-defined]
    offset = (page - 1) * PAGE_SIZE
    rows = list(Laser.objects.order_by("asset_tag").values(
        "id", "asset_tag", "manufacturer", "model_name", "serial_number", "laser_type", "labelled_class",
        "embedded_class", "status", "owner_id", "location_id", "description")[offset:offset + PAGE_SIZE])
    return JsonResponse({"count": Laser.objects.count(), "results": rows})


def bare_nested_page(request: object) -> object:
    """The comparison: the same page with each laser's emissions and results, from three values() queries."""
    from django.http import JsonResponse

    from registry.models import Emission, HazardResult, Laser

    page = int(request.GET.get("page", "1"))  # type: ignore[attr-defined]
    offset = (page - 1) * PAGE_SIZE
    lasers = list(Laser.objects.order_by("asset_tag").values(*_LASER_COLUMNS)[offset:offset + PAGE_SIZE])
    emissions = list(Emission.objects.filter(laser_id__in=[row["id"] for row in lasers]).values(*_EMISSION_COLUMNS))
    results = list(HazardResult.objects.filter(emission_id__in=[row["id"] for row in emissions])
                   .values(*_RESULT_COLUMNS))
    by_emission: dict[int, list[dict[str, object]]] = {}
    for row in results:
        by_emission.setdefault(row["emission_id"], []).append(row)
    by_laser: dict[int, list[dict[str, object]]] = {}
    for row in emissions:
        by_laser.setdefault(row["laser_id"], []).append({**row, "hazard_results": by_emission.get(row["id"], [])})
    rows = [{**row, "emissions": by_laser.get(row["id"], [])} for row in lasers]
    return JsonResponse({"count": Laser.objects.count(), "results": rows})


def _measure(call: Callable[[int], object], requests: int) -> tuple[float, float, list[int]]:
    from django.db import connection
    from django.test.utils import CaptureQueriesContext

    pages = LASERS // PAGE_SIZE
    call(1)  # warm up: imports, prepared statements, caches
    timings: list[float] = []
    queries: list[int] = []
    for number in range(requests):
        with CaptureQueriesContext(connection) as captured:
            start = time.perf_counter()
            call(1 + number % pages)
            timings.append(time.perf_counter() - start)
        queries.append(len(captured.captured_queries))
    timings.sort()
    return statistics.median(timings), timings[int(0.95 * (len(timings) - 1))], sorted(set(queries))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--requests", type=int, default=200, help="requests per endpoint (default 200)")
    parser.add_argument("--scratch-database", metavar="URL",
                        help="a database URL to seed instead of a temporary SQLite file; ALL ITS TABLES ARE EMPTIED")
    args = parser.parse_args()

    with tempfile.TemporaryDirectory() as directory:
        _setup_django(args.scratch_database or f"sqlite:///{Path(directory) / 'bench.sqlite3'}")
        from django.conf import settings
        from django.test import Client
        from django.test.utils import override_settings
        from django.urls import include, path

        token = _seed()
        client = Client(HTTP_AUTHORIZATION=f"Token {token}")
        global urlpatterns
        urlpatterns = [path("bare/lasers/", bare_laser_page), path("bare/nested/", bare_nested_page),
                       path("", include(settings.ROOT_URLCONF))]

        def api(page: int) -> object:
            response = client.get("/api/v1/lasers/", {"page_size": PAGE_SIZE, "page": page})
            assert response.status_code == 200 and len(response.json()["results"]) == PAGE_SIZE
            return response

        def bare(page: int) -> object:
            response = client.get("/bare/lasers/", {"page": page})
            assert response.status_code == 200 and len(response.json()["results"]) == PAGE_SIZE
            return response

        def nested(page: int) -> object:
            response = client.get("/bare/nested/", {"page": page})
            assert response.status_code == 200 and len(response.json()["results"]) == PAGE_SIZE
            return response

        with override_settings(ROOT_URLCONF=sys.modules[__name__]):
            api_p50, api_p95, api_queries = _measure(api, args.requests)
            bare_p50, bare_p95, bare_queries = _measure(bare, args.requests)
            nested_p50, nested_p95, nested_queries = _measure(nested, args.requests)
        vendor = settings.DATABASES["default"]["ENGINE"].rsplit(".", 1)[-1]

    print(f"{LASERS} lasers, page size {PAGE_SIZE}, {args.requests} requests each, database {vendor}")
    print(f"  API list            p50 {api_p50 * 1e3:6.1f} ms  p95 {api_p95 * 1e3:6.1f} ms  queries {api_queries}")
    print(f"  bare same content   p50 {nested_p50 * 1e3:6.1f} ms  p95 {nested_p95 * 1e3:6.1f} ms  "
          f"queries {nested_queries}")
    print(f"  bare laser rows     p50 {bare_p50 * 1e3:6.1f} ms  p95 {bare_p95 * 1e3:6.1f} ms  queries {bare_queries}")
    print(f"  API / bare same content  p50 {api_p50 / nested_p50:5.2f}x  p95 {api_p95 / nested_p95:5.2f}x  "
          "(the goal: within 3x, constant queries)")
    print(f"  API / bare laser rows    p50 {api_p50 / bare_p50:5.2f}x  p95 {api_p95 / bare_p95:5.2f}x  "
          "(for scale: a sixth of the content)")


urlpatterns: list[object] = []

if __name__ == "__main__":
    main()
