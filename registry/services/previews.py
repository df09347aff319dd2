"""What a laser would mean before it is registered: its figures and what it does to its room.

Nothing here writes. The new laser and its emissions are unsaved instances; the engine runs
through registry.services.hazards (as it would on saving), and the room's eyewear is judged
with the same check as the room's adequacy matrix (registry.selectors.eyewear_verdicts and
need_verdicts).
"""
from __future__ import annotations

from dataclasses import dataclass

from django.core.exceptions import ValidationError
from hazards.eyewear import Adequacy

from registry import selectors
from registry.models import Emission, Eyewear, HazardResult, Laser, Location
from registry.services.hazards import emission_preview


@dataclass(frozen=True)
class EmissionPreview:
    """One new emission under the lead limit set: its result, or why it cannot be assessed."""

    emission: Emission
    result: HazardResult | None
    problem: str
    verdicts: dict[int, Adequacy]
    protected: bool
    beyond_room: bool


@dataclass(frozen=True)
class RegistrationPreview:
    laser: Laser
    limits: str
    emissions: list[EmissionPreview]
    location: Location
    eyewear: list[Eyewear]
    # Items adequate for every emission in the room that needs eyewear today, but not for a new one.
    no_longer_adequate: list[Eyewear]
    signal_word_now: str | None
    signal_word_after: str | None


def laser_registration_preview(*, laser: Laser, emissions: list[Emission], limits: str | None = None) -> RegistrationPreview:
    """Assess ``emissions`` (unsaved, each with ``laser`` set) and set them against ``laser.location``.

    The room is read as what its lasers ask of eyewear (``selectors.room_eyewear_needs``, each
    distinct need once) and their classes, not as its whole eyewear matrix: four queries and a
    few dozen verdicts however many lasers the room holds.
    """
    chosen = limits or selectors.register_limits()
    location = laser.location
    assert location is not None
    items = selectors.room_eyewear(location=location)
    bands = selectors.eyewear_bands(items)
    previews: list[EmissionPreview] = []
    for emission in emissions:
        try:
            result = emission_preview(emission, limits=chosen)
        except ValidationError as error:
            previews.append(EmissionPreview(emission, None, "; ".join(error.messages), {}, False, False))
            continue
        verdicts = selectors.eyewear_verdicts(emission, result, items, bands)
        protected = result.od_required == 0 or selectors.protects(verdicts, items)
        previews.append(EmissionPreview(emission, result, "", verdicts, protected,
                                        selectors.nohd_exceeds(result, location)))
    today = [selectors.need_verdicts(need, items, bands)
             for need in selectors.room_eyewear_needs(location=location, limits=chosen)]
    adequate_today = [item for item in items if all(verdicts[item.pk].status == "adequate" for verdicts in today)]
    no_longer = [item for item in adequate_today
                 if any(preview.result is not None and (preview.result.od_required or 0) > 0
                        and preview.verdicts[item.pk].status != "adequate" for preview in previews)]
    classes_now = selectors.room_laser_classes(location=location)
    return RegistrationPreview(
        laser=laser, limits=chosen, emissions=previews, location=location, eyewear=items, no_longer_adequate=no_longer,
        signal_word_now=selectors.signal_word(classes_now),
        signal_word_after=selectors.signal_word([*classes_now, laser.effective_class]))
