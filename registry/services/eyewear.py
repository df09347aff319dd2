"""Writes for eyewear and its markings, and for locations."""
from __future__ import annotations

import datetime
from collections.abc import Iterable
from typing import Any, TypedDict

from django.db import transaction
from django.utils import timezone

from registry.models import Eyewear, EyewearMarking, Location, Person, Role
from registry.services._common import (
    lock_for_change,
    lock_for_decision,
    quantity,
    require_role,
    save_changes,
    validated_save,
)
from registry.services._logging import service_action
from registry.services.standings import room_standings_refresh


class MarkingInput(TypedDict, total=False):
    """One band of an eyewear marking; wavelengths are metres or strings with units."""

    wavelength_min_m: float | str
    wavelength_max_m: float | str
    optical_density: float | None
    en207_conditions: str
    en207_scale: int | None


def _marking(eyewear: Eyewear, given: MarkingInput) -> EyewearMarking:
    return EyewearMarking(
        eyewear=eyewear,
        wavelength_min_m=quantity(given.get("wavelength_min_m"), field="wavelength_min_m", unit="m"),
        wavelength_max_m=quantity(given.get("wavelength_max_m"), field="wavelength_max_m", unit="m"),
        optical_density=given.get("optical_density"),
        en207_conditions=given.get("en207_conditions", ""),
        en207_scale=given.get("en207_scale"),
    )


# Markings change through eyewear_set_markings, condition and inspection date through
# eyewear_inspect; the inventory tag is the item's identity on its label.
EYEWEAR_EDITABLE_FIELDS = frozenset({"manufacturer", "model_name", "description", "location", "quantity"})

# The code is the room's identity in other systems (as a laser's asset tag).
LOCATION_EDITABLE_FIELDS = frozenset({"site", "building", "room", "name", "is_controlled_area", "interlock",
                                      "has_warning_light", "sign_posted_on", "longest_dimension_m"})


@service_action
@transaction.atomic
def eyewear_create(*, inventory_tag: str, location: Location, markings: Iterable[MarkingInput], by: Person | None,
                   **fields: Any) -> Eyewear:
    """An eyewear item with its markings. ``fields``: manufacturer, model_name, description,
    quantity, condition, last_inspected_on."""
    eyewear = validated_save(Eyewear(inventory_tag=inventory_tag, location=location, **fields), by=by)
    for given in markings:
        validated_save(_marking(eyewear, given), by=by)
    room_standings_refresh(locations=[location.pk])
    return eyewear


@service_action
@transaction.atomic
def eyewear_set_markings(*, eyewear: Eyewear, markings: Iterable[MarkingInput], by: Person | None) -> Eyewear:
    """Replace the item's markings (e.g. after a filter was swapped); history keeps the old ones."""
    lock_for_decision(eyewear)
    eyewear.markings.all().delete()
    for given in markings:
        validated_save(_marking(eyewear, given), by=by)
    room_standings_refresh(locations=[eyewear.location_id])
    return eyewear


@service_action
@transaction.atomic
def eyewear_inspect(*, eyewear: Eyewear, by: Person, condition: str,
                    inspected_on: datetime.date | None = None) -> Eyewear:
    lock_for_change(eyewear)
    eyewear.condition = condition
    eyewear.last_inspected_on = inspected_on or timezone.localdate()
    validated_save(eyewear, by=by)
    room_standings_refresh(locations=[eyewear.location_id])  # damaged eyewear protects nobody
    return eyewear


@service_action
@transaction.atomic
def location_create(*, code: str, site: str, building: str, room: str, by: Person | None, **fields: Any) -> Location:
    """A room. ``fields``: name, is_controlled_area, interlock, has_warning_light,
    sign_posted_on, longest_dimension_m (metres or a string with units)."""
    if "longest_dimension_m" in fields:
        fields["longest_dimension_m"] = quantity(fields["longest_dimension_m"], field="longest_dimension_m", unit="m",
                                                 minimum=0.0, inclusive_minimum=False)
    return validated_save(Location(code=code, site=site, building=building, room=room, **fields), by=by)


@service_action
@transaction.atomic
def eyewear_update(*, eyewear: Eyewear, by: Person, **changes: Any) -> Eyewear:
    """Correct an item's description or where it is kept (EYEWEAR_EDITABLE_FIELDS)."""
    require_role(by, Role.LSO, action="change an eyewear record")
    lock_for_change(eyewear)
    room_before = eyewear.location_id
    save_changes(eyewear, changes, editable=EYEWEAR_EDITABLE_FIELDS, what="an eyewear item", by=by)
    if eyewear.location_id != room_before:
        room_standings_refresh(locations=[room_before, eyewear.location_id])
    return eyewear


@service_action
@transaction.atomic
def location_update(*, location: Location, by: Person, **changes: Any) -> Location:
    """Correct a room's details (LOCATION_EDITABLE_FIELDS); longest_dimension_m takes units."""
    require_role(by, Role.LSO, action="change a location")
    lock_for_change(location)
    if "longest_dimension_m" in changes:
        changes["longest_dimension_m"] = quantity(changes["longest_dimension_m"], field="longest_dimension_m",
                                                  unit="m", minimum=0.0, inclusive_minimum=False)
    dimension_before = location.longest_dimension_m
    save_changes(location, changes, editable=LOCATION_EDITABLE_FIELDS, what="a location", by=by)
    if location.longest_dimension_m != dimension_before:  # the NOHDs are compared with it
        room_standings_refresh(locations=[location.pk])
    return location
