"""OpenAPI additions: how quantity fields are described, If-Match, and the error answers.

drf-spectacular documents the success answers it can see in the code; the errors DRF
produces on its own (validation, authentication, permission, not found) and the ones the
API adds (stale or missing If-Match) are added here so that clients, and schemathesis, can
rely on every status the API really sends being in the schema.
"""
from __future__ import annotations

from typing import Any

from drf_spectacular.extensions import OpenApiSerializerFieldExtension
from drf_spectacular.openapi import AutoSchema
from drf_spectacular.plumbing import build_basic_type
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, OpenApiResponse

from registry.serializers.fields import QUANTITY_TEXT_PATTERN, QuantityField

ERROR_COMPONENT = "ErrorResponse"

_ERROR_SCHEMA: dict[str, Any] = {
    "type": "object",
    "description": (
        "Either {\"detail\": message} or, for invalid input, an object whose keys are the "
        "offending fields (JSON keys, query parameters or 'non_field_errors') and whose values "
        "are lists of messages saying what was expected."
    ),
    "properties": {"detail": {"type": "string"}},
    "additionalProperties": True,
}

_DESCRIPTIONS = {
    "400": "Invalid input: the body names each offending field and what was expected.",
    "401": "Not signed in (session or 'Authorization: Token <key>').",
    "403": "Signed in, but this role may not do this to this record.",
    "404": "No such record, or not visible to the caller (for a list: no such page).",
    "409": "The record's current state does not allow this step.",
    "412": "If-Match does not match the record's current ETag: it changed since it was read. Nothing was saved.",
    "415": "The body's Content-Type is not one this operation accepts, or the body cannot be read as one.",
    "428": "The update did not send If-Match with the ETag of the representation it modifies.",
    "429": "Too many attempts; retry after the number of seconds in Retry-After.",
}

_METHODS = ("get", "post", "put", "patch", "delete")


def error_response(status: str) -> OpenApiResponse:
    """An error answer to declare on a view, for statuses the hook cannot infer (429)."""
    return OpenApiResponse(response=OpenApiTypes.OBJECT, description=_DESCRIPTIONS[status])


class QuantityFieldExtension(OpenApiSerializerFieldExtension):
    """Requests take a number in the unit or a string with units; responses give the number."""

    target_class = QuantityField
    match_subclasses = True

    def map_serializer_field(self, auto_schema: Any, direction: str) -> dict[str, Any]:
        field: QuantityField = self.target
        number: dict[str, Any] = build_basic_type(OpenApiTypes.DOUBLE)
        if direction == "request":
            if field.minimum is not None:
                number["minimum"] = field.minimum
                if not field.inclusive_minimum:
                    number["exclusiveMinimum"] = True
            if field.maximum is not None:
                number["maximum"] = field.maximum
            text = {"type": "string", "pattern": QUANTITY_TEXT_PATTERN,
                    "example": field.example or f"1 {field.unit}"}
            schema: dict[str, Any] = {"oneOf": [number, text]}
        else:
            schema = number
        schema["x-unit"] = field.unit
        if not field.help_text:
            schema["description"] = f"In {field.unit}; input also accepts a string with units."
        return schema


class RegisterAutoSchema(AutoSchema):
    """drf-spectacular's operations, with the If-Match header the ETag code reads.

    PUT and PATCH (UpdateWithETagMixin.update) require it: 428 without it. Every workflow
    step, the POST actions on one record (RegisterViewSet.workflow_step), checks it when it is
    sent. Either way a stale one is a 412; add_error_responses documents both from here.
    """

    def get_override_parameters(self) -> list[Any]:
        parameters = list(super().get_override_parameters())
        required = self._if_match_required()
        if required is not None:
            parameters.append(OpenApiParameter(
                "If-Match", OpenApiTypes.STR, OpenApiParameter.HEADER, required=required,
                description=("The ETag of the record as last read (retrieve and every write answer "
                             "with one); a record changed since gives 412 and nothing is saved. "
                             + ("Required: 428 without it." if required else
                                "Optional: a step sent without it acts on the record as it is."))))
        return parameters

    def _if_match_required(self) -> bool | None:
        """True where the request must send If-Match, False where it may, None where it is not read."""
        # Imported here: DRF reads this class from the settings while defining its views.
        from registry.api.base import RegisterViewSet
        from registry.api.etags import UpdateWithETagMixin

        view = self.view
        if isinstance(view, UpdateWithETagMixin) and self.method in {"PUT", "PATCH"}:
            return True
        if isinstance(view, RegisterViewSet) and getattr(view, "detail", False) and self.method == "POST":
            return False
        return None


def add_error_responses(result: dict[str, Any], generator: Any, request: Any, public: bool) -> dict[str, Any]:
    """Postprocessing hook: document the error statuses each operation can answer with."""
    schemas = result.setdefault("components", {}).setdefault("schemas", {})
    schemas.setdefault(ERROR_COMPONENT, _ERROR_SCHEMA)
    for path, operations in result.get("paths", {}).items():
        for method, operation in operations.items():
            if method not in _METHODS:
                continue
            for status in _error_statuses(path, method, operation):
                operation["responses"].setdefault(status, {
                    "description": _DESCRIPTIONS[status],
                    "content": {"application/json": {"schema": {"$ref": f"#/components/schemas/{ERROR_COMPONENT}"}}},
                })
    return result


def _error_statuses(path: str, method: str, operation: dict[str, Any]) -> list[str]:
    # drf-spectacular lists {} among the security requirements of views open to anonymous callers.
    open_to_all = {} in operation.get("security", [{}])
    statuses: list[str] = []
    if method != "delete" and (method != "get" or operation.get("parameters")):
        statuses.append("400")
    if not open_to_all:
        statuses += ["401", "403"]
    pages = any(parameter.get("name") == "page" for parameter in operation.get("parameters", []))
    if "{" in path or pages:
        # A page number past the end is a 404 too.
        statuses.append("404")
    if method in {"post", "put", "patch"}:
        statuses.append("415")
    if_match = [parameter for parameter in operation.get("parameters", [])
                if parameter.get("in") == "header" and parameter.get("name") == "If-Match"]
    if if_match:
        # The record is locked for the change (RegisterAutoSchema): a read-only one, or one in a
        # state the change does not allow, is a 409.
        statuses += ["409", "412"]
        if if_match[0].get("required"):
            statuses.append("428")
    return statuses
