"""Audits (plan, start, answer the checklist, raise findings, sign off), findings and incidents."""
from __future__ import annotations

from typing import Any

from django.http import HttpResponse
from django.shortcuts import get_object_or_404
from django.utils import timezone
from drf_spectacular.utils import OpenApiResponse, extend_schema
from rest_framework import serializers, status
from rest_framework.decorators import action
from rest_framework.request import Request
from rest_framework.response import Response

from registry import permissions, selectors
from registry.api.base import CreateRecordMixin, RegisterViewSet, RetireRecordMixin, retirable
from registry.api.documents import GENERATED_AT, PAPER, PDF_RESPONSE, document_query, pdf_response
from registry.documents import render_audit_report
from registry.documents.content import audit_report
from registry.api.errors import service_errors
from registry.api.etags import UpdateWithETagMixin
from registry.filters import FindingFilter, IncidentFilter
from registry.models import Audit, Finding, Incident
from registry.serializers.audits import (
    AuditSerializer,
    AuditSignOffSerializer,
    AuditStartSerializer,
    AuditUpdateSerializer,
    ChecklistAnswerSerializer,
    ChecklistItemSerializer,
    FindingCloseSerializer,
    FindingRaiseSerializer,
    FindingSerializer,
    FindingUpdateSerializer,
    IncidentCloseSerializer,
    IncidentSerializer,
    IncidentUpdateSerializer,
)
from registry.serializers.reports import AuditReportSerializer
from registry.services import audits as audit_services
from registry.services import incidents as incident_services

_CONFLICT = OpenApiResponse(description="The record's status does not allow this step (the body says why).")


@retirable(AuditSerializer)
class AuditViewSet(CreateRecordMixin, UpdateWithETagMixin, RetireRecordMixin, RegisterViewSet):
    """Audits with their checklist and findings: plan, start, answer, raise findings, sign off."""

    policy = permissions.AUDITS
    serializer_class = AuditSerializer
    input_serializer_classes = {
        "update": AuditUpdateSerializer,
        "partial_update": AuditUpdateSerializer,
        "start": AuditStartSerializer,
        "answer": ChecklistAnswerSerializer,
        "raise_finding": FindingRaiseSerializer,
        "sign_off": AuditSignOffSerializer,
    }
    filterset_fields = ["scope", "status", "location", "auditor"]
    ordering_fields = ["planned_on", "conducted_on", "reference"]
    ordering = ["-planned_on", "reference"]
    search_fields = ["reference", "summary", "site"]

    def base_queryset(self) -> Any:
        return selectors.audit_list()

    @extend_schema(summary="Plan an audit with its checklist questions (LSO)")
    def create(self, request: Request, *args: Any, **kwargs: Any) -> Response:
        return super().create(request, *args, **kwargs)

    def perform_create(self, serializer: serializers.BaseSerializer[Any]) -> Audit:
        with service_errors(serializer):
            return audit_services.audit_plan(by=self.person, **serializer.validated_data)

    def perform_update(self, serializer: serializers.BaseSerializer[Any]) -> Audit:
        with service_errors(serializer):
            return audit_services.audit_update(audit=serializer.instance, by=self.person, **serializer.validated_data)

    @extend_schema(request=AuditStartSerializer, responses={200: AuditSerializer, 409: _CONFLICT},
                   summary="Start a planned audit")
    @action(detail=True, methods=["post"])
    def start(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (audit, values):
            audit = audit_services.audit_start(audit=audit, by=self.person, **values)
        return self.respond_with(audit)

    @extend_schema(request=ChecklistAnswerSerializer, responses=ChecklistItemSerializer,
                   summary="Answer one checklist item of an audit in progress")
    @action(detail=True, methods=["post"])
    def answer(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (audit, values):
            item = get_object_or_404(audit.checklist.all(), position=values.pop("position"))
            item = audit_services.audit_answer(item=item, by=self.person, **values)
        return Response(ChecklistItemSerializer(item).data)

    @extend_schema(request=FindingRaiseSerializer, responses={201: FindingSerializer},
                   summary="Raise a finding during an audit in progress")
    @action(detail=True, methods=["post"], url_path="findings")
    def raise_finding(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (audit, values):
            finding = audit_services.finding_raise(audit=audit, by=self.person, **values)
        return Response(FindingSerializer(finding).data, status=status.HTTP_201_CREATED)

    @extend_schema(request=AuditSignOffSerializer, responses={200: AuditSerializer, 409: _CONFLICT},
                   summary="Sign the audit off once every checklist item is answered (LSO)")
    @action(detail=True, methods=["post"], url_path="sign-off")
    def sign_off(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (audit, values):
            audit = audit_services.audit_sign_off(audit=audit, by=self.person, **values)
        return self.respond_with(audit)

    @extend_schema(operation_id="audits_report_pdf", parameters=[PAPER, GENERATED_AT], responses=PDF_RESPONSE,
                   summary="The audit report (PDF): cover and sign-off, register snapshot, hazards, authorization "
                           "and training, eyewear per room, checklist, findings, cautions")
    def report_pdf(self, request: Request, pk: str | None = None) -> HttpResponse:
        generated_at, paper = document_query(request, paper=True)
        return pdf_response(render_audit_report(self.get_object(), generated_at=generated_at, paper=paper))

    @extend_schema(operation_id="audits_report_json", parameters=[GENERATED_AT], responses=AuditReportSerializer,
                   summary="The audit report as JSON: the PDF's sections, with SI figures")
    def report_json(self, request: Request, pk: str | None = None) -> Response:
        generated_at, _ = document_query(request, paper=False)
        report = audit_report(self.get_object(), as_of=timezone.localdate(generated_at))
        return Response(AuditReportSerializer(report).data)


@retirable(FindingSerializer)
class FindingViewSet(UpdateWithETagMixin, RetireRecordMixin, RegisterViewSet):
    """Audit findings; the action owner closes one with the evidence."""

    policy = permissions.FINDINGS
    serializer_class = FindingSerializer
    input_serializer_classes = {"update": FindingUpdateSerializer, "partial_update": FindingUpdateSerializer,
                                "close": FindingCloseSerializer}
    filterset_class = FindingFilter
    ordering_fields = ["due_on", "severity", "status"]
    ordering = ["audit", "status", "due_on"]
    search_fields = ["description", "corrective_action"]

    def base_queryset(self) -> Any:
        return selectors.finding_list()

    def perform_update(self, serializer: serializers.BaseSerializer[Any]) -> Finding:
        with service_errors(serializer):
            return audit_services.finding_update(finding=serializer.instance, by=self.person,
                                                 **serializer.validated_data)

    @extend_schema(request=FindingCloseSerializer, responses={200: FindingSerializer, 409: _CONFLICT},
                   summary="Close a finding with the evidence of correction")
    @action(detail=True, methods=["post"])
    def close(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (finding, values):
            finding = audit_services.finding_close(finding=finding, by=self.person, **values)
        return self.respond_with(finding)


@retirable(IncidentSerializer)
class IncidentViewSet(CreateRecordMixin, UpdateWithETagMixin, RetireRecordMixin, RegisterViewSet):
    """Exposures and near misses, their investigation and follow-up."""

    policy = permissions.INCIDENTS
    serializer_class = IncidentSerializer
    input_serializer_classes = {"update": IncidentUpdateSerializer, "partial_update": IncidentUpdateSerializer,
                                "close": IncidentCloseSerializer}
    filterset_class = IncidentFilter
    ordering_fields = ["occurred_at", "status"]
    ordering = ["-occurred_at"]
    search_fields = ["reference", "description"]

    def base_queryset(self) -> Any:
        return selectors.incident_list()

    def perform_create(self, serializer: serializers.BaseSerializer[Any]) -> Incident:
        with service_errors(serializer):
            return incident_services.incident_report(reported_by=self.person, **serializer.validated_data)

    def perform_update(self, serializer: serializers.BaseSerializer[Any]) -> Incident:
        with service_errors(serializer):
            return incident_services.incident_update(incident=serializer.instance, by=self.person,
                                                     **serializer.validated_data)

    @extend_schema(request=None, responses={200: IncidentSerializer, 409: _CONFLICT},
                   summary="Open the investigation of a reported incident (LSO)")
    @action(detail=True, methods=["post"])
    def investigate(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step(reads_body=False) as (incident, _):
            incident = incident_services.incident_investigate(incident=incident, by=self.person)
        return self.respond_with(incident)

    @extend_schema(request=IncidentCloseSerializer, responses={200: IncidentSerializer, 409: _CONFLICT},
                   summary="Close an incident with its follow-up (LSO)")
    @action(detail=True, methods=["post"])
    def close(self, request: Request, pk: str | None = None) -> Response:
        with self.workflow_step() as (incident, values):
            incident = incident_services.incident_close(incident=incident, by=self.person, **values)
        return self.respond_with(incident)
