"""People, training records, authorizations and SOPs, with their workflows as actions."""
from __future__ import annotations

from typing import Any

from django.http import FileResponse

from drf_spectacular.utils import OpenApiResponse, extend_schema
from rest_framework import serializers, status
from rest_framework.decorators import action
from rest_framework.request import Request
from rest_framework.response import Response

from registry import permissions, selectors
from registry.api.base import CreateRecordMixin, RegisterViewSet, RetireRecordMixin, retirable
from registry.api.documents import PDF_RENDERERS, SOP_DOCUMENT_RESPONSE, sop_document_response
from registry.api.errors import service_errors
from registry.api.etags import UpdateWithETagMixin
from registry.filters import AuthorizationFilter, PersonFilter, TrainingRecordFilter
from registry.models import SOP, Authorization, Person, TrainingRecord
from registry.serializers.people import (
    AuthorizationApprovalSerializer,
    AuthorizationRefusalSerializer,
    AuthorizationSerializer,
    PersonCreateSerializer,
    PersonSerializer,
    PersonUpdateSerializer,
    PrerequisitesSerializer,
    SOPAcknowledgementSerializer,
    SOPApprovalSerializer,
    SOPSerializer,
    SOPUpdateSerializer,
    TrainingRecordSerializer,
    TrainingRecordUpdateSerializer,
)
from registry.services import authorizations as authorization_services
from registry.services import people as people_services
from registry.services import sops as sop_services
from registry.services import training as training_services

_CONFLICT = OpenApiResponse(description="The record's status, or a missing prerequisite, does not allow this.")


class PersonViewSet(CreateRecordMixin, UpdateWithETagMixin, RegisterViewSet):
    """People and their roles; researchers see their own group, users themselves."""

    policy = permissions.PEOPLE
    serializer_class = PersonSerializer
    input_serializer_classes = {"create": PersonCreateSerializer, "update": PersonUpdateSerializer,
                                "partial_update": PersonUpdateSerializer}
    filterset_class = PersonFilter
    ordering_fields = ["user__username", "user__last_name", "role"]
    ordering = ["user__last_name", "user__first_name", "user__username"]
    search_fields = ["user__username", "user__first_name", "user__last_name"]

    def base_queryset(self) -> Any:
        return selectors.person_list()

    @extend_schema(request=PersonCreateSerializer, responses={201: PersonSerializer},
                   summary="Add a person with a role, creating their account (LSO)")
    def create(self, request: Request, *args: Any, **kwargs: Any) -> Response:
        return super().create(request, *args, **kwargs)

    def perform_create(self, serializer: serializers.BaseSerializer[Any]) -> Person:
        with service_errors(serializer):
            return people_services.person_create(by=self.person, **serializer.validated_data)

    def perform_update(self, serializer: serializers.BaseSerializer[Any]) -> Person:
        with service_errors(serializer):
            return people_services.person_update(person=serializer.instance, by=self.person,
                                                 **serializer.validated_data)


@retirable(TrainingRecordSerializer)
class TrainingRecordViewSet(CreateRecordMixin, UpdateWithETagMixin, RetireRecordMixin, RegisterViewSet):
    """Completed laser safety training; the LSO records and corrects it."""

    policy = permissions.TRAINING_RECORDS
    serializer_class = TrainingRecordSerializer
    input_serializer_classes = {"update": TrainingRecordUpdateSerializer,
                                "partial_update": TrainingRecordUpdateSerializer}
    filterset_class = TrainingRecordFilter
    ordering_fields = ["completed_on", "valid_until"]
    ordering = ["person", "-completed_on"]
    search_fields = ["title", "evidence", "person__user__username"]

    def base_queryset(self) -> Any:
        return selectors.training_list()

    def perform_create(self, serializer: serializers.BaseSerializer[Any]) -> TrainingRecord:
        with service_errors(serializer):
            return training_services.training_record(by=self.person, **serializer.validated_data)

    def perform_update(self, serializer: serializers.BaseSerializer[Any]) -> TrainingRecord:
        with service_errors(serializer):
            return training_services.training_record_update(training_record=serializer.instance, by=self.person,
                                                            **serializer.validated_data)


@retirable(AuthorizationSerializer)
class AuthorizationViewSet(CreateRecordMixin, RetireRecordMixin, RegisterViewSet):
    """Who may operate which laser: requests, their prerequisites and the LSO's decisions."""

    policy = permissions.AUTHORIZATIONS
    serializer_class = AuthorizationSerializer
    input_serializer_classes = {"approve": AuthorizationApprovalSerializer, "refuse": AuthorizationRefusalSerializer,
                                "revoke": AuthorizationRefusalSerializer}
    filterset_class = AuthorizationFilter
    ordering_fields = ["requested_at", "decided_at", "valid_until"]
    ordering = ["laser", "person", "-requested_at"]

    def base_queryset(self) -> Any:
        return selectors.authorization_list()

    @extend_schema(summary="Request an authorization for a person on an active laser")
    def create(self, request: Request, *args: Any, **kwargs: Any) -> Response:
        return super().create(request, *args, **kwargs)

    def perform_create(self, serializer: serializers.BaseSerializer[Any]) -> Authorization:
        with service_errors(serializer):
            return authorization_services.authorization_request(by=self.person, **serializer.validated_data)

    @extend_schema(responses=PrerequisitesSerializer, summary="What the person still lacks for approval")
    @action(detail=True, methods=["get"], filter_backends=[], pagination_class=None)
    def prerequisites(self, request: Request, pk: str | None = None) -> Response:
        authorization: Authorization = self.get_object()
        missing = selectors.authorization_missing_prerequisites(person=authorization.person,
                                                                laser=authorization.laser)
        return Response(PrerequisitesSerializer({"missing": missing}).data)

    @extend_schema(request=AuthorizationApprovalSerializer, responses={200: AuthorizationSerializer, 409: _CONFLICT},
                   summary="Approve (LSO); refused while training or SOP acknowledgement is missing")
    @action(detail=True, methods=["post"])
    def approve(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (authorization, values):
            authorization = authorization_services.authorization_approve(
                authorization=authorization, by=self.person, **values)
        return self.respond_with(authorization)

    @extend_schema(request=None, responses={200: AuthorizationSerializer, 409: _CONFLICT},
                   summary="Withdraw a request (the requester or the LSO)")
    @action(detail=True, methods=["post"])
    def withdraw(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step(reads_body=False) as (authorization, _):
            authorization = authorization_services.authorization_withdraw(authorization=authorization, by=self.person)
        return self.respond_with(authorization)

    @extend_schema(request=AuthorizationRefusalSerializer, responses={200: AuthorizationSerializer, 409: _CONFLICT},
                   summary="Revoke an approved authorization, with the reason (LSO)")
    @action(detail=True, methods=["post"])
    def revoke(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (authorization, values):
            authorization = authorization_services.authorization_revoke(
                authorization=authorization, by=self.person, reason=values["reason"])
        return self.respond_with(authorization)

    @extend_schema(request=AuthorizationRefusalSerializer, responses={200: AuthorizationSerializer, 409: _CONFLICT},
                   summary="Refuse with the reason (LSO)")
    @action(detail=True, methods=["post"])
    def refuse(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (authorization, values):
            authorization = authorization_services.authorization_refuse(
                authorization=authorization, by=self.person, reason=values["reason"])
        return self.respond_with(authorization)


@retirable(SOPSerializer)
class SOPViewSet(CreateRecordMixin, UpdateWithETagMixin, RetireRecordMixin, RegisterViewSet):
    """Standard operating procedures per laser: drafts, approval and acknowledgement."""

    policy = permissions.SOPS
    serializer_class = SOPSerializer
    input_serializer_classes = {"update": SOPUpdateSerializer, "partial_update": SOPUpdateSerializer,
                                "approve": SOPApprovalSerializer}
    filterset_fields = ["laser", "status"]
    ordering_fields = ["version", "approved_on", "review_due"]
    ordering = ["laser", "-version"]
    search_fields = ["title", "summary", "laser__asset_tag"]

    def base_queryset(self) -> Any:
        return SOP.objects.select_related("laser", "approved_by__user")

    @extend_schema(summary="Upload a draft of the laser's next SOP version")
    def create(self, request: Request, *args: Any, **kwargs: Any) -> Response:
        return super().create(request, *args, **kwargs)

    def perform_create(self, serializer: serializers.BaseSerializer[Any]) -> SOP:
        with service_errors(serializer):
            return sop_services.sop_create(by=self.person, **serializer.validated_data)

    def perform_update(self, serializer: serializers.BaseSerializer[Any]) -> SOP:
        with service_errors(serializer):
            return sop_services.sop_update(sop=serializer.instance, by=self.person, **serializer.validated_data)

    @extend_schema(request=SOPApprovalSerializer, responses={200: SOPSerializer, 409: _CONFLICT},
                   summary="Put a draft in force (LSO); the previous version is superseded")
    @action(detail=True, methods=["post"])
    def approve(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (sop, values):
            sop = sop_services.sop_approve(sop=sop, by=self.person, **values)
        return self.respond_with(sop)

    @extend_schema(operation_id="sops_document", responses=SOP_DOCUMENT_RESPONSE,
                   summary="The SOP's document (as an attachment), to whoever may read the SOP")
    @action(detail=True, methods=["get"], renderer_classes=PDF_RENDERERS)
    def document(self, request: Request, pk: str | None = None) -> FileResponse:
        return sop_document_response(self.get_object())

    @extend_schema(request=None, responses={201: SOPAcknowledgementSerializer, 409: _CONFLICT},
                   summary="State that you have read and will follow this SOP version")
    @action(detail=True, methods=["post"])
    def acknowledge(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step(reads_body=False) as (sop, _):
            acknowledgement = sop_services.sop_acknowledge(sop=sop, person=self.person)
        return Response(SOPAcknowledgementSerializer(acknowledgement).data, status=status.HTTP_201_CREATED)
