"""Locations and eyewear."""
from __future__ import annotations

from typing import Any

from django.http import HttpResponse
from drf_spectacular.utils import extend_schema
from rest_framework import serializers
from rest_framework.decorators import action
from rest_framework.request import Request
from rest_framework.response import Response

from registry import permissions, selectors
from registry.api.base import CreateRecordMixin, RegisterViewSet, RetireRecordMixin, retirable
from registry.api.documents import GENERATED_AT, PAPER, PDF_RESPONSE, document_query, pdf_response
from registry.documents import render_door_sign
from registry.api.errors import service_errors
from registry.api.etags import UpdateWithETagMixin
from registry.filters import EyewearFilter, LocationFilter
from registry.models import Eyewear, Location
from registry.serializers.places import (
    EyewearInspectionSerializer,
    EyewearMarkingsSerializer,
    EyewearSerializer,
    EyewearUpdateSerializer,
    LocationSerializer,
    LocationUpdateSerializer,
)
from registry.services import eyewear as eyewear_services


class LocationViewSet(CreateRecordMixin, UpdateWithETagMixin, RegisterViewSet):
    """Rooms where lasers and eyewear are kept."""

    policy = permissions.LOCATIONS
    serializer_class = LocationSerializer
    input_serializer_classes = {"update": LocationUpdateSerializer, "partial_update": LocationUpdateSerializer}
    filterset_class = LocationFilter
    ordering_fields = ["code", "site", "building", "room"]
    ordering = ["site", "building", "room"]
    search_fields = ["code", "building", "room", "name"]

    def base_queryset(self) -> Any:
        return Location.objects.all()

    def perform_create(self, serializer: serializers.BaseSerializer[Any]) -> Location:
        with service_errors(serializer):
            return eyewear_services.location_create(by=self.person, **serializer.validated_data)

    def perform_update(self, serializer: serializers.BaseSerializer[Any]) -> Location:
        with service_errors(serializer):
            return eyewear_services.location_update(location=serializer.instance, by=self.person,
                                                    **serializer.validated_data)

    @extend_schema(operation_id="locations_sign_pdf", parameters=[PAPER, GENERATED_AT], responses=PDF_RESPONSE,
                   summary="The room's door sign (PDF): signal word, classes, wavelengths, eyewear, NOHD, entry "
                           "rules and the LSO")
    def sign(self, request: Request, pk: str | None = None) -> HttpResponse:
        generated_at, paper = document_query(request, paper=True)
        return pdf_response(render_door_sign(self.get_object(), generated_at=generated_at, paper=paper))


@retirable(EyewearSerializer)
class EyewearViewSet(CreateRecordMixin, UpdateWithETagMixin, RetireRecordMixin, RegisterViewSet):
    """Protective eyewear with its marked protection per wavelength band."""

    policy = permissions.EYEWEAR
    serializer_class = EyewearSerializer
    input_serializer_classes = {"update": EyewearUpdateSerializer, "partial_update": EyewearUpdateSerializer,
                                "inspect": EyewearInspectionSerializer, "set_markings": EyewearMarkingsSerializer}
    filterset_class = EyewearFilter
    ordering_fields = ["inventory_tag", "last_inspected_on"]
    ordering = ["inventory_tag"]
    search_fields = ["inventory_tag", "manufacturer", "model_name", "description"]

    def base_queryset(self) -> Any:
        return selectors.eyewear_list()

    def perform_create(self, serializer: serializers.BaseSerializer[Any]) -> Eyewear:
        with service_errors(serializer):
            return eyewear_services.eyewear_create(by=self.person, **serializer.validated_data)

    def perform_update(self, serializer: serializers.BaseSerializer[Any]) -> Eyewear:
        with service_errors(serializer):
            return eyewear_services.eyewear_update(eyewear=serializer.instance, by=self.person,
                                                   **serializer.validated_data)

    @extend_schema(request=EyewearInspectionSerializer, responses=EyewearSerializer,
                   summary="Record an inspection of the item and its condition")
    @action(detail=True, methods=["post"])
    def inspect(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (eyewear, values):
            eyewear = eyewear_services.eyewear_inspect(eyewear=eyewear, by=self.person, **values)
        return self.respond_with(eyewear)

    @extend_schema(request=EyewearMarkingsSerializer, responses=EyewearSerializer,
                   summary="Replace the item's protection markings (history keeps the old ones)")
    @action(detail=True, methods=["post"], url_path="markings")
    def set_markings(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (eyewear, values):
            eyewear = eyewear_services.eyewear_set_markings(eyewear=eyewear, by=self.person, **values)
        return self.respond_with(eyewear)
