"""People: the list, one person (training, authorizations and the steps on them), adding a person."""
from __future__ import annotations

from django.contrib import messages
from django.core.exceptions import ValidationError
from django.http import HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.utils import timezone
from django.views.decorators.http import require_POST

from registry import permissions, selectors
from registry.forms import (
    AuthorizationDecisionForm,
    AuthorizationRequestForm,
    PersonCreateForm,
    TrainingRecordForm,
    submit_to_service,
)
from registry.models import Authorization, AuthorizationStatus
from registry.services import (
    authorization_approve,
    authorization_refuse,
    authorization_request,
    person_create,
    training_record,
)
from registry.views.access import PageRequest, page, require, visible_or_404


@page(permissions.PEOPLE, "list")
def people_list(request: PageRequest) -> HttpResponse:
    people = list(permissions.PEOPLE.visible(request.person, selectors.person_list()))
    standings = selectors.training_standings(people=people)
    return render(request, "pages/people.html", {
        "people": [(person, standings[person.pk]) for person in people],
        "can_add": permissions.PEOPLE.allows(request.person, "create"),
    })


def _person_page(request: PageRequest, pk: int, *, training_form: TrainingRecordForm | None = None,
                 request_form: AuthorizationRequestForm | None = None, status: int = 200) -> HttpResponse:
    viewer = request.person
    person = visible_or_404(permissions.PEOPLE, viewer, selectors.person_list(), pk)
    authorizations = list(permissions.AUTHORIZATIONS.visible(viewer, selectors.authorization_list())
                          .filter(person=person).order_by("-requested_at"))
    may_decide = permissions.AUTHORIZATIONS.allows(viewer, "approve")
    pending = [{"authorization": item, "missing": selectors.authorization_missing_prerequisites(
                    person=person, laser=item.laser), "form": AuthorizationDecisionForm(prefix=f"decide-{item.pk}")}
               for item in authorizations if item.status == AuthorizationStatus.REQUESTED and may_decide]
    may_request = (permissions.AUTHORIZATIONS.allows(viewer, "create")
                   and permissions.requestable_people(viewer, selectors.person_list()).filter(pk=person.pk).exists())
    return render(request, "pages/person.html", {
        "person": person,
        "standing": selectors.training_standings(people=[person])[person.pk],
        "training": permissions.TRAINING_RECORDS.visible(viewer, selectors.training_list()).filter(person=person),
        "authorizations": authorizations, "pending": pending, "today": timezone.localdate(),
        "training_form": training_form or (TrainingRecordForm(prefix="training")
                                           if permissions.TRAINING_RECORDS.allows(viewer, "create") else None),
        "request_form": request_form or (AuthorizationRequestForm(prefix="request") if may_request else None),
    }, status=status)


@page(permissions.PEOPLE, "retrieve")
def person_detail(request: PageRequest, pk: int) -> HttpResponse:
    return _person_page(request, pk)


@require_POST
@page(permissions.TRAINING_RECORDS, "create")
def person_training(request: PageRequest, pk: int) -> HttpResponse:
    person = visible_or_404(permissions.PEOPLE, request.person, selectors.person_list(), pk)
    form = TrainingRecordForm(request.POST, prefix="training")
    if submit_to_service(form, lambda values: training_record(
            person=person, by=request.person, verified_by=request.person, **values)):
        messages.success(request, f"Training recorded for {person}.")
        return redirect("person", pk=person.pk)
    return _person_page(request, pk, training_form=form, status=400)


@require_POST
@page(permissions.AUTHORIZATIONS, "create")
def person_request_authorization(request: PageRequest, pk: int) -> HttpResponse:
    person = visible_or_404(permissions.PEOPLE, request.person, selectors.person_list(), pk)
    # A researcher requests for the people of their group only (as over the API).
    get_object_or_404(permissions.requestable_people(request.person, selectors.person_list()), pk=person.pk)
    form = AuthorizationRequestForm(request.POST, prefix="request")
    if submit_to_service(form, lambda values: authorization_request(person=person, by=request.person, **values)):
        messages.success(request, f"Authorization requested for {person} on {form.cleaned_data['laser'].asset_tag}.")
        return redirect("person", pk=person.pk)
    return _person_page(request, pk, request_form=form, status=400)


@require_POST
@page(permissions.AUTHORIZATIONS, "approve")
def authorization_decide(request: PageRequest, pk: int) -> HttpResponse:
    """Approve or refuse a request; missing prerequisites or a missing reason come back as a message."""
    authorization = visible_or_404(permissions.AUTHORIZATIONS, request.person, Authorization.objects.all(), pk)
    refusing = "refuse" in request.POST
    require(permissions.AUTHORIZATIONS, "refuse" if refusing else "approve", request.person, authorization)
    form = AuthorizationDecisionForm(request.POST, prefix=f"decide-{authorization.pk}")
    form.is_valid()
    values = form.cleaned_data
    try:
        if refusing:
            authorization_refuse(authorization=authorization, by=request.person, reason=values.get("reason", ""))
            messages.success(request, "The request was refused.")
        else:
            authorization_approve(authorization=authorization, by=request.person,
                                  valid_until=values.get("valid_until"), reason=values.get("reason", ""))
            messages.success(request, "The authorization is approved.")
    except ValidationError as error:
        messages.error(request, f"Nothing was changed: {' '.join(error.messages)}")
    return redirect("person", pk=authorization.person_id)


@page(permissions.PEOPLE, "create")
def person_new(request: PageRequest) -> HttpResponse:
    form = PersonCreateForm(request.POST or None)
    person = submit_to_service(form, lambda values: person_create(by=request.person, **values)) \
        if request.method == "POST" else None
    if person:
        messages.success(request, f"{person} was added as {person.get_role_display()}.")
        return redirect("person", pk=person.pk)
    return render(request, "pages/person_new.html", {"form": form}, status=400 if form.errors else 200)
