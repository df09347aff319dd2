"""Two LSOs PATCH one laser at the same moment, on a file-backed SQLite database.

Run by tests/registry/test_concurrency.py in a subprocess (its docstring says why):

    python -m tests.registry.sqlite_race DATABASE_FILE ROUNDS

creates the tables in DATABASE_FILE (a new, empty file), registers a laser, then in each round sends two
PATCHes of its description from two threads, both with the ETag read before the round, and
prints the statuses of every round as one JSON list of [first, second] pairs, and the
description the laser ends with.
"""
from __future__ import annotations

import json
import os
import sys
import threading


def main(database_file: str, rounds: int) -> None:
    os.environ["DATABASE_URL"] = f"sqlite:///{database_file}"
    os.environ.setdefault("DJANGO_SETTINGS_MODULE", "registry.settings")
    import django

    django.setup()
    from django.apps import apps
    from django.conf import settings
    from django.core.management import call_command
    from django.db import connection
    from django.test.utils import setup_test_environment
    from rest_framework.test import APIClient

    from registry import services
    from registry.models import Person

    setup_test_environment()
    # The tables straight from the models, as for a test database without migrations: the race
    # is about locking, and replaying every migration costs more than the race itself.
    settings.MIGRATION_MODULES = {config.label: None for config in apps.get_app_configs()}
    call_command("migrate", run_syncdb=True, verbosity=0)
    first = services.person_create(username="ada", role="lso")
    second = services.person_create(username="bo", role="lso")
    room = services.location_create(code="race-1", site="R", building="R", room="1", by=first)
    laser = services.laser_register(by=first, asset_tag="RACE-1", laser_type="gas", labelled_class="2",
                                    owner=first, location=room)
    url = f"/api/v1/lasers/{laser.pk}/"

    def client(person: Person) -> APIClient:
        api = APIClient()
        api.raise_request_exception = False
        api.force_authenticate(user=person.user)
        return api

    results: list[list[int]] = []
    for round_number in range(rounds):
        etag = client(first).get(url)["ETag"]
        start = threading.Barrier(2)
        statuses: dict[str, int] = {}

        def edit(person: Person, text: str) -> None:
            try:
                start.wait()
                answer = client(person).patch(url, {"description": text}, format="json", HTTP_IF_MATCH=etag)
                statuses[text] = answer.status_code
            finally:
                connection.close()

        names = (f"round {round_number} by ada", f"round {round_number} by bo")
        threads = [threading.Thread(target=edit, args=(person, name)) for person, name in zip((first, second), names)]
        for thread in threads:
            thread.start()
        for thread in threads:
            thread.join()
        results.append([statuses[name] for name in names])
    laser.refresh_from_db()
    print(json.dumps({"rounds": results, "description": laser.description}))


if __name__ == "__main__":
    main(sys.argv[1], int(sys.argv[2]))
