"""Serializer fields for physical quantities, free text and lists of ids.

Every physical input accepts a number in the field's documented SI unit or a string with
its own unit ("5 mW", "10 ns", "1.2 mrad"); hazards.units.parse_quantity does the reading,
so the API, the CLI and the forms agree on what a value means. Responses give the SI
number and, beside it, a human-readable string (``<name>_text``).

Text and lists a request carries are bounded too: free text as the models bound it
(FREE_TEXT_MAX_LENGTH), lists of ids by the caller's count (each id costs a query).
"""
from __future__ import annotations

from collections.abc import Sequence
from functools import lru_cache
from typing import Any

from django.utils.translation import gettext_lazy as _
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from hazards.assessment import beam_fields
from hazards.errors import InputError
from hazards.units import format_si, parse_quantity
from registry.models import FREE_TEXT_MAX_LENGTH

# The string form documented in the schema: it starts with a number (JSON Schema patterns
# are not anchored at the end). Whether the unit exists and has the right dimension is
# pint's call, so the schema cannot say it.
QUANTITY_TEXT_PATTERN = r"^\s*[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?"


class QuantityField(serializers.Field):
    """A float stored in ``unit``; input is a number in ``unit`` or a string with units.

    A wrong dimension, an unreadable value or one outside [minimum, maximum] is a 400
    naming the field and saying what was expected.
    """

    def __init__(
        self,
        *,
        unit: str,
        minimum: float | None = None,
        maximum: float | None = None,
        inclusive_minimum: bool = True,
        example: str = "",
        **kwargs: Any,
    ) -> None:
        self.unit = unit
        self.minimum = minimum
        self.maximum = maximum
        self.inclusive_minimum = inclusive_minimum
        self.example = example
        super().__init__(**kwargs)

    def to_internal_value(self, data: object) -> float:
        try:
            return parse_quantity(data, field=self.field_name, unit=self.unit, minimum=self.minimum,
                                  maximum=self.maximum, inclusive_minimum=self.inclusive_minimum)
        except InputError as error:
            raise serializers.ValidationError(error.message, code="invalid_quantity") from None

    def to_representation(self, value: float) -> float:
        return float(value)


class BeamQuantityField(QuantityField):
    """A beam input of the hazards engine, with the unit and bounds the engine gives it (one home)."""

    def __init__(self, engine_name: str, **kwargs: Any) -> None:
        spec = beam_fields()[engine_name]
        super().__init__(unit=spec.unit, minimum=spec.minimum, maximum=spec.maximum,
                         inclusive_minimum=spec.inclusive_minimum, **kwargs)


@extend_schema_field(OpenApiTypes.STR)
class QuantityTextField(serializers.ReadOnlyField):
    """The same stored value as a string with a metric prefix: 5.32e-07 -> "532 nm"."""

    def __init__(self, *, unit: str, **kwargs: Any) -> None:
        self.unit = unit
        super().__init__(**kwargs)

    def to_representation(self, value: float | None) -> str | None:
        if value is None:
            return None
        return _quantity_text(float(value), self.unit)


class QuantitySerializerMixin:
    """Adds a read-only ``<name>_text`` beside every QuantityField of the serializer.

    Declaring each pair by hand would double every physical field; doing it in
    get_fields() keeps the pairs in the schema as well as in the responses.
    """

    def get_fields(self) -> dict[str, serializers.Field]:
        fields: dict[str, serializers.Field] = super().get_fields()  # type: ignore[misc]
        for name, field in list(fields.items()):
            if isinstance(field, QuantityField) and f"{name}_text" not in fields:
                example = field.example or _readable(f"1 {field.unit}")
                fields[f"{name}_text"] = QuantityTextField(
                    unit=field.unit, source=field.source or name, allow_null=field.allow_null,
                    help_text=f"{name} as text with a metric prefix, e.g. '{example}'.",
                )
        return fields


@lru_cache(maxsize=4096)
def _quantity_text(value: float, unit: str) -> str:
    # Registers repeat figures (the same limits, powers and wavelengths on many rows), and a
    # page of lasers formats about a thousand of them.
    return _readable(format_si(value, unit))


def _readable(text: str) -> str:
    """pint's exponent notation as people write it: "J/m**2" -> "J/m²"."""
    return text.replace("**2", "\u00b2")


class FreeTextField(serializers.CharField):
    """Free text sent to a workflow step (a note, a reason, evidence), bounded as the model fields
    it is stored in (FREE_TEXT_MAX_LENGTH), so that a long one is refused naming this field."""

    def __init__(self, **kwargs: Any) -> None:
        super().__init__(max_length=FREE_TEXT_MAX_LENGTH, **kwargs)


class IdListField(serializers.ManyRelatedField):
    """Ids of related records, at most ``max_length`` of them.

    DRF looks each id up with its own query, so an unbounded list would be unbounded work;
    a longer list is refused before any lookup.
    """

    default_error_messages = {"max_length": _("Ensure this list has no more than {max_length} items.")}

    def __init__(self, *, child_relation: serializers.RelatedField, max_length: int,  # type: ignore[type-arg]
                 **kwargs: Any) -> None:
        self.max_length = max_length
        super().__init__(child_relation=child_relation, **kwargs)

    def to_internal_value(self, data: Any) -> list[Any]:
        if isinstance(data, Sequence) and not isinstance(data, str) and len(data) > self.max_length:
            self.fail("max_length", max_length=self.max_length)
        return super().to_internal_value(data)  # type: ignore[no-any-return]
