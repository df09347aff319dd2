"""Where lasers and eyewear are: a room in a building on a site."""
from __future__ import annotations

from django.db import models
from django.utils.translation import gettext_lazy as _
from simple_history.models import HistoricalRecords

from registry.models.base import TimestampedModel


class InterlockKind(models.TextChoices):
    NONE = "none", _("none")
    DOOR_SWITCH = "door_switch", _("door switch cuts the beam")
    KEYPAD = "keypad", _("keypad or card lock")
    DEFEATABLE = "defeatable", _("door switch with authorised override")
    ENCLOSURE = "enclosure", _("interlocked enclosure only")


class Location(TimestampedModel):
    code = models.SlugField(
        _("code"), max_length=40, unique=True,
        help_text=_("Stable room identifier used on signs and in imports, e.g. 'kel-b014'."),
    )
    site = models.CharField(_("site"), max_length=120)
    building = models.CharField(_("building"), max_length=120)
    room = models.CharField(_("room"), max_length=60)
    name = models.CharField(_("name"), max_length=200, blank=True, help_text=_("What the room is used for."))
    is_controlled_area = models.BooleanField(
        _("laser controlled area"), default=False,
        help_text=_("Access is restricted while class 3B or 4 beams may be exposed."),
    )
    interlock = models.CharField(_("entry interlock"), max_length=20, choices=InterlockKind.choices,
                                 default=InterlockKind.NONE)
    has_warning_light = models.BooleanField(_("illuminated warning at the entrance"), default=False)
    sign_posted_on = models.DateField(_("warning sign posted on"), null=True, blank=True)
    longest_dimension_m = models.FloatField(
        _("longest room dimension (m)"), null=True, blank=True,
        help_text=_("In metres; compared with the NOHD to see whether the hazard zone fits inside the room."),
    )

    history = HistoricalRecords()

    class Meta:
        ordering = ["site", "building", "room"]
        verbose_name = _("location")
        verbose_name_plural = _("locations")
        constraints = [
            models.UniqueConstraint(fields=["site", "building", "room"], name="registry_location_unique_room"),
            models.CheckConstraint(
                condition=models.Q(longest_dimension_m__isnull=True) | models.Q(longest_dimension_m__gt=0),
                name="registry_location_dimension_positive",
                violation_error_message=_("The longest room dimension must be greater than 0 m."),
            ),
        ]

    def __str__(self) -> str:
        return f"{self.building} {self.room}" + (f" ({self.name})" if self.name else "")
