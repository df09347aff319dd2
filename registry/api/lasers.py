"""Lasers, emissions and hazard results, with the laser review workflow as actions."""
from __future__ import annotations

from typing import Any

from django.http import HttpResponse
from drf_spectacular.utils import OpenApiResponse, extend_schema, extend_schema_view
from rest_framework import serializers
from rest_framework.decorators import action
from rest_framework.request import Request
from rest_framework.response import Response

from registry import permissions, selectors
from registry.api.base import CreateRecordMixin, RegisterViewSet
from registry.api.documents import GENERATED_AT, PDF_RESPONSE, document_query, pdf_response
from registry.documents import render_laser_label
from registry.documents.content import laser_page_path
from registry.api.errors import service_errors
from registry.api.etags import UpdateWithETagMixin
from registry.filters import EmissionFilter, HazardResultFilter, LaserFilter
from registry.models import RETIRED_STATUSES, Emission, HazardResult, Laser
from registry.serializers.lasers import (
    EmissionSerializer,
    EmissionUpdateSerializer,
    HazardResultSerializer,
    HazardWorkingSerializer,
    LaserReviewSerializer,
    LaserSendBackSerializer,
    LaserSerializer,
    LaserStatusSerializer,
    LaserUpdateSerializer,
)
from registry.services import lasers as laser_services

_CONFLICT = OpenApiResponse(description="The laser's status does not allow this step (the body says why).")


@extend_schema_view(
    list=extend_schema(summary="List lasers with their emissions and current hazard results"),
    create=extend_schema(summary="Register a laser (it starts as pending review)"),
)
class LaserViewSet(CreateRecordMixin, UpdateWithETagMixin, RegisterViewSet):
    """Lasers with their emissions and current hazard results; registration and review as actions."""

    policy = permissions.LASERS
    serializer_class = LaserSerializer
    input_serializer_classes = {
        "update": LaserUpdateSerializer,
        "partial_update": LaserUpdateSerializer,
        "submit": LaserReviewSerializer,
        "approve": LaserReviewSerializer,
        "send_back": LaserSendBackSerializer,
        "change_status": LaserStatusSerializer,
    }
    filterset_class = LaserFilter
    ordering_fields = ["asset_tag", "labelled_class", "status", "created_at", "updated_at"]
    ordering = ["asset_tag"]
    search_fields = ["asset_tag", "manufacturer", "model_name", "serial_number", "gain_medium"]

    def base_queryset(self) -> Any:
        return selectors.laser_list()

    def perform_create(self, serializer: serializers.BaseSerializer[Any]) -> Laser:
        with service_errors(serializer):
            return laser_services.laser_register(by=self.person, **serializer.validated_data)

    def perform_update(self, serializer: serializers.BaseSerializer[Any]) -> Laser:
        with service_errors(serializer):
            return laser_services.laser_update(laser=serializer.instance, by=self.person,
                                               **serializer.validated_data)

    @extend_schema(operation_id="lasers_label_pdf", parameters=[GENERATED_AT], responses=PDF_RESPONSE,
                   summary="The laser's equipment label (PDF, 100 x 62 mm) with a QR code of its page")
    def label(self, request: Request, pk: str | None = None) -> HttpResponse:
        generated_at, _ = document_query(request, paper=False)
        laser = self.get_object()
        page_url = request.build_absolute_uri(laser_page_path(laser))
        return pdf_response(render_laser_label(laser, page_url=page_url, generated_at=generated_at))

    @extend_schema(request=LaserReviewSerializer, responses={200: LaserSerializer, 409: _CONFLICT},
                   summary="Submit a returned registration for review again")
    @action(detail=True, methods=["post"])
    def submit(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (laser, values):
            laser = laser_services.laser_submit(laser=laser, by=self.person, note=values["note"])
        return self.respond_with(laser)

    @extend_schema(request=LaserReviewSerializer, responses={200: LaserSerializer, 409: _CONFLICT},
                   summary="Approve a registration after review (LSO)")
    @action(detail=True, methods=["post"])
    def approve(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (laser, values):
            laser = laser_services.laser_approve(laser=laser, by=self.person, note=values["note"])
        return self.respond_with(laser)

    @extend_schema(request=LaserSendBackSerializer, responses={200: LaserSerializer, 409: _CONFLICT},
                   summary="Return a registration to its owner with comments (LSO)")
    @action(detail=True, methods=["post"], url_path="return")
    def send_back(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (laser, values):
            laser = laser_services.laser_return(laser=laser, by=self.person, comments=values["comments"])
        return self.respond_with(laser)

    @extend_schema(request=LaserStatusSerializer, responses={200: LaserSerializer, 409: _CONFLICT},
                   summary="Move a laser between in-service statuses, or retire it (LSO)")
    @action(detail=True, methods=["post"], url_path="status")
    def change_status(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (laser, values):
            if values["status"] in RETIRED_STATUSES:
                laser = laser_services.laser_retire(laser=laser, by=self.person, status=values["status"],
                                                    reason=values["note"], retired_on=values["retired_on"])
            else:
                laser = laser_services.laser_set_status(laser=laser, by=self.person, status=values["status"],
                                                        note=values["note"])
        return self.respond_with(laser)


class EmissionViewSet(CreateRecordMixin, UpdateWithETagMixin, RegisterViewSet):
    """Emissions (lines or modes of a laser); physical fields take SI numbers or strings with units."""

    policy = permissions.EMISSIONS
    serializer_class = EmissionSerializer
    input_serializer_classes = {"update": EmissionUpdateSerializer, "partial_update": EmissionUpdateSerializer}
    filterset_class = EmissionFilter
    ordering_fields = ["wavelength_m", "created_at", "updated_at"]
    ordering = ["laser", "wavelength_m", "id"]
    search_fields = ["label", "laser__asset_tag"]

    def base_queryset(self) -> Any:
        return selectors.emission_list()

    def perform_create(self, serializer: serializers.BaseSerializer[Any]) -> Emission:
        fields = dict(serializer.validated_data)
        laser = fields.pop("laser")
        with service_errors(serializer):
            return laser_services.emission_create(laser=laser, by=self.person, **fields)

    def perform_update(self, serializer: serializers.BaseSerializer[Any]) -> Emission:
        with service_errors(serializer):
            return laser_services.emission_update(emission=serializer.instance, by=self.person,
                                                  **serializer.validated_data)


class HazardResultViewSet(RegisterViewSet):
    """Stored hazard results, one per emission and limit set, recomputed when an emission changes."""

    policy = permissions.HAZARD_RESULTS
    serializer_class = HazardResultSerializer
    filterset_class = HazardResultFilter
    ordering_fields = ["nohd_m", "od_required", "computed_at"]
    ordering = ["emission", "limits"]

    def base_queryset(self) -> Any:
        return HazardResult.objects.select_related("emission__laser")

    @extend_schema(responses=HazardWorkingSerializer, summary="The working behind a hazard result")
    @action(detail=True, methods=["get"], filter_backends=[], pagination_class=None)
    def working(self, request: Request, pk: str | None = None) -> Response:
        result: HazardResult = self.get_object()
        return Response(HazardWorkingSerializer(result).data)
