"""How refusals from the services reach API clients.

Services raise Django's ValidationError keyed by the field at fault (so the admin and
forms can show it beside the field). DRF leaves those alone, which would make them
500s; here they become 400 with the same field keys, and the workflow refusals (an
illegal status change, a missing prerequisite, a change the record's state forbids) become 409, since the request was well
formed but the record's state does not allow it.
"""
from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

from django.core.exceptions import RequestDataTooBig, TooManyFieldsSent, TooManyFilesSent
from django.core.exceptions import ValidationError as DjangoValidationError
from django.db import IntegrityError
from rest_framework import status
from rest_framework.exceptions import APIException, ValidationError
from rest_framework.response import Response
from rest_framework.serializers import BaseSerializer, Serializer
from rest_framework.views import exception_handler

from registry.services.errors import PrerequisiteError, StateError, TransitionError

# Refusals of a well-formed request because of the record's state: 409, not 400.
_STATE_REFUSALS = (TransitionError, PrerequisiteError, StateError)

# Django's refusals of a form or multipart body beyond its bounds (DATA_UPLOAD_MAX_*). DRF
# leaves them to Django, whose answer is an HTML page (with DEBUG on, its error page).
_OVERSIZED_BODY = (RequestDataTooBig, TooManyFieldsSent, TooManyFilesSent)


def api_exception_handler(error: Exception, context: dict[str, Any]) -> Response | None:
    if isinstance(error, DjangoValidationError):
        messages = _messages(error)
        body = ValidationError(messages if isinstance(messages, dict) else {"non_field_errors": messages}).detail
        refused_by_state = isinstance(error, _STATE_REFUSALS)
        return Response(body, status=status.HTTP_409_CONFLICT if refused_by_state else status.HTTP_400_BAD_REQUEST)
    if isinstance(error, _OVERSIZED_BODY):
        return Response({"detail": str(error)}, status=status.HTTP_400_BAD_REQUEST)
    if isinstance(error, IntegrityError):
        # full_clean() runs every constraint first; this is the rare race between two writers.
        return Response({"detail": "The change conflicts with another record saved at the same time; try again."},
                        status=status.HTTP_409_CONFLICT)
    response = exception_handler(error, context)
    if response is not None and isinstance(response.data, list):
        # Errors that belong to no field (DRF raises some, e.g. a null character in ?search=)
        # still answer an object, as the schema documents.
        response.data = {"non_field_errors": response.data}
    return response


def _messages(error: DjangoValidationError) -> dict[str, list[str]] | list[str]:
    if hasattr(error, "error_dict"):
        # "__all__" is Django's key for errors that belong to no single field.
        return {("non_field_errors" if name == "__all__" else name): messages
                for name, messages in error.message_dict.items()}
    return list(error.messages)


class Conflict(APIException):
    status_code = status.HTTP_409_CONFLICT
    default_detail = "The record's current state does not allow this."
    default_code = "conflict"


@contextmanager
def service_errors(serializer: BaseSerializer[Any] | None = None) -> Iterator[None]:
    """Turn a service's refusal into the API's answer, keyed by the API's field names.

    Services name model fields ("wavelength_m"); the client sent API fields
    ("wavelength"), so each key is translated through the serializer's sources.
    """
    try:
        yield
    except DjangoValidationError as error:
        body = _messages(error)
        if isinstance(serializer, Serializer) and isinstance(body, dict):
            names = {field.source: name for name, field in serializer.fields.items()
                     if not field.read_only and field.source != "*"}
            body = {names.get(key, key): messages for key, messages in body.items()}
        if isinstance(error, _STATE_REFUSALS):
            raise Conflict(body) from None
        raise ValidationError(body) from None
