"""A room's hazard standing, stored: what its lasers mean for the room, kept current on every change."""
from __future__ import annotations

from django.db import models
from django.utils.translation import gettext_lazy as _

from registry.models.location import Location

# How many of a room's emissions a standing names (the most urgent first); the counts cover them all.
STANDING_FIRST_EMISSIONS = 5


class RoomStanding(models.Model):
    """The facts the homes and the rooms list show about a room under one limit set.

    Derived data, like a hazard result: ``services.standings.room_standings_refresh`` writes it
    from the room's lasers in the register's care, their stored results and the eyewear kept
    there, in the same transaction as every change to any of them, so it is never older than
    what it is made from; it has no history of its own. ``unprotected`` counts the emissions
    that need eyewear (OD above 0) and have no adequate item in usable condition in the room,
    ``beyond_room`` those whose NOHD exceeds the room's longest dimension; the ``*_first``
    lists hold the ids of the first STANDING_FIRST_EMISSIONS of each (highest OD, longest NOHD
    first). ``largest_nohd_m`` is null without ``largest_nohd_unbounded`` when no emission in
    the room has a NOHD.
    """

    location = models.ForeignKey(Location, on_delete=models.CASCADE, related_name="standings",
                                 verbose_name=_("location"))
    limits = models.CharField(_("limit set"), max_length=40)
    lasers = models.PositiveIntegerField(_("lasers in the register's care"))
    largest_nohd_m = models.FloatField(_("largest NOHD (m)"), null=True, blank=True)
    largest_nohd_unbounded = models.BooleanField(_("largest NOHD unbounded"), default=False)
    unprotected = models.PositiveIntegerField(_("emissions without adequate eyewear"))
    unprotected_od_max = models.FloatField(_("highest OD required without adequate eyewear"), null=True, blank=True)
    unprotected_first = models.JSONField(_("first emissions without adequate eyewear"), default=list, blank=True)
    beyond_room = models.PositiveIntegerField(_("emissions whose NOHD exceeds the room"))
    beyond_room_first = models.JSONField(_("first emissions whose NOHD exceeds the room"), default=list, blank=True)
    computed_at = models.DateTimeField(_("computed at"))

    class Meta:
        ordering = ["location", "limits"]
        verbose_name = _("room standing")
        verbose_name_plural = _("room standings")
        constraints = [
            models.UniqueConstraint(fields=["location", "limits"], name="registry_roomstanding_one_per_limit_set"),
            models.CheckConstraint(
                condition=~models.Q(largest_nohd_unbounded=True) | models.Q(largest_nohd_m__isnull=True),
                name="registry_roomstanding_unbounded_has_no_nohd",
                violation_error_message=_("An unbounded NOHD has no value in metres."),
            ),
        ]

    def __str__(self) -> str:
        return f"{self.location} ({self.limits})"
