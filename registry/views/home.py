"""The home page of each role: what needs the LSO's attention, a researcher's lasers and group,
a laser user's authorizations and protection, an inspector's way into the register."""
from __future__ import annotations

from django.http import HttpResponse
from django.shortcuts import render
from django.utils import timezone

from registry import selectors
from registry.models import RETIRED_STATUSES, Role
from registry.views.access import PageRequest, page


@page()
def home(request: PageRequest) -> HttpResponse:
    person, today = request.person, timezone.localdate()
    limits = selectors.register_limits()
    if person.role == Role.LSO:
        return render(request, "pages/home_lso.html", {
            "attention": selectors.lso_attention(today=today, limits=limits), "limits": limits, "today": today})
    if person.role == Role.RESEARCHER:
        return render(request, "pages/home_researcher.html", {
            "lasers": selectors.laser_list().filter(owner=person).exclude(status__in=RETIRED_STATUSES),
            "members": selectors.group_members(researcher=person, on=today), "limits": limits, "today": today})
    if person.role == Role.USER:
        return render(request, "pages/home_user.html", {
            "authorized": selectors.authorized_lasers(person=person, on=today),
            "authorizations": selectors.authorization_list().filter(person=person, retired_at__isnull=True),
            "training": selectors.training_list().filter(person=person, retired_at__isnull=True),
            "standing": selectors.training_standings(people=[person], on=today)[person.pk],
            "limits": limits, "today": today})
    return render(request, "pages/home_inspector.html", {
        "rooms": selectors.room_list_page(number=1, limits=limits, today=today, per_page=selectors.HOME_ROOMS),
        "audits": selectors.audit_list(),
        "limits": limits})
