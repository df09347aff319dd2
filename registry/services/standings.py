"""The rooms' stored hazard standing (``RoomStanding``), written with every change it is made from.

A room's standing reads its lasers in the register's care, their emissions' stored results,
the eyewear kept there with its markings and condition, and the room's longest dimension.
Whatever changes one of them calls ``room_standings_refresh`` with the rooms concerned
(``standing_rooms``), inside its own transaction: the hazard refresh (emissions, classes,
approvals, the recompute command), the laser, eyewear and location services, retirement, the
admin's saves and deletes, and the demo campus. Bulk loads that skip the services (the load
test's grown register, a test's factories) call it themselves.
"""
from __future__ import annotations

import datetime
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from contextvars import ContextVar

from django.db import models, transaction
from django.db.models import Count
from django.utils import timezone

from hazards.limits import LIMIT_SETS
from registry import selectors
from registry.models import (
    STANDING_FIRST_EMISSIONS,
    Emission,
    Eyewear,
    EyewearMarking,
    Laser,
    Location,
    RoomStanding,
)
from registry.services._logging import service_action

# The rooms named inside room_standings_batch(), refreshed once on leaving it; None outside.
_BATCH: ContextVar[set[int] | None] = ContextVar("room_standings_batch", default=None)

_STANDING_VALUES = ["lasers", "largest_nohd_m", "largest_nohd_unbounded", "unprotected", "unprotected_od_max",
                    "unprotected_first", "beyond_room", "beyond_room_first", "computed_at"]


def standing_rooms(record: models.Model) -> set[int]:
    """The ids of the rooms whose standing ``record`` enters as it is now (none for other records)."""
    room: int | None = None
    if isinstance(record, Location):
        room = record.pk
    elif isinstance(record, (Laser, Eyewear)):
        room = record.location_id
    elif isinstance(record, Emission):
        room = record.laser.location_id
    elif isinstance(record, EyewearMarking):
        room = record.eyewear.location_id
    return set() if room is None else {room}


@service_action
@transaction.atomic
def room_standings_refresh(*, locations: Iterable[int | None]) -> None:
    """Recompute and store the standing of the rooms with ids ``locations`` under every limit set.

    The rooms' rows are locked first, in id order, so that two transactions changing one room
    refresh its standing one after the other, the second seeing the first's change. Costs the
    rooms' lasers, emissions and results (room_hazards), about 50 ms per thousand lasers per
    limit set.
    """
    ids = sorted({room for room in locations if room is not None})
    batch = _BATCH.get()
    if batch is not None:
        batch.update(ids)
        return
    if not ids:
        return
    rooms = list(Location.objects.select_for_update().filter(pk__in=ids).order_by("pk"))
    now = timezone.now()
    standings = [_standing(room, limits, now) for limits in LIMIT_SETS
                 for room in selectors.room_hazards(locations=rooms, limits=limits, summary=True)]
    RoomStanding.objects.bulk_create(standings, update_conflicts=True, unique_fields=["location", "limits"],
                                     update_fields=_STANDING_VALUES)


@contextmanager
def room_standings_batch() -> Iterator[None]:
    """Refresh each room's standing once for the whole block, on leaving it (inside the caller's
    transaction): a refresh asked for inside only names its rooms. For a write of several records
    of one room (a laser registered with its emissions, a laser moved and reassessed, an import),
    where each record's refresh would recompute the whole room again. A block inside another
    leaves the refresh to the outer one; an exception leaving the block refreshes nothing (its
    transaction is rolled back)."""
    if _BATCH.get() is not None:
        yield
        return
    rooms: set[int] = set()
    token = _BATCH.set(rooms)
    try:
        yield
    finally:
        _BATCH.reset(token)
    room_standings_refresh(locations=rooms)


def room_standings_fill_missing() -> None:
    """Compute the standing of every room that lacks one under some limit set: a database that
    has just been migrated to the standings, or restored from a backup taken before them. Run
    after every ``migrate`` that applied something (registry.apps); one query when none is missing."""
    missing = (Location.objects.annotate(standings_held=Count("standings"))
               .filter(standings_held__lt=len(LIMIT_SETS)).values_list("pk", flat=True))
    room_standings_refresh(locations=list(missing))


def _standing(room: selectors.RoomHazards, limits: str, now: datetime.datetime) -> RoomStanding:
    # An unprotected emission always has a result with a required OD (the matrix lists no other).
    unprotected = sorted(((emission, selectors.result_under(emission, limits)) for emission in room.matrix.unprotected),
                         key=lambda pair: pair[1].od_required if pair[1] else 0.0, reverse=True)
    beyond = sorted(room.beyond_room, key=lambda pair: (pair[1].nohd_unbounded, pair[1].nohd_m or 0.0), reverse=True)
    largest = room.largest[1] if room.largest is not None else None
    return RoomStanding(
        location=room.location, limits=limits, lasers=len(room.lasers),
        largest_nohd_m=largest.nohd_m if largest is not None else None,
        largest_nohd_unbounded=largest is not None and largest.nohd_unbounded,
        unprotected=len(unprotected),
        unprotected_od_max=max((result.od_required for _, result in unprotected if result), default=None),
        unprotected_first=[emission.pk for emission, _ in unprotected[:STANDING_FIRST_EMISSIONS]],
        beyond_room=len(beyond),
        beyond_room_first=[emission.pk for emission, _ in beyond[:STANDING_FIRST_EMISSIONS]],
        computed_at=now,
    )
