"""No lost updates: representations carry an ETag, and updates must send it back.

The ETag is a hash of the JSON representation the caller was given, so any change a
client could see (the record, its emissions, its hazard results) changes it. An update,
like a workflow step, locks the row (registry.services lock_for_decision, the services'
own lock, so rows are always locked in the same order), recomputes the tag from the
current state and compares it with If-Match before the service writes anything; two
people editing the same record from the same copy therefore cannot overwrite each other:
the second gets 412.
"""
from __future__ import annotations

import hashlib
import json
from typing import Any

from django.db import transaction
from django.db.models import Model
from django.utils.http import parse_etags
from rest_framework import status
from rest_framework.generics import get_object_or_404
from rest_framework.exceptions import APIException, ValidationError
from rest_framework.request import Request
from rest_framework.response import Response
from rest_framework.serializers import BaseSerializer, Serializer
from rest_framework.utils.encoders import JSONEncoder

from registry.api.errors import service_errors
from registry.services import lock_for_decision


class PreconditionFailed(APIException):
    status_code = status.HTTP_412_PRECONDITION_FAILED
    default_detail = ("The record changed since you read it (If-Match does not match its ETag). "
                      "Nothing was saved; read it again and reapply your change.")
    default_code = "precondition_failed"


class PreconditionRequired(APIException):
    status_code = status.HTTP_428_PRECONDITION_REQUIRED
    default_detail = ("Updates must send If-Match with the ETag of the representation they modify "
                      "(read the record first).")
    default_code = "precondition_required"


def etag_for(representation: Any) -> str:
    encoded = json.dumps(representation, cls=JSONEncoder, sort_keys=True, separators=(",", ":"))
    return '"' + hashlib.sha256(encoded.encode()).hexdigest()[:32] + '"'


def check_if_match(request: Request, current_etag: str, *, required: bool) -> None:
    header = request.headers.get("If-Match")
    if header is None:
        if required:
            raise PreconditionRequired()
        return
    tags = parse_etags(header)
    if "*" in tags:
        return
    # RFC 9110 13.1.1: If-Match uses the strong comparison, so weak tags never match.
    if current_etag not in tags:
        raise PreconditionFailed()


class ETagMixin:
    """For register viewsets: an ETag on every retrieve answer, and the helpers updates use.

    Workflow actions (RegisterViewSet.workflow_step) call ``check_optional_if_match`` on the
    locked record: an If-Match sent with a step is honoured, but not required (the service
    refuses illegal steps).
    """

    def retrieve(self, request: Request, *args: Any, **kwargs: Any) -> Response:
        response: Response = super().retrieve(request, *args, **kwargs)  # type: ignore[misc]
        response["ETag"] = etag_for(response.data)
        return response

    def get_object_for_update(self) -> Model:
        """The object as get_object() finds it, its row locked until the transaction ends.

        Locked by the services' lock_for_decision: the laser's row first for a record that
        belongs to a laser, as every service does, and refused (409) when it is read-only.
        SQLite takes no row locks; its writers wait for each other's transactions
        (``transaction_mode`` IMMEDIATE in the settings). List filters are not applied: they
        describe lists.
        """
        lookup_url_kwarg = self.lookup_url_kwarg or self.lookup_field  # type: ignore[attr-defined]
        instance = get_object_or_404(self.get_queryset(),  # type: ignore[attr-defined]
                                     **{self.lookup_field: self.kwargs[lookup_url_kwarg]})  # type: ignore[attr-defined]
        self.check_object_permissions(self.request, instance)  # type: ignore[attr-defined]
        with service_errors():
            return lock_for_decision(instance)

    def etag_of(self, instance: Model) -> str:
        return etag_for(self.representation_of(instance))

    def representation_of(self, instance: Model) -> Any:
        """What retrieve answers for ``instance``, re-read with the detail query.

        ``serializer_class`` is the output shape; writes may validate with another one.
        """
        fresh = self.get_queryset().get(pk=instance.pk)  # type: ignore[attr-defined]
        serializer = self.serializer_class(fresh, context=self.get_serializer_context())  # type: ignore[attr-defined]
        return serializer.data

    def check_optional_if_match(self, instance: Model) -> None:
        if "If-Match" in self.request.headers:  # type: ignore[attr-defined]
            check_if_match(self.request, self.etag_of(instance), required=False)  # type: ignore[attr-defined]


def refuse_unwritable_fields(serializer: BaseSerializer[Any], data: Any) -> None:
    """400 naming every field of ``data`` the update cannot set.

    DRF drops read-only and unknown keys without a word, so a client sending ``status``
    in a PATCH would believe it had changed the status; it is told instead. A read-only
    field sent with the value it already has is let through, so that a client may send
    back the representation it read with its own changes made.
    """
    if not isinstance(serializer, Serializer) or not hasattr(data, "keys"):
        return
    fields = serializer.fields
    current: dict[str, Any] | None = None
    errors: dict[str, list[str]] = {}
    for name in data.keys():
        field = fields.get(name)
        if field is None:
            errors[name] = ["This is not a field of this record."]
        elif field.read_only:
            if current is None:
                current = dict(serializer.to_representation(serializer.instance))
            if data[name] != current.get(name):
                errors[name] = ["This field is read-only: an update cannot change it (a status changes through "
                                "the record's workflow actions)."]
    if errors:
        raise ValidationError(errors)


class UpdateWithETagMixin:
    """PUT and PATCH that require If-Match and check it against the locked, current record,
    and refuse fields the update cannot set (read-only or unknown) instead of ignoring them."""

    def update(self, request: Request, *args: Any, **kwargs: Any) -> Response:
        partial = kwargs.pop("partial", False)
        with transaction.atomic():
            instance = self.get_object_for_update()  # type: ignore[attr-defined]
            check_if_match(request, self.etag_of(instance), required=True)  # type: ignore[attr-defined]
            serializer = self.get_serializer(instance, data=request.data, partial=partial)  # type: ignore[attr-defined]
            refuse_unwritable_fields(serializer, request.data)
            serializer.is_valid(raise_exception=True)
            # perform_update() calls the service and returns the saved record.
            updated = self.perform_update(serializer)  # type: ignore[attr-defined]
        data = self.representation_of(updated)  # type: ignore[attr-defined]
        response = Response(data)
        response["ETag"] = etag_for(data)
        return response

    def partial_update(self, request: Request, *args: Any, **kwargs: Any) -> Response:
        kwargs["partial"] = True
        return self.update(request, *args, **kwargs)
