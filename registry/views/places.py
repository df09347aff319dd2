"""The rooms: the list with each room's stored standing, and one room with its lasers, eyewear and
adequacy matrix, entry controls, and NOHD against its size."""
from __future__ import annotations

from urllib.parse import urlencode

from django.http import HttpResponse
from django.shortcuts import render
from django.utils import timezone

from registry import permissions, selectors
from registry.models import Location
from registry.views.access import PageRequest, page, visible_or_404

# The rooms list's ?needs= and the heading it gives the page; an unknown value lists every room.
ROOM_LIST_TITLES = {
    "": "Rooms",
    "eyewear": "Rooms whose eyewear is inadequate",
    "nohd": "Rooms where a NOHD exceeds the room",
    "audit": "Rooms due or overdue for audit",
}


@page(permissions.LOCATIONS, "list")
def location_list(request: PageRequest) -> HttpResponse:
    needs = request.GET.get("needs", "")
    needs = needs if needs in selectors.ROOM_NEEDS else ""
    limits = selectors.register_limits()
    return render(request, "pages/locations.html", {
        "rooms": selectors.room_list_page(number=request.GET.get("page"), needs=needs, limits=limits,
                                          today=timezone.localdate()),
        "needs": needs, "query": urlencode({"needs": needs}) if needs else "", "title": ROOM_LIST_TITLES[needs],
        "limits": limits,
    })


@page(permissions.LOCATIONS, "retrieve")
def location_detail(request: PageRequest, pk: int) -> HttpResponse:
    location = visible_or_404(permissions.LOCATIONS, request.person, Location.objects.all(), pk)
    room = selectors.room_hazards(locations=[location])[0]
    rows = [{"emission": emission, "result": selectors.result_under(emission, room.matrix.limits),
             "cells": [(item, room.matrix.cells[(emission.pk, item.pk)]) for item in room.matrix.eyewear]}
            for emission in room.matrix.emissions]
    return render(request, "pages/location.html", {
        "location": location, "room": room, "rows": rows, "limits": room.matrix.limits,
        "signal_word": selectors.signal_word(laser.effective_class for laser in room.lasers),
        "can_print_sign": permissions.LOCATIONS.allows(request.person, "sign"),
        "audit_due": next(iter(selectors.audits_due(within_days=None, locations=[location])), None),
        "audits": selectors.audit_list().filter(location=location, retired_at__isnull=True)
        if permissions.AUDITS.allows(request.person, "report_pdf") else [],
    })
