"""Reporting an incident: anyone signed in, on a laser they can see."""
from __future__ import annotations

from django.contrib import messages
from django.http import HttpResponse
from django.shortcuts import redirect, render

from registry import permissions, selectors
from registry.forms import IncidentReportForm, submit_to_service
from registry.models import Laser
from registry.services import incident_report
from registry.views.access import PageRequest, page


@page(permissions.INCIDENTS, "create")
def incident_new(request: PageRequest) -> HttpResponse:
    lasers = permissions.visible_lasers(request.person, Laser.objects.order_by("asset_tag"))
    form = IncidentReportForm(request.POST or None, lasers=lasers, initial={"laser": request.GET.get("laser")})
    incident = submit_to_service(form, lambda values: incident_report(
        reference=selectors.next_incident_reference(), reported_by=request.person, location=values["laser"].location,
        **values)) if request.method == "POST" else None
    if incident:
        messages.success(request, f"Incident {incident.reference} is reported.")
        return redirect("laser", pk=incident.laser_id)
    return render(request, "pages/incident_new.html", {"form": form}, status=400 if form.errors else 200)
