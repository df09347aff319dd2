"""The register, its CSV and XLSX, one laser (figures, working, charts, history) and registering a laser."""
from __future__ import annotations

from typing import Any

from django.contrib import messages
from django.core.exceptions import ValidationError
from django.db import transaction
from django.http import HttpRequest, HttpResponse, QueryDict
from django.shortcuts import get_object_or_404, redirect, render

from hazards.limits import LIMIT_SETS
from registry import permissions, selectors
from registry.charts import eye_mpe_chart, hazard_distance_chart
from registry.exports import XLSX_CONTENT_TYPE, register_dataset, register_xlsx
from registry.filters import LaserFilter
from registry.forms import EmissionFormSet, LaserRegistrationForm, add_service_errors
from registry.models import Emission, Laser, LaserClass, LaserStatus, Location
from registry.pagination import KeysFirstPaginator
from registry.services import laser_register, laser_submit
from registry.services.previews import laser_registration_preview
from registry.templatetags.hazard_figures import figure_rows, readable_working, unchecked_rows
from registry.views.access import PageRequest, page, require, visible_or_404

REGISTER_PAGE_SIZE = 50


def _chosen_limits(request: HttpRequest) -> str:
    """The limit set the page leads with: ?limits= when it names one, else the register's."""
    asked = request.GET.get("limits", "")
    return asked if asked in LIMIT_SETS else selectors.register_limits()


def _filtered(request: PageRequest, limits: str, *, page_rows: bool = False) -> tuple[LaserFilter, Any]:
    """The register filtered with the API's own filter set, within what the person may see."""
    ordering = request.GET.get("ordering", "asset_tag")
    lasers = permissions.LASERS.visible(request.person, selectors.laser_register(limits=limits, ordering=ordering,
                                                                                 page_rows=page_rows))
    filters = LaserFilter(request.GET, queryset=lasers)
    chosen = filters.qs if filters.is_valid() else lasers.none()
    return filters, chosen.order_by(*selectors.register_ordering(ordering))


@page(permissions.LASERS, "list")
def register(request: PageRequest) -> HttpResponse:
    limits = _chosen_limits(request)
    filters, lasers = _filtered(request, limits, page_rows=True)
    listing = KeysFirstPaginator(lasers, REGISTER_PAGE_SIZE).get_page(request.GET.get("page"))
    query = request.GET.copy()
    query.pop("page", None)
    rooms = list(Location.objects.order_by("building", "room"))
    return render(request, "pages/register.html", {
        "filters": filters, "listing": listing, "limits": limits, "query": query.urlencode(),
        "ordering": request.GET.get("ordering", "asset_tag"), "sort_query": _without(query, "ordering"),
        "classes": LaserClass.choices, "statuses": LaserStatus.choices,
        "rooms": rooms, "buildings": sorted({room.building for room in rooms}),
        "owners": selectors.laser_owners(),
        "selected": {name: request.GET.getlist(name) for name in ("labelled_class", "status")},
        "can_import": permissions.LASERS.allows(request.person, "import"),
    })


def _without(query: QueryDict, name: str) -> str:
    copy = query.copy()
    copy.pop(name, None)
    return copy.urlencode()


def _download(content: str | bytes, content_type: str, filename: str) -> HttpResponse:
    response = HttpResponse(content, content_type=content_type)
    response["Content-Disposition"] = f'attachment; filename="{filename}"'
    return response


@page(permissions.LASERS, "list")
def register_csv(request: PageRequest) -> HttpResponse:
    limits = _chosen_limits(request)
    _, lasers = _filtered(request, limits)
    return _download(register_dataset(lasers, limits=limits).export("csv"), "text/csv", "laser-register.csv")


@page(permissions.LASERS, "list")
def register_xlsx_export(request: PageRequest) -> HttpResponse:
    limits = _chosen_limits(request)
    _, lasers = _filtered(request, limits)
    return _download(register_xlsx(register_dataset(lasers, limits=limits)), XLSX_CONTENT_TYPE,
                     "laser-register.xlsx")


@page(permissions.LASERS, "retrieve")
def laser_detail(request: PageRequest, pk: int) -> HttpResponse:
    person = request.person
    laser = visible_or_404(permissions.LASERS, person, selectors.laser_list(with_working=True), pk)
    limits = _chosen_limits(request)
    other = next(name for name in LIMIT_SETS if name != limits)
    emissions = [{
        "emission": emission,
        "shown": (shown := selectors.result_under(emission, limits)),
        "rows": figure_rows(shown, selectors.result_under(emission, other)),
        "working": readable_working(shown.working) if shown else [],
        "unchecked": unchecked_rows(shown.working) if shown else [],
    } for emission in laser.current_emissions]
    return render(request, "pages/laser.html", {
        "laser": laser, "emissions": emissions, "limits": limits, "other": other, "limit_sets": LIMIT_SETS,
        "history": selectors.laser_history(laser=laser),
        "authorizations": permissions.AUTHORIZATIONS.visible(person, selectors.authorization_list()).filter(
            laser=laser, retired_at__isnull=True),
        "can_resubmit": laser.status == LaserStatus.RETURNED and permissions.LASERS.allows(person, "submit", laser),
        "can_review": laser.status == LaserStatus.PENDING_REVIEW and permissions.LASERS.allows(person, "approve"),
        "can_report": permissions.INCIDENTS.allows(person, "create"),
        "can_print_label": permissions.LASERS.allows(person, "label", laser),
        # The back office edits what the API's policy lets this person edit, for staff accounts.
        "back_office": request.user.is_staff and permissions.LASERS.allows(person, "update", laser),
    })


@page(permissions.LASERS, "submit")
def laser_resubmit(request: PageRequest, pk: int) -> HttpResponse:
    laser = visible_or_404(permissions.LASERS, request.person, Laser.objects.all(), pk)
    require(permissions.LASERS, "submit", request.person, laser)
    if request.method == "POST":
        try:
            laser_submit(laser=laser, by=request.person, note=request.POST.get("note", ""))
            messages.success(request, f"{laser.asset_tag} is back in the review queue.")
        except ValidationError as error:
            messages.error(request, " ".join(error.messages))
    return redirect("laser", pk=laser.pk)


def _emission_for_chart(request: PageRequest, pk: int, emission_pk: int) -> Emission:
    laser = visible_or_404(permissions.LASERS, request.person, selectors.laser_list(), pk)
    return get_object_or_404(selectors.emission_list().select_related("laser__location"), pk=emission_pk,
                             laser=laser)


def _svg(content: bytes) -> HttpResponse:
    return HttpResponse(content, content_type="image/svg+xml")


@page(permissions.LASERS, "retrieve")
def mpe_chart(request: PageRequest, pk: int, emission_pk: int) -> HttpResponse:
    emission = _emission_for_chart(request, pk, emission_pk)
    limits = _chosen_limits(request)
    result = selectors.result_under(emission, limits)
    if result is None:
        return HttpResponse("No hazard result for this emission: not computed.", status=404, content_type="text/plain")
    return _svg(eye_mpe_chart(wavelength_m=emission.wavelength_m, source_size_rad=emission.source_size_rad,
                              basis_s=result.exposure_s, chosen=limits))


@page(permissions.LASERS, "retrieve")
def distance_chart(request: PageRequest, pk: int, emission_pk: int) -> HttpResponse:
    emission = _emission_for_chart(request, pk, emission_pk)
    result = selectors.result_under(emission, _chosen_limits(request))
    if result is None:
        return HttpResponse("No hazard result for this emission: not computed.", status=404, content_type="text/plain")
    room = emission.laser.location
    return _svg(hazard_distance_chart(beam_diameter_m=emission.beam_diameter_m, divergence_rad=emission.divergence_rad,
                                      nohd_m=result.nohd_m, nohd_unbounded=result.nohd_unbounded,
                                      room_m=room.longest_dimension_m if room else None))


@page(permissions.LASERS, "create")
def laser_new(request: PageRequest) -> HttpResponse:
    """Register a laser: fill in, preview (nothing saved), submit (sent to the review queue)."""
    person = request.person
    proposed = selectors.next_asset_tag()
    data = request.POST.copy() if request.method == "POST" else None
    if data is not None and "add_emission" in data:
        # Without scripts: one more emission form, everything typed so far kept.
        data["emissions-TOTAL_FORMS"] = str(int(data.get("emissions-TOTAL_FORMS", "1")) + 1)
    form = LaserRegistrationForm(data, person=person, proposed_tag=proposed)
    emissions = EmissionFormSet(data, prefix="emissions")
    preview = None
    if data is not None and "add_emission" not in data and form.is_valid() and emissions.is_valid():
        fields = {name: value for name, value in form.cleaned_data.items() if name != "asset_tag"}
        asset_tag = form.cleaned_data["asset_tag"]
        if "submit" in data:
            try:
                with transaction.atomic():
                    laser = laser_register(by=person, asset_tag=asset_tag,
                                           emissions=[_emission_fields(entry.cleaned_data) for entry in emissions],
                                           **fields)
            except ValidationError as error:
                add_service_errors(form, error)
            else:
                messages.success(request, f"{laser.asset_tag} is registered and waits in the LSO's review queue.")
                return redirect("laser", pk=laser.pk)
        else:
            laser = Laser(asset_tag=asset_tag, status=LaserStatus.PENDING_REVIEW,
                          **{**fields, "owner": fields.get("owner") or person})
            preview = laser_registration_preview(
                laser=laser, emissions=[Emission(laser=laser, **_emission_fields(entry.cleaned_data))
                                        for entry in emissions])
    return render(request, "pages/laser_new.html", {"form": form, "emissions": emissions, "preview": preview})


def _emission_fields(cleaned: dict[str, Any]) -> dict[str, Any]:
    return {name: value for name, value in cleaned.items() if name != "DELETE"}
