"""The shape every register viewset shares.

A viewset declares its policy (registry.permissions), its output serializer, the input
serializers that differ from it, and the base queryset; this class scopes that queryset
to the caller, adds the read-only change history, ETags and the rule that nothing is
ever deleted through the API.
"""
from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any, ClassVar

from django.db import transaction
from django.db.models import Model, QuerySet
from drf_spectacular.utils import extend_schema, extend_schema_view
from rest_framework import mixins, serializers, status
from rest_framework.decorators import action
from rest_framework.exceptions import NotAuthenticated
from rest_framework.request import Request
from rest_framework.response import Response
from rest_framework.serializers import BaseSerializer
from rest_framework.viewsets import GenericViewSet

from registry import services
from registry.api.docs import browsable_api_csp
from registry.api.errors import service_errors
from registry.api.etags import ETagMixin, etag_for
from registry.models import Person
from registry.permissions import Policy, RolePolicy, person_of
from registry.serializers.base import HistoryEntrySerializer
from registry.serializers.fields import FreeTextField


@browsable_api_csp
class RegisterViewSet(ETagMixin, mixins.ListModelMixin, mixins.RetrieveModelMixin, GenericViewSet):  # type: ignore[type-arg]
    policy: ClassVar[Policy]
    permission_classes = [RolePolicy]
    input_serializer_classes: ClassVar[dict[str, type[BaseSerializer[Any]]]] = {}
    # Any id reaches get_object(), so a malformed one is the API's JSON 404, not Django's page.
    lookup_value_regex = "[^/]+"
    # Retired records stay in the register; nothing is deleted over HTTP.
    http_method_names = ["get", "post", "put", "patch", "head", "options"]

    def base_queryset(self) -> QuerySet[Any]:
        """The records with their related rows loaded (every row the serializer touches)."""
        raise NotImplementedError

    def get_queryset(self) -> QuerySet[Any]:
        return self.policy.visible(person_of(self.request.user), self.base_queryset())

    def get_serializer_class(self) -> type[BaseSerializer[Any]]:
        if self.action == "retire":
            return RetirementSerializer
        return self.input_serializer_classes.get(self.action, self.serializer_class)

    @property
    def person(self) -> Person:
        """The caller, for actions RolePolicy has let through (it refuses callers without one)."""
        person = person_of(self.request.user)
        if person is None:
            raise NotAuthenticated()
        return person

    def respond_with(self, instance: Model, status_code: int = status.HTTP_200_OK) -> Response:
        """The record as retrieve shows it, with its new ETag."""
        data = self.representation_of(instance)
        response = Response(data, status=status_code)
        response["ETag"] = etag_for(data)
        return response

    @contextmanager
    def workflow_step(self, *, reads_body: bool = True) -> Iterator[tuple[Any, dict[str, Any]]]:
        """For a workflow action: (the record, the validated body), in one transaction.

        The record's row is locked (get_object_for_update) and an If-Match sent with the step
        is checked against it there, so two steps on one record run one after the other and
        the second decides on what the first left: the loser of a race gets 409 or 412.
        Refusals of the service called inside become the API's answers (service_errors).
        """
        with transaction.atomic():
            record = self.get_object_for_update()
            self.check_optional_if_match(record)
            values: dict[str, Any] = {}
            if reads_body:
                serializer = self.get_serializer(data=self.request.data)
                serializer.is_valid(raise_exception=True)
                values = dict(serializer.validated_data)
            with service_errors():
                yield record, values

    @extend_schema(responses=HistoryEntrySerializer(many=True), filters=False,
                   summary="Change history of the record (newest first)")
    @action(detail=True, methods=["get"], filter_backends=[], pagination_class=None)
    def history(self, request: Request, pk: str | None = None) -> Response:
        record = self.get_object()
        entries = list(record.history.select_related("history_user").order_by("-history_date", "-history_id"))
        # Each entry is compared with the one before it; linking them here avoids the
        # query per row that simple-history's prev_record would make.
        for entry, previous in zip(entries, [*entries[1:], None]):
            entry.prev_record_for_diff = previous
        return Response(HistoryEntrySerializer(entries, many=True).data)


class CreateRecordMixin:
    """create() through a service: ``perform_create`` returns the new record."""

    def create(self, request: Request, *args: Any, **kwargs: Any) -> Response:
        serializer = self.get_serializer(data=request.data)  # type: ignore[attr-defined]
        serializer.is_valid(raise_exception=True)
        instance = self.perform_create(serializer)  # type: ignore[attr-defined]
        return self.respond_with(instance, status.HTTP_201_CREATED)  # type: ignore[attr-defined,no-any-return]


class RetirementSerializer(serializers.Serializer):  # type: ignore[type-arg]
    reason = FreeTextField(help_text="Why the record is retired; it stays in the register with its history.")


def retirable(output: type[BaseSerializer[Any]]) -> Any:
    """Class decorator documenting a viewset's retire action (RetireRecordMixin)."""
    return extend_schema_view(retire=extend_schema(
        request=RetirementSerializer, responses={200: output},
        summary="Retire the record (LSO): it stays in the register, marked with when and why"))


class RetireRecordMixin:
    """POST {id}/retire/ for compliance records, which are retired, never deleted."""

    @action(detail=True, methods=["post"])
    def retire(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (record, values):  # type: ignore[attr-defined]
            record = services.record_retire(record=record, by=self.person, reason=values["reason"])  # type: ignore[attr-defined]
        return self.respond_with(record)  # type: ignore[attr-defined,no-any-return]
