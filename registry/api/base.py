"""The shape every register viewset shares.

A viewset declares its policy (registry.permissions), its output serializer, the input
serializers that differ from it, and the base queryset; this class scopes that queryset
to the caller, adds the read-only change history, ETags and the rule that nothing is
ever deleted through the API.
"""
from __future__ import annotations

from typing import Any, ClassVar

from django.db.models import Model, QuerySet
from drf_spectacular.utils import extend_schema
from rest_framework import mixins, status
from rest_framework.decorators import action
from rest_framework.exceptions import NotAuthenticated
from rest_framework.request import Request
from rest_framework.response import Response
from rest_framework.serializers import BaseSerializer
from rest_framework.viewsets import GenericViewSet

from registry.api.etags import ETagMixin, etag_for
from registry.models import Person
from registry.permissions import Policy, RolePolicy, person_of
from registry.serializers.base import HistoryEntrySerializer


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

    def step_input(self) -> tuple[Any, dict[str, Any]]:
        """For a workflow action: the record (If-Match honoured if sent) and the validated body."""
        record = self.get_object()
        self.check_optional_if_match(record)
        serializer = self.get_serializer(data=self.request.data)
        serializer.is_valid(raise_exception=True)
        return record, dict(serializer.validated_data)

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
