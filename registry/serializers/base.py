"""Pieces every API serializer shares: caller-scoped related fields and history rows."""
from __future__ import annotations

from collections.abc import Callable
from typing import Any

from django.core.exceptions import ImproperlyConfigured
from django.db import models
from django.db.models import QuerySet
from django.utils.functional import cached_property
from rest_framework import serializers
from rest_framework.fields import SkipField
from rest_framework.relations import PKOnlyObject
from rest_framework.reverse import reverse

from registry.permissions import person_of

Narrowing = Callable[[Any, QuerySet[Any]], QuerySet[Any]]


class ScopedRelatedField(serializers.PrimaryKeyRelatedField):
    """A primary key that must name a record the caller may use here.

    ``narrow(person, queryset)`` decides which; anything else is "does not exist", so a
    researcher cannot attach an emission to someone else's laser by guessing its id.
    """

    def __init__(self, *, narrow: Narrowing, **kwargs: Any) -> None:
        self.narrow = narrow
        super().__init__(**kwargs)

    def get_queryset(self) -> QuerySet[Any]:
        queryset = super().get_queryset()
        request = self.context.get("request")
        person = person_of(request.user) if request is not None else None
        return queryset.none() if person is None else self.narrow(person, queryset)


class ZoneOnceDateTimeField(serializers.DateTimeField):
    """DRF's DateTimeField, asking for the current time zone once per serializer, not per value.

    The lookup goes through a context-local and costs more than formatting the value; a
    serializer's fields are bound afresh for every request, inside its time zone.
    """

    def bind(self, field_name: str, parent: Any) -> None:
        super().bind(field_name, parent)
        if not hasattr(self, "timezone"):
            self.timezone = self.default_timezone()  # type: ignore[assignment]  # None: naive, as in DRF


class SelectorListSerializer(serializers.ListSerializer):  # type: ignore[type-arg]
    """A nested list read from the plain list a selector's ``Prefetch(to_attr=...)`` sets.

    DRF skips a read-only field whose attribute is missing, so a row loaded without its
    selector would lose the nested list from the JSON without a word. Here it fails loudly.
    """

    def get_attribute(self, instance: Any) -> Any:
        if not hasattr(instance, self.source):
            raise ImproperlyConfigured(
                f"{type(instance).__name__} {instance.pk} has no {self.source!r}: load it through its selector "
                "(registry.selectors), which prefetches that list.")
        return super().get_attribute(instance)


class ColumnReadMixin:
    """For ModelSerializers that list many rows: DRF's to_representation, minus per-row overhead.

    DRF lists the readable fields again for every row and reads each value through a general
    path (dotted sources, mappings, callables, defaults); a page of 100 lasers with their
    emissions and results makes 8,500 such reads, about half of the request. Here the fields
    are listed once per serializer, and a field showing one concrete column of the model is
    read with getattr: a column is always present and its value is never a callable.
    Properties, relations and method fields go DRF's way. The representation is the same.
    """

    serializer_field_mapping = {
        **serializers.ModelSerializer.serializer_field_mapping,
        models.DateTimeField: ZoneOnceDateTimeField,
    }

    @cached_property
    def _read_plan(self) -> list[tuple[str, serializers.Field[Any, Any, Any, Any], str | None]]:
        """(key, field, column read directly or None) for each readable field, in order."""
        model = self.Meta.model  # type: ignore[attr-defined]
        columns = {field.attname for field in model._meta.concrete_fields if not field.is_relation}
        plan: list[tuple[str, serializers.Field[Any, Any, Any, Any], str | None]] = []
        for field in self.fields.values():  # type: ignore[attr-defined]
            if field.write_only:
                continue
            plain = type(field).get_attribute is serializers.Field.get_attribute
            sources = field.source_attrs
            column = sources[0] if plain and len(sources) == 1 and sources[0] in columns else None
            plan.append((field.field_name, field, column))
        return plan

    def to_representation(self, instance: models.Model) -> dict[str, Any]:
        representation: dict[str, Any] = {}
        for key, field, column in self._read_plan:
            if column is not None:
                value = present = getattr(instance, column)
            else:
                try:
                    value = field.get_attribute(instance)
                except SkipField:
                    continue
                present = value.pk if isinstance(value, PKOnlyObject) else value
            representation[key] = None if present is None else field.to_representation(value)
        return representation


_PK_PLACEHOLDER = "pk-placeholder"


def record_url(serializer: serializers.Field[Any, Any, Any, Any] | serializers.BaseSerializer[Any], view_name: str,
               pk: object) -> str:
    """The absolute URL of a record's route, reversing each route once per request.

    reverse() costs as much as the rest of a row's fields; a page of 100 lasers links 200
    records, so the route is reversed with a placeholder and the id substituted.
    """
    context = serializer.context
    prefixes: dict[str, str] = context.setdefault("record_url_prefixes", {})
    if view_name not in prefixes:
        prefixes[view_name] = reverse(view_name, args=[_PK_PLACEHOLDER], request=context.get("request"))
    return prefixes[view_name].replace(_PK_PLACEHOLDER, str(pk), 1)


class HistoryEntrySerializer(serializers.Serializer):  # type: ignore[type-arg]
    """One row of a record's change history (django-simple-history)."""

    changed_at = serializers.DateTimeField(source="history_date")
    change = serializers.SerializerMethodField(help_text="created, changed or deleted")
    changed_by = serializers.SerializerMethodField(help_text="Username of whoever made the change, if known.")
    changes = serializers.SerializerMethodField(
        help_text="For a change: each field that differs from the previous version, with old and new values.")
    reason = serializers.CharField(source="history_change_reason", allow_null=True)

    _KINDS = {"+": "created", "~": "changed", "-": "deleted"}

    def get_change(self, entry: Any) -> str:
        return self._KINDS.get(entry.history_type, entry.history_type)

    def get_changed_by(self, entry: Any) -> str | None:
        user = entry.history_user
        return None if user is None else user.get_username()

    def get_changes(self, entry: Any) -> list[dict[str, Any]]:
        previous = entry.prev_record_for_diff if hasattr(entry, "prev_record_for_diff") else None
        if previous is None:
            return []
        delta = entry.diff_against(previous)
        return [{"field": change.field, "old": _plain(change.old), "new": _plain(change.new)}
                for change in delta.changes]


def _plain(value: Any) -> Any:
    return value if value is None or isinstance(value, (bool, int, float, str)) else str(value)
