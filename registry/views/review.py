"""The LSO's review queue: each pending laser with its figures and warnings; approve or return."""
from __future__ import annotations

from django.contrib import messages
from django.core.exceptions import ValidationError
from django.http import HttpResponse
from django.shortcuts import redirect, render
from django.views.decorators.http import require_POST

from registry import permissions, selectors
from registry.forms import ReviewForm
from registry.models import Laser, LaserStatus
from registry.pagination import KeysFirstPaginator
from registry.services import laser_approve, laser_return
from registry.templatetags.hazard_figures import unchecked_rows
from registry.views.access import PageRequest, page, visible_or_404


# Each entry carries its emissions' figures, warnings and a decision form: a page of twenty reads
# (and loads) in reasonable time however many registrations wait.
REVIEW_PAGE_SIZE = 20


@page(permissions.LASERS, "approve")
def review_queue(request: PageRequest) -> HttpResponse:
    """The registrations waiting for review, the longest waiting first, a page at a time."""
    limits = selectors.register_limits()
    pending = selectors.laser_list(with_working=True).filter(status=LaserStatus.PENDING_REVIEW).order_by("created_at")
    listing = KeysFirstPaginator(pending, REVIEW_PAGE_SIZE).get_page(request.GET.get("page"))
    entries = [{
        "laser": laser,
        "emissions": [{"emission": emission, "result": (result := selectors.result_under(emission, limits)),
                       "unchecked": unchecked_rows(result.working) if result else []}
                      for emission in laser.current_emissions],
        "form": ReviewForm(prefix=f"laser-{laser.pk}"),
    } for laser in listing]
    return render(request, "pages/review.html", {"entries": entries, "listing": listing, "limits": limits})


@require_POST
@page(permissions.LASERS, "approve")
def review_decide(request: PageRequest, pk: int) -> HttpResponse:
    """Approve or return one registration; a refusal by the service is shown at the top of the queue."""
    laser = visible_or_404(permissions.LASERS, request.person, Laser.objects.all(), pk)
    form = ReviewForm(request.POST, prefix=f"laser-{laser.pk}")
    form.is_valid()
    comments = form.cleaned_data.get("comments", "")
    try:
        if "return" in request.POST:
            laser_return(laser=laser, by=request.person, comments=comments)
            messages.success(request, f"{laser.asset_tag} was returned to its owner with your comments.")
        else:
            laser_approve(laser=laser, by=request.person, note=comments)
            messages.success(request, f"{laser.asset_tag} is approved and active.")
    except ValidationError as error:
        messages.error(request, f"{laser.asset_tag} was not changed: {' '.join(error.messages)}")
    return redirect("review")
