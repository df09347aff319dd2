"""The audit checklist a laser's class calls for: which control measures to check, and where.

Each control measure is checked either per laser (its label, SOP, users, key, beam paths) or
per room (eyewear, signs, entry controls), and applies to the classes listed with it. The
class that counts is the laser's effective class (the embedded one inside an enclosure),
since the enclosure is opened for service; a room's items follow the highest class among
the audited lasers in it.

Where each measure comes from is kept beside it and printed with the audit report. The
class 3B/4 measures are those of the control-measure table of ANSI Z136.1 (the 2000-era
table as reproduced in university laser safety manuals: "shall" for class 4, "shall" or
"should" for 3B); labels follow IEC 60825-1. Classes 1 and 1C call for no checks: they are
safe under reasonably foreseeable use (IEC 60825-1), and an enclosed higher-class laser is
checked by its embedded class.
"""
from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from typing import Literal

from hazards.classes import LASER_CLASSES
from registry.models import Laser, Location

ABOVE_CLASS_2 = frozenset({"2", "2M", "3R", "3B", "4"})
HAZARDOUS = frozenset({"3B", "4"})
_CONTROL_MEASURE_TABLE = "ANSI Z136.1, control measures by laser class"


@dataclass(frozen=True)
class Control:
    code: str
    about: Literal["laser", "location"]
    heading: str  # a column heading in the printed report
    question: str
    classes: frozenset[str]
    source: str


CONTROLS: tuple[Control, ...] = (
    Control("signs_posted", "location", "Signs",
            "Warning sign at every entrance, listing the lasers now in the room", ABOVE_CLASS_2,
            f"{_CONTROL_MEASURE_TABLE} (area signs: required for 3B and 4, advised for 2 to 3R)"),
    Control("entry_controls_tested", "location", "Entry controls",
            "Entry interlocks and warning lights tested and working", HAZARDOUS,
            f"{_CONTROL_MEASURE_TABLE} (laser controlled area and emission warning)"),
    Control("eyewear_adequate", "location", "Eyewear",
            "Eyewear for every wavelength in the room, adequate for it and in good condition", HAZARDOUS,
            f"{_CONTROL_MEASURE_TABLE} (protective eyewear); EN 207 for the marking"),
    Control("registered", "laser", "Registered",
            "Registered: class, emissions, owner and room in the register match the laser", HAZARDOUS,
            f"{_CONTROL_MEASURE_TABLE} (registration with the LSO)"),
    Control("labelled", "laser", "Labels",
            "Class label (and aperture label from class 3R up) on the laser and legible",
            frozenset({"1M"}) | ABOVE_CLASS_2, "IEC 60825-1, labelling of laser products"),
    Control("sop_current", "laser", "SOP", "SOP approved and within its review date", HAZARDOUS,
            f"{_CONTROL_MEASURE_TABLE} (written SOP: required for 4, advised for 3B)"),
    Control("users_authorized", "laser", "Users authorized",
            "Every user authorized on this laser, with valid laser safety training", HAZARDOUS,
            f"{_CONTROL_MEASURE_TABLE} (training and authorized users)"),
    Control("users_briefed", "laser", "Users briefed", "Users briefed on the precautions of the laser's class",
            frozenset({"2", "2M", "3R"}), f"{_CONTROL_MEASURE_TABLE} (training: advised for 2 to 3R)"),
    Control("beams_terminated", "laser", "Beams ended", "Beam paths enclosed or ended in a beam stop",
            frozenset({"3R"}) | HAZARDOUS,
            f"{_CONTROL_MEASURE_TABLE} (beam stop: required for 4, advised for 3R and 3B)"),
    Control("key_controlled", "laser", "Key", "Key switch in use, the key kept by an authorized user", HAZARDOUS,
            f"{_CONTROL_MEASURE_TABLE} (key control: required for 4, advised for 3B)"),
)
CONTROLS_BY_CODE = {control.code: control for control in CONTROLS}


@dataclass(frozen=True)
class ChecklistEntry:
    """One item to check: a control measure on one laser or in one room."""

    control: Control
    laser: Laser | None
    location: Location | None

    @property
    def question(self) -> str:
        subject = self.laser.asset_tag if self.laser is not None else str(self.location)
        return f"{subject}: {self.control.question}"


def checklist_for(lasers: Iterable[Laser]) -> list[ChecklistEntry]:
    """The items ``lasers`` call for, room by room: the room's items, then each laser's (by asset tag).

    A laser without a room gets its own items only.
    """
    by_room: dict[int | None, list[Laser]] = {}
    rooms: dict[int, Location] = {}
    for laser in sorted(lasers, key=lambda laser: laser.asset_tag):
        by_room.setdefault(laser.location_id, []).append(laser)
        if laser.location is not None:
            rooms[laser.location.pk] = laser.location
    order = sorted(rooms.values(), key=lambda room: (room.site, room.building, room.room))
    entries: list[ChecklistEntry] = []
    for room in [*order, None]:
        room_lasers = by_room.get(room.pk if room is not None else None, [])
        if not room_lasers:
            continue
        if room is not None:
            highest = max((laser.effective_class for laser in room_lasers), key=LASER_CLASSES.index)
            entries += [ChecklistEntry(control, None, room) for control in CONTROLS
                        if control.about == "location" and highest in control.classes]
        for laser in room_lasers:
            entries += [ChecklistEntry(control, laser, None) for control in CONTROLS
                        if control.about == "laser" and laser.effective_class in control.classes]
    return entries
