"""The admin: the LSO's workbench over every model, with history on each record.

Deletion is switched off for lasers and compliance records (they refuse it anyway);
retire them through the services. Status fields are read-only here so that status
changes go through the workflow services and their checks.
"""
from __future__ import annotations

from typing import Any

from django.contrib import admin, messages
from django.core.exceptions import PermissionDenied, ValidationError
from django.db.models import QuerySet
from django.forms import BaseModelForm
from django.http import HttpRequest
from django.utils.translation import gettext_lazy as _
from simple_history.admin import SimpleHistoryAdmin

from registry import selectors, services
from registry.services.hazards import hazard_results_refresh
from registry.models import (
    SOP,
    Audit,
    AuditChecklistItem,
    Authorization,
    Emission,
    Eyewear,
    EyewearMarking,
    Finding,
    HazardResult,
    Incident,
    Laser,
    Location,
    Person,
    ResearchGroup,
    SOPAcknowledgement,
    TrainingRecord,
)


def _run_for_each(admin_view: admin.ModelAdmin, request: HttpRequest, queryset: QuerySet[Any], action: Any,
                  done: str) -> None:
    """Run a workflow service on each selected row, reporting refusals one by one."""
    person = getattr(request.user, "person", None)
    if person is None:
        admin_view.message_user(request, _("Your account has no person record, so it cannot act in the register."),
                                messages.ERROR)
        return
    succeeded = 0
    for record in queryset:
        try:
            action(record, person)
        except (ValidationError, PermissionDenied) as error:
            text = "; ".join(error.messages) if isinstance(error, ValidationError) else str(error)
            admin_view.message_user(request, f"{record}: {text}", messages.ERROR)
        else:
            succeeded += 1
    if succeeded:
        admin_view.message_user(request, f"{done}: {succeeded}.", messages.SUCCESS)


class RetainedAdmin(SimpleHistoryAdmin):
    """Admin for records the register never deletes."""

    def has_delete_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return False


@admin.register(ResearchGroup)
class ResearchGroupAdmin(SimpleHistoryAdmin):
    list_display = ["name", "slug", "department"]
    search_fields = ["name", "slug", "department"]


@admin.register(Person)
class PersonAdmin(SimpleHistoryAdmin):
    list_display = ["__str__", "role", "research_group", "supervisor"]
    list_filter = ["role", "research_group"]
    search_fields = ["user__username", "user__first_name", "user__last_name", "user__email"]
    list_select_related = ["user", "research_group", "supervisor__user"]
    autocomplete_fields = ["supervisor", "research_group"]
    # The role also decides Django group membership; change it with person_set_role.
    readonly_fields = ["role"]

    def has_add_permission(self, request: HttpRequest) -> bool:
        # Accounts and people are created together by person_create (manage.py or the API).
        return False


@admin.register(Location)
class LocationAdmin(SimpleHistoryAdmin):
    list_display = ["code", "building", "room", "name", "is_controlled_area", "interlock", "longest_dimension_m"]
    list_filter = ["site", "building", "is_controlled_area", "interlock"]
    search_fields = ["code", "building", "room", "name"]


class EmissionInline(admin.StackedInline):
    model = Emission
    extra = 0
    fields = [
        "label", ("wavelength_m", "wavelength_max_m"), "temporal_mode",
        ("average_power_W", "pulse_energy_J"), ("pulse_duration_s", "prf_Hz"),
        ("beam_diameter_m", "diameter_definition"), ("divergence_rad", "source_size_rad"), "fibre_na", "notes",
    ]
    show_change_link = True


@admin.register(Laser)
class LaserAdmin(RetainedAdmin):
    list_display = ["asset_tag", "manufacturer", "model_name", "labelled_class", "embedded_class", "status",
                    "location", "owner"]
    list_filter = ["labelled_class", "embedded_class", "status", "laser_type", "location__building", "location",
                   "owner"]
    search_fields = ["asset_tag", "manufacturer", "model_name", "serial_number", "gain_medium"]
    list_select_related = ["location", "owner__user"]
    autocomplete_fields = ["owner", "location"]
    readonly_fields = ["status", "status_note", "review_comments", "retired_on", "created_at", "updated_at"]
    inlines = [EmissionInline]
    actions = ["approve_registrations", "refresh_hazard_results"]
    fieldsets = [
        (None, {"fields": ["asset_tag", ("manufacturer", "model_name"), "serial_number",
                           ("laser_type", "gain_medium"), ("labelled_class", "embedded_class"), "description"]}),
        (_("Where and whose"), {"fields": ["owner", "location"]}),
        (_("Status"), {"fields": ["status", "status_note", "review_comments", "received_on", "commissioned_on",
                                  "retired_on", "created_at", "updated_at"]}),
    ]

    def save_related(self, request: HttpRequest, form: BaseModelForm, formsets: Any, change: bool) -> None:
        super().save_related(request, form, formsets, change)
        # Emissions edited inline bypass the emission services; their results follow here.
        hazard_results_refresh(emissions=form.instance.emissions.select_related("laser"),
                               by=getattr(request.user, "person", None))

    @admin.action(description=_("Approve the selected registrations (pending review -> active)"))
    def approve_registrations(self, request: HttpRequest, queryset: QuerySet[Laser]) -> None:
        _run_for_each(self, request, queryset, lambda laser, by: services.laser_approve(laser=laser, by=by),
                      "Lasers approved")

    @admin.action(description=_("Recompute the hazard results of the selected lasers"))
    def refresh_hazard_results(self, request: HttpRequest, queryset: QuerySet[Laser]) -> None:
        summary = hazard_results_refresh(emissions=selectors.emission_list().filter(laser__in=queryset))
        self.message_user(request, f"Emissions assessed: {summary.assessed}.", messages.SUCCESS)
        for emission, reason in summary.not_assessed:
            self.message_user(request, f"{emission}: not assessed: {reason}", messages.WARNING)


@admin.register(Emission)
class EmissionAdmin(SimpleHistoryAdmin):
    list_display = ["__str__", "label", "wavelength_m", "temporal_mode", "average_power_W", "pulse_energy_J"]
    list_filter = ["temporal_mode", "laser__labelled_class"]
    search_fields = ["laser__asset_tag", "label"]
    list_select_related = ["laser"]
    autocomplete_fields = ["laser"]

    def save_model(self, request: HttpRequest, obj: Emission, form: BaseModelForm, change: bool) -> None:
        super().save_model(request, obj, form, change)
        hazard_results_refresh(emissions=[obj], by=getattr(request.user, "person", None))


@admin.register(HazardResult)
class HazardResultAdmin(SimpleHistoryAdmin):
    list_display = ["emission", "limits", "exposure_s", "nohd_m", "nohd_unbounded", "od_required", "en207_marking",
                    "engine_version", "computed_at"]
    list_filter = ["limits", "nohd_unbounded", "emission__laser__labelled_class"]
    search_fields = ["emission__laser__asset_tag"]
    list_select_related = ["emission__laser"]

    def get_readonly_fields(self, request: HttpRequest, obj: Any = None) -> list[str]:
        # Results come from the engine only; editing one by hand would defeat its working.
        return [field.name for field in HazardResult._meta.fields]

    def has_add_permission(self, request: HttpRequest) -> bool:
        return False


@admin.register(TrainingRecord)
class TrainingRecordAdmin(RetainedAdmin):
    list_display = ["person", "course", "laser", "completed_on", "valid_until", "verified_by", "retired_at"]
    list_filter = ["course", "valid_until", "person__research_group"]
    search_fields = ["person__user__username", "person__user__last_name", "laser__asset_tag", "evidence"]
    list_select_related = ["person__user", "laser", "verified_by__user"]
    autocomplete_fields = ["person", "laser", "verified_by"]
    readonly_fields = ["retired_at", "retirement_reason"]


@admin.register(Authorization)
class AuthorizationAdmin(RetainedAdmin):
    list_display = ["person", "laser", "status", "requested_by", "decided_by", "valid_until"]
    list_filter = ["status", "laser__labelled_class", "laser__location"]
    search_fields = ["person__user__username", "person__user__last_name", "laser__asset_tag"]
    list_select_related = ["person__user", "laser", "requested_by__user", "decided_by__user"]
    autocomplete_fields = ["person", "laser", "requested_by", "decided_by"]
    readonly_fields = ["status", "decided_by", "decided_at", "decision_reason", "retired_at", "retirement_reason"]
    actions = ["approve_requests"]

    @admin.action(description=_("Approve the selected requests (checks training and SOP acknowledgement)"))
    def approve_requests(self, request: HttpRequest, queryset: QuerySet[Authorization]) -> None:
        _run_for_each(self, request, queryset,
                      lambda authorization, by: services.authorization_approve(authorization=authorization, by=by),
                      "Authorizations approved")


class SOPAcknowledgementInline(admin.TabularInline):
    model = SOPAcknowledgement
    extra = 0
    fields = ["person", "acknowledged_at"]
    readonly_fields = ["person", "acknowledged_at"]
    can_delete = False

    def has_add_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return False


@admin.register(SOP)
class SOPAdmin(RetainedAdmin):
    list_display = ["title", "laser", "version", "status", "approved_on", "review_due"]
    list_filter = ["status", "review_due"]
    search_fields = ["title", "laser__asset_tag"]
    list_select_related = ["laser"]
    autocomplete_fields = ["laser"]
    readonly_fields = ["status", "approved_on", "approved_by", "retired_at", "retirement_reason"]
    inlines = [SOPAcknowledgementInline]


@admin.register(SOPAcknowledgement)
class SOPAcknowledgementAdmin(RetainedAdmin):
    list_display = ["sop", "person", "acknowledged_at"]
    search_fields = ["sop__laser__asset_tag", "person__user__username"]
    list_select_related = ["sop__laser", "person__user"]


class EyewearMarkingInline(admin.TabularInline):
    model = EyewearMarking
    extra = 0


@admin.register(EyewearMarking)
class EyewearMarkingAdmin(SimpleHistoryAdmin):
    list_display = ["eyewear", "__str__", "optical_density", "en207_conditions", "en207_scale"]
    list_filter = ["en207_scale", "eyewear__location"]
    search_fields = ["eyewear__inventory_tag"]
    list_select_related = ["eyewear"]


@admin.register(Eyewear)
class EyewearAdmin(RetainedAdmin):
    list_display = ["inventory_tag", "description", "location", "quantity", "condition", "last_inspected_on"]
    list_filter = ["condition", "location"]
    search_fields = ["inventory_tag", "manufacturer", "model_name", "description"]
    list_select_related = ["location"]
    readonly_fields = ["retired_at", "retirement_reason"]
    inlines = [EyewearMarkingInline]

    def get_queryset(self, request: HttpRequest) -> QuerySet[Eyewear]:
        return selectors.eyewear_list()


class AuditChecklistItemInline(admin.TabularInline):
    model = AuditChecklistItem
    extra = 0
    fields = ["position", "question", "answer", "comment"]
    can_delete = False


class FindingInline(admin.TabularInline):
    model = Finding
    extra = 0
    fields = ["severity", "description", "owner", "due_on", "status", "closed_on"]
    readonly_fields = ["status", "closed_on"]
    autocomplete_fields = ["owner"]
    can_delete = False
    show_change_link = True


@admin.register(Audit)
class AuditAdmin(RetainedAdmin):
    list_display = ["reference", "scope", "location", "planned_on", "conducted_on", "auditor", "status"]
    list_filter = ["status", "scope", "location"]
    search_fields = ["reference", "summary"]
    list_select_related = ["location", "auditor__user"]
    autocomplete_fields = ["location", "auditor", "lasers"]
    readonly_fields = ["status", "signed_off_by", "signed_off_at", "retired_at", "retirement_reason"]
    inlines = [AuditChecklistItemInline, FindingInline]


@admin.register(AuditChecklistItem)
class AuditChecklistItemAdmin(RetainedAdmin):
    list_display = ["audit", "position", "question", "answer"]
    list_filter = ["answer"]
    search_fields = ["audit__reference", "question"]
    list_select_related = ["audit"]


@admin.register(Finding)
class FindingAdmin(RetainedAdmin):
    list_display = ["audit", "severity", "laser", "location", "owner", "due_on", "status"]
    list_filter = ["status", "severity", "location", "owner"]
    search_fields = ["audit__reference", "laser__asset_tag", "description"]
    list_select_related = ["audit", "laser", "location", "owner__user"]
    autocomplete_fields = ["laser", "location", "owner"]
    readonly_fields = ["status", "closed_on", "closed_by", "closure_evidence", "retired_at", "retirement_reason"]


@admin.register(Incident)
class IncidentAdmin(RetainedAdmin):
    list_display = ["reference", "kind", "occurred_at", "laser", "location", "status"]
    list_filter = ["kind", "status", "location"]
    search_fields = ["reference", "laser__asset_tag", "description"]
    list_select_related = ["laser", "location"]
    autocomplete_fields = ["laser", "location", "reported_by", "people_involved"]
    readonly_fields = ["status", "closed_at", "retired_at", "retirement_reason"]
