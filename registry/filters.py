"""List filters for the API (django-filter), including filters on physical quantities.

Quantity filters read their value like every other physical input: a number in the
documented SI unit or a string with units (``?wavelength_min=500 nm``); a bad value is a
400 naming the query parameter.

Every query value a list reads is bounded before it is parsed (BoundedFilterBackend), and a
search is bounded in words as well (``search_problem``, which the admin's search uses too):
each word of a search adds a condition over every searched column, and a few thousand words
make a query no database will plan.
"""
from __future__ import annotations

from collections.abc import Collection
from typing import Any

import django_filters
from django import forms
from django.db.models import Exists, OuterRef, Q, QuerySet
from django.utils.text import smart_split
from django_filters.rest_framework import DjangoFilterBackend
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import extend_schema_field
from rest_framework.exceptions import ValidationError
from rest_framework.filters import SearchFilter
from rest_framework.request import Request
from rest_framework.views import APIView

from hazards.errors import InputError
from hazards.units import MAX_TEXT_LENGTH, parse_quantity
from registry.models import (
    Authorization,
    Emission,
    Eyewear,
    Finding,
    HazardResult,
    Incident,
    Laser,
    LaserClass,
    LaserStatus,
    Location,
    Person,
    TrainingRecord,
)


# The most words a search looks for; a phrase in quotes is one word.
MAX_SEARCH_WORDS = 10


def search_problem(text: str, *, words: Collection[str] | None = None) -> str | None:
    """Why ``text`` is refused as a search (too long, or too many words); None when it is fine.

    ``words`` are the terms the caller's search splits ``text`` into (DRF also splits at
    commas); by default, Django's smart_split, as the admin does.
    """
    if len(text) > MAX_TEXT_LENGTH:
        return f"is {len(text)} characters long; a search is at most {MAX_TEXT_LENGTH}."
    count = len(words if words is not None else list(smart_split(text)))
    if count > MAX_SEARCH_WORDS:
        return f"has {count} words; a search looks for at most {MAX_SEARCH_WORDS}."
    return None


class BoundedFilterBackend(DjangoFilterBackend):
    """django-filter's backend, refusing any query value longer than a typed value can be.

    A filter value is an id, a date, a choice, a name or a quantity, all within
    hazards.units.MAX_TEXT_LENGTH characters; so are ``search`` and ``ordering``. A longer one
    is a 400 naming the parameter, before any of it is parsed.
    """

    def filter_queryset(self, request: Request, queryset: QuerySet[Any], view: APIView) -> QuerySet[Any]:
        params = request.query_params
        too_long = {name: [f"is {len(value)} characters long; a query value is at most {MAX_TEXT_LENGTH}."]
                    for name in params for value in params.getlist(name) if len(value) > MAX_TEXT_LENGTH}
        if too_long:
            raise ValidationError(too_long)
        return super().filter_queryset(request, queryset, view)


class BoundedSearchFilter(SearchFilter):
    """DRF's search, refusing a search of too many words (search_problem) with a 400."""

    def get_search_terms(self, request: Request) -> list[str]:
        terms: list[str] = super().get_search_terms(request)
        problem = search_problem(request.query_params.get(self.search_param, ""), words=terms)
        if problem is not None:
            raise ValidationError({self.search_param: [problem]})
        return terms


class QuantityFormField(forms.Field):
    def __init__(self, *, unit: str, minimum: float | None = None, **kwargs: Any) -> None:
        self.unit = unit
        self.minimum = minimum
        super().__init__(**kwargs)

    def to_python(self, value: Any) -> float | None:
        if value in (None, ""):
            return None
        try:
            return parse_quantity(value, field="value", unit=self.unit, minimum=self.minimum)
        except InputError as error:
            # Passed as a parameter: the message quotes the input, which may contain "%".
            raise forms.ValidationError("%(message)s", code="invalid_quantity",
                                        params={"message": error.message}) from None


@extend_schema_field(OpenApiTypes.STR)
class QuantityFilter(django_filters.Filter):
    """A filter on a quantity: a number in ``unit`` or a string with units."""

    field_class = QuantityFormField

    def __init__(self, *args: Any, unit: str, minimum: float | None = None, **kwargs: Any) -> None:
        kwargs.setdefault("help_text", f"A number in {unit}, or a value with units.")
        super().__init__(*args, unit=unit, minimum=minimum, **kwargs)


class LaserFilter(django_filters.FilterSet):
    laser_class = django_filters.MultipleChoiceFilter(
        field_name="labelled_class", choices=LaserClass.choices,
        help_text="Labelled class; repeat the parameter for several.",
    )
    # The register page's name for the same filter (issue 10); both are accepted everywhere.
    labelled_class = django_filters.MultipleChoiceFilter(
        field_name="labelled_class", choices=LaserClass.choices,
        help_text="Labelled class, as laser_class; repeat the parameter for several.",
    )
    effective_class = django_filters.MultipleChoiceFilter(
        method="filter_effective_class", choices=LaserClass.choices,
        help_text="The class of the beam itself: the embedded class where an enclosure changes it.",
    )
    status = django_filters.MultipleChoiceFilter(choices=LaserStatus.choices)
    location = django_filters.ModelChoiceFilter(queryset=Location.objects.all())
    building = django_filters.CharFilter(field_name="location__building", lookup_expr="iexact")
    owner = django_filters.ModelChoiceFilter(queryset=Person.objects.all())
    wavelength_min = QuantityFilter(
        method="filter_wavelength_min", unit="m", minimum=0,
        help_text="Lasers with an emission reaching at least this wavelength (m, or e.g. '500 nm').",
    )
    wavelength_max = QuantityFilter(
        method="filter_wavelength_max", unit="m", minimum=0,
        help_text="Lasers with an emission at or below this wavelength (m, or e.g. '700 nm').",
    )
    nohd_gt = QuantityFilter(
        method="filter_nohd_gt", unit="m", minimum=0,
        help_text=("Lasers with a stored hazard result whose NOHD exceeds this distance (m, or e.g. '10 m'); "
                   "an unbounded NOHD exceeds every distance."),
    )

    class Meta:
        model = Laser
        fields = ["laser_class", "labelled_class", "effective_class", "status", "location", "building", "owner"]

    def filter_effective_class(self, queryset: QuerySet[Laser], name: str, value: list[str]) -> QuerySet[Laser]:
        if not value:
            return queryset
        return queryset.filter(Q(embedded_class__in=value) | Q(embedded_class="", labelled_class__in=value))

    def filter_wavelength_min(self, queryset: QuerySet[Laser], name: str, value: float | None) -> QuerySet[Laser]:
        if value is None:
            return queryset
        reaching = Q(wavelength_m__gte=value) | Q(wavelength_max_m__gte=value)
        return queryset.filter(Exists(Emission.objects.filter(reaching, laser=OuterRef("pk"))))

    def filter_wavelength_max(self, queryset: QuerySet[Laser], name: str, value: float | None) -> QuerySet[Laser]:
        if value is None:
            return queryset
        return queryset.filter(Exists(Emission.objects.filter(laser=OuterRef("pk"), wavelength_m__lte=value)))

    def filter_nohd_gt(self, queryset: QuerySet[Laser], name: str, value: float | None) -> QuerySet[Laser]:
        if value is None:
            return queryset
        beyond = Q(nohd_m__gt=value) | Q(nohd_unbounded=True)
        return queryset.filter(Exists(HazardResult.objects.filter(beyond, emission__laser=OuterRef("pk"))))


class EmissionFilter(django_filters.FilterSet):
    wavelength_min = QuantityFilter(field_name="wavelength_m", lookup_expr="gte", unit="m", minimum=0)
    wavelength_max = QuantityFilter(field_name="wavelength_m", lookup_expr="lte", unit="m", minimum=0)

    class Meta:
        model = Emission
        fields = ["laser", "temporal_mode", "wavelength_min", "wavelength_max"]


class HazardResultFilter(django_filters.FilterSet):
    nohd_gt = QuantityFilter(method="filter_nohd_gt", unit="m", minimum=0,
                             help_text="NOHD exceeds this distance (m, or e.g. '10 m'); unbounded counts.")

    class Meta:
        model = HazardResult
        fields = ["emission", "emission__laser", "limits"]

    def filter_nohd_gt(self, queryset: QuerySet[HazardResult], name: str,
                       value: float | None) -> QuerySet[HazardResult]:
        if value is None:
            return queryset
        return queryset.filter(Q(nohd_m__gt=value) | Q(nohd_unbounded=True))


class LocationFilter(django_filters.FilterSet):
    building = django_filters.CharFilter(lookup_expr="iexact")
    site = django_filters.CharFilter(lookup_expr="iexact")

    class Meta:
        model = Location
        fields = ["site", "building", "is_controlled_area"]


class PersonFilter(django_filters.FilterSet):
    class Meta:
        model = Person
        fields = ["role", "research_group", "supervisor"]


class TrainingRecordFilter(django_filters.FilterSet):
    valid_on = django_filters.DateFilter(method="filter_valid_on",
                                         help_text="Only records valid on this date (YYYY-MM-DD).")

    class Meta:
        model = TrainingRecord
        fields = ["person", "course", "laser"]

    def filter_valid_on(self, queryset: QuerySet[TrainingRecord], name: str, value: Any) -> QuerySet[TrainingRecord]:
        if value is None:
            return queryset
        return queryset.filter(Q(valid_until__isnull=True) | Q(valid_until__gte=value), completed_on__lte=value,
                               retired_at__isnull=True)


class AuthorizationFilter(django_filters.FilterSet):
    class Meta:
        model = Authorization
        fields = ["person", "laser", "status"]


class EyewearFilter(django_filters.FilterSet):
    class Meta:
        model = Eyewear
        fields = ["location", "condition"]


class FindingFilter(django_filters.FilterSet):
    class Meta:
        model = Finding
        fields = ["audit", "laser", "location", "severity", "status", "owner"]


class IncidentFilter(django_filters.FilterSet):
    class Meta:
        model = Incident
        fields = ["kind", "status", "laser", "location"]
