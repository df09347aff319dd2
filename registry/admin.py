"""The admin: the LSO's workbench over every model, with history on each record.

Deletion is switched off for lasers and compliance records (they refuse it anyway);
retire them through the services. Nothing else is deleted here either, except by a
superuser (one made with ``manage.py createsuperuser``): an LSO's account carries no
superuser flag, group or raw permission it could change about itself (AccountAdmin). Status fields are read-only here so that status
changes go through the workflow services and their checks. Every form is a RegisterForm
(constraints and the read-only rule checked on the form); a read-only record opens as a
page to read; history can be read, never reverted.
"""
from __future__ import annotations

from typing import Any

from django.contrib import admin, messages
from django.contrib.auth import get_user_model
from django.contrib.auth.admin import UserAdmin
from django.core.exceptions import PermissionDenied, ValidationError
from django.db.models import QuerySet
from django.forms import BaseModelForm
from django.http import HttpRequest
from django.utils.html import format_html, format_html_join
from django.utils.translation import gettext_lazy as _
from simple_history.admin import SimpleHistoryAdmin

from hazards.units import format_si
from registry import selectors, services
from registry.filters import search_problem
from registry.forms import EmissionForm, EyewearMarkingForm, LocationForm, RegisterForm
from registry.services.hazards import hazard_results_refresh
from registry.services.standings import room_standings_refresh, standing_rooms
from registry.models import (
    RETIRED_STATUSES,
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
    RoomStanding,
    SentReminder,
    SOPAcknowledgement,
    TrainingRecord,
)
from registry.templatetags import hazard_figures


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


def _read_only(record: Any) -> bool:
    try:
        services.refuse_if_read_only(record)
    except ValidationError:
        return True
    return False


def _may_delete(request: HttpRequest) -> bool:
    """Only a superuser deletes through the admin. No one becomes one through the admin
    without being one already (AccountAdmin), so that is someone made on the command line."""
    return bool(request.user.is_superuser)


def _refresh_standings(rooms: set[int]) -> None:
    # Most records (people, audits, training) enter no room's standing: no refresh, and no log line.
    if rooms:
        room_standings_refresh(locations=rooms)


class RegisterAdmin(SimpleHistoryAdmin):
    """Base of every admin page of the register."""

    form = RegisterForm

    # Saves and deletes here skip the services, so the rooms a record enters (where it was and where it is)
    # get their stored standing refreshed here, in the same transaction (services.standings).
    def save_model(self, request: HttpRequest, obj: Any, form: BaseModelForm, change: bool) -> None:
        stored = type(obj)._base_manager.filter(pk=obj.pk).first() if change else None
        form.rooms_before = standing_rooms(stored) if stored is not None else set()  # type: ignore[attr-defined]
        super().save_model(request, obj, form, change)

    def save_related(self, request: HttpRequest, form: BaseModelForm, formsets: Any, change: bool) -> None:
        super().save_related(request, form, formsets, change)
        _refresh_standings(form.rooms_before | standing_rooms(form.instance))  # type: ignore[attr-defined]

    def delete_model(self, request: HttpRequest, obj: Any) -> None:
        rooms = standing_rooms(obj)
        super().delete_model(request, obj)
        _refresh_standings(rooms)

    def delete_queryset(self, request: HttpRequest, queryset: QuerySet[Any]) -> None:
        rooms = set().union(*(standing_rooms(record) for record in queryset))
        super().delete_queryset(request, queryset)
        _refresh_standings(rooms)

    def has_change_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        # A retired record, and what belongs to a retired laser, is shown to read, not to change.
        if obj is not None and _read_only(obj):
            return False
        return super().has_change_permission(request, obj)  # type: ignore[no-any-return]

    def has_delete_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return _may_delete(request) and super().has_delete_permission(request, obj)  # type: ignore[no-any-return]

    def history_form_view(self, request: HttpRequest, object_id: str, version_id: str,
                          extra_context: dict[str, Any] | None = None) -> Any:
        # Revert is off: SIMPLE_HISTORY_REVERT_DISABLED hides its button, but a POST to this
        # page would still save the old version over the record, past every service's checks
        # (a disposed laser back in service, a revoked authorization approved again).
        if request.method == "POST":
            raise PermissionDenied("Earlier versions can be read here, not restored.")
        return super().history_form_view(request, object_id, version_id, extra_context)

    def get_search_results(self, request: HttpRequest, queryset: QuerySet[Any],
                           search_term: str) -> tuple[QuerySet[Any], bool]:
        # Each word adds a condition over every searched column, and thousands of words make
        # a query no database will plan; a search is bounded as in the API.
        problem = search_problem(search_term)
        if problem is not None:
            self.message_user(request, _("The search %(problem)s Nothing was searched.") % {"problem": problem},
                              messages.WARNING)
            return queryset.none(), False
        return super().get_search_results(request, queryset, search_term)  # type: ignore[no-any-return]


class RetainedAdmin(RegisterAdmin):
    """Admin for records the register never deletes."""

    def has_delete_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return False


@admin.register(ResearchGroup)
class ResearchGroupAdmin(RegisterAdmin):
    list_display = ["name", "slug", "department"]
    search_fields = ["name", "slug", "department"]


@admin.register(Person)
class PersonAdmin(RegisterAdmin):
    list_display = ["__str__", "role", "research_group", "supervisor"]
    list_filter = ["role", "research_group"]
    search_fields = ["user__username", "user__first_name", "user__last_name", "user__email"]
    list_select_related = ["user", "research_group", "supervisor__user"]
    autocomplete_fields = ["supervisor", "research_group"]
    # The role also decides Django group membership; change it with person_set_role (the API's
    # person update). Moving a person to another account would hand that account the role.
    readonly_fields = ["user", "role"]

    def has_add_permission(self, request: HttpRequest) -> bool:
        # Accounts and people are created together by person_create (manage.py or the API).
        return False


@admin.register(Location)
class LocationAdmin(RegisterAdmin):
    form = LocationForm
    list_display = ["code", "building", "room", "name", "is_controlled_area", "interlock", "longest_dimension"]
    list_filter = ["site", "building", "is_controlled_area", "interlock"]
    search_fields = ["code", "building", "room", "name"]

    @admin.display(description=_("longest room dimension"), ordering="longest_dimension_m")
    def longest_dimension(self, location: Location) -> str:
        return hazard_figures.distance(location.longest_dimension_m) if location.longest_dimension_m else "-"


class EmissionInline(admin.StackedInline):
    model = Emission
    form = EmissionForm
    extra = 0
    fields = [
        "label", ("wavelength_m", "wavelength_max_m"), "temporal_mode",
        ("average_power_W", "pulse_energy_J"), ("pulse_duration_s", "prf_Hz"),
        ("beam_diameter_m", "diameter_definition"), ("divergence_rad", "source_size_rad"), "fibre_na", "notes",
        "assessment_problem",
    ]
    # Set by the register when the engine cannot assess the emission.
    readonly_fields = ["assessment_problem"]
    show_change_link = True

    def has_delete_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return _may_delete(request) and super().has_delete_permission(request, obj)  # type: ignore[no-any-return]


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


class LaserInCareFilter(admin.SimpleListFilter):
    """Emissions of lasers in the register's care (not disposed or transferred), as the LSO's home counts them."""

    title = _("laser in the register's care")
    parameter_name = "in_care"

    def lookups(self, request: HttpRequest, model_admin: Any) -> list[tuple[str, str]]:
        return [("yes", _("yes")), ("no", _("no: disposed or transferred"))]

    def queryset(self, request: HttpRequest, queryset: QuerySet[Any]) -> QuerySet[Any]:
        if self.value() == "yes":
            return queryset.exclude(laser__status__in=RETIRED_STATUSES)
        if self.value() == "no":
            return queryset.filter(laser__status__in=RETIRED_STATUSES)
        return queryset


@admin.register(Emission)
class EmissionAdmin(RegisterAdmin):
    form = EmissionForm
    list_display = ["__str__", "label", "temporal_mode", "average_power", "pulse_energy"]
    list_filter = ["temporal_mode", "laser__labelled_class", ("assessment_problem", admin.EmptyFieldListFilter),
                   LaserInCareFilter]
    search_fields = ["laser__asset_tag", "label"]
    list_select_related = ["laser"]
    autocomplete_fields = ["laser"]
    readonly_fields = ["hazard_summary", "assessment_problem"]

    @admin.display(description=_("average power"), ordering="average_power_W")
    def average_power(self, emission: Emission) -> str:
        return format_si(emission.average_power_W, "W") if emission.average_power_W is not None else "-"

    @admin.display(description=_("pulse energy"), ordering="pulse_energy_J")
    def pulse_energy(self, emission: Emission) -> str:
        return format_si(emission.pulse_energy_J, "J") if emission.pulse_energy_J is not None else "-"

    @admin.display(description=_("hazard results"))
    def hazard_summary(self, emission: Emission) -> str:
        """One line per limit set; the full figures and working are on each result's page."""
        if emission.pk is None:
            return _("Computed when the emission is saved.")
        results = emission.hazard_results.all()
        if not results:
            return _("Not assessed; why is shown below.") if emission.assessment_problem else _(
                "Not assessed yet: the results are computed when the emission is saved.")
        return format_html_join(
            "", "<p>{}: NOHD {}, {}, EN 207 {}, eye MPE {} (engine {})</p>",
            ((hazard_figures.limit_set_title(result.limits),
              hazard_figures.distance(result.nohd_m, result.nohd_unbounded),
              hazard_figures.optical_density(result.od_required),
              hazard_figures.en207_marking(result.en207_marking),
              hazard_figures.eye_mpe(result), result.engine_version) for result in results),
        )

    def save_model(self, request: HttpRequest, obj: Emission, form: BaseModelForm, change: bool) -> None:
        super().save_model(request, obj, form, change)
        hazard_results_refresh(emissions=[obj], by=getattr(request.user, "person", None))


@admin.register(HazardResult)
class HazardResultAdmin(RegisterAdmin):
    """Every figure with its unit and basis; the stored floats stay in the database and the API."""

    # The short limit-set name keeps the list readable; the page of each result gives the title.
    list_display = ["emission", "limits", "nohd", "optical_density", "en207", "eye_mpe", "engine_version",
                    "computed_at"]
    list_filter = ["limits", "nohd_unbounded", "emission__laser__labelled_class"]
    search_fields = ["emission__laser__asset_tag"]
    list_select_related = ["emission__laser"]
    fieldsets = [
        (None, {"fields": ["emission", "limit_set", "engine_version", "computed_at"]}),
        (_("Figures"), {"fields": ["eye_mpe", "skin_mpe", "nohd", "diffuse_hazard_distance", "skin_hazard_distance",
                                   "optical_density", "en207"]}),
        (_("Working and warnings"), {"fields": ["warnings_text", "working_text"]}),
    ]
    readonly_fields = ["emission", "limit_set", "engine_version", "computed_at", "eye_mpe", "skin_mpe", "nohd",
                       "diffuse_hazard_distance", "skin_hazard_distance", "optical_density", "en207",
                       "warnings_text", "working_text"]

    def has_add_permission(self, request: HttpRequest) -> bool:
        return False

    def has_change_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        # Results come from the engine only; editing one by hand would defeat its working.
        return False

    @admin.display(description=_("limit set"), ordering="limits")
    def limit_set(self, result: HazardResult) -> str:
        return hazard_figures.limit_set_title(result.limits)

    @admin.display(description=_("NOHD"), ordering="nohd_m")
    def nohd(self, result: HazardResult) -> str:
        return hazard_figures.distance(result.nohd_m, result.nohd_unbounded)

    @admin.display(description=_("diffuse-reflection hazard distance"))
    def diffuse_hazard_distance(self, result: HazardResult) -> str:
        return hazard_figures.distance(result.diffuse_hazard_distance_m)

    @admin.display(description=_("skin hazard distance"))
    def skin_hazard_distance(self, result: HazardResult) -> str:
        return hazard_figures.distance(result.skin_hazard_distance_m)

    @admin.display(description=_("required optical density"), ordering="od_required")
    def optical_density(self, result: HazardResult) -> str:
        return hazard_figures.optical_density(result.od_required, result.od_exact)

    @admin.display(description=_("EN 207 marking"), ordering="en207_marking")
    def en207(self, result: HazardResult) -> str:
        return hazard_figures.en207_marking(result.en207_marking)

    @admin.display(description=_("eye MPE"))
    def eye_mpe(self, result: HazardResult) -> str:
        return hazard_figures.eye_mpe(result)

    @admin.display(description=_("skin MPE"))
    def skin_mpe(self, result: HazardResult) -> str:
        return hazard_figures.mpe(result.skin_mpe_J_m2, result.skin_mpe_W_m2, result.skin_exposure_s)

    @admin.display(description=_("warnings"))
    def warnings_text(self, result: HazardResult) -> str:
        if not result.warnings:
            return _("none")
        return format_html_join("", "<p>{}</p>", ((warning,) for warning in result.warnings))

    @admin.display(description=_("working"))
    def working_text(self, result: HazardResult) -> str:
        return format_html("<pre class=\"hazard-working\">{}</pre>", hazard_figures.working_text(result.working))


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
    list_filter = ["status", ("retired_at", admin.EmptyFieldListFilter), "laser__labelled_class", "laser__location"]
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
    form = RegisterForm
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
    form = EyewearMarkingForm
    extra = 0

    def has_delete_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return _may_delete(request) and super().has_delete_permission(request, obj)  # type: ignore[no-any-return]


@admin.register(EyewearMarking)
class EyewearMarkingAdmin(RegisterAdmin):
    form = EyewearMarkingForm
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
    form = RegisterForm
    extra = 0
    fields = ["position", "question", "control", "laser", "location", "answer", "comment"]
    # Answers go through audit_answer (the API), where a failure raises its finding; items drawn
    # from the control measures are the register's, not typed here.
    readonly_fields = ["control", "laser", "location", "answer", "comment"]
    can_delete = False


class FindingInline(admin.TabularInline):
    model = Finding
    form = RegisterForm
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
    list_filter = ["answer", "control"]
    search_fields = ["audit__reference", "question"]
    list_select_related = ["audit"]
    readonly_fields = ["control", "laser", "location", "answer", "comment"]


@admin.register(Finding)
class FindingAdmin(RetainedAdmin):
    list_display = ["audit", "severity", "laser", "location", "owner", "due_on", "status"]
    list_filter = ["status", ("retired_at", admin.EmptyFieldListFilter), "severity", "location", "owner"]
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


class WrittenByTheRegisterAdmin(admin.ModelAdmin):
    """Records the register writes itself (a log, a stored standing): shown to read, never added,
    changed or deleted here, and without history of their own."""

    def has_add_permission(self, request: HttpRequest) -> bool:
        return False

    def has_change_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return False

    def has_delete_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return False


@admin.register(SentReminder)
class SentReminderAdmin(WrittenByTheRegisterAdmin):
    """What send_reminders has sent: a log, so it is read here and written only by the command."""

    list_display = ["sent_on", "kind", "recipient", "address", "subject"]
    list_filter = ["kind", "sent_on"]
    search_fields = ["recipient__user__username", "address", "subject"]
    list_select_related = ["recipient__user"]
    date_hierarchy = "sent_on"


@admin.register(RoomStanding)
class RoomStandingAdmin(WrittenByTheRegisterAdmin):
    """Each room's stored standing, to read: the register writes it whenever what it is made from
    changes (services.standings), so it has no history and no edit."""

    list_display = ["location", "limits", "lasers", "unprotected", "beyond_room", "largest_nohd", "computed_at"]
    list_filter = ["limits"]
    search_fields = ["location__code", "location__building", "location__room"]
    list_select_related = ["location"]
    fields = ["location", "limits", "lasers", "largest_nohd", "unprotected", "unprotected_od", "unprotected_first",
              "beyond_room", "beyond_room_first", "computed_at"]
    readonly_fields = fields

    @admin.display(description=_("largest NOHD"), ordering="largest_nohd_m")
    def largest_nohd(self, standing: RoomStanding) -> str:
        return hazard_figures.distance(standing.largest_nohd_m, standing.largest_nohd_unbounded)

    @admin.display(description=_("highest OD required without adequate eyewear"))
    def unprotected_od(self, standing: RoomStanding) -> str:
        return "-" if standing.unprotected_od_max is None else hazard_figures.optical_density(standing.unprotected_od_max)


# The pages link here as the "Back office"; the admin says so in its own header.
admin.site.site_header = admin.site.site_title = _("Beamkeeper back office")
admin.site.index_title = _("The register's records")

User = get_user_model()
admin.site.unregister(User)


@admin.register(User)
class AccountAdmin(UserAdmin):
    """Accounts as the LSO keeps them: names, email, password, active or not.

    What an account may do follows its person's role (person_set_role sets its group and
    staff flag), so to anyone but a superuser the superuser and staff flags, groups and raw
    permissions are read-only, a superuser's account is read-only altogether (its password
    would open everything), and accounts are added with their person (person_create).
    """

    PRIVILEGE_FIELDS = ("is_superuser", "is_staff", "groups", "user_permissions")

    def get_readonly_fields(self, request: HttpRequest, obj: Any = None) -> Any:
        fields = super().get_readonly_fields(request, obj)
        if request.user.is_superuser:
            return fields
        return (*fields, *self.PRIVILEGE_FIELDS, "last_login", "date_joined")

    def has_add_permission(self, request: HttpRequest) -> bool:
        return bool(request.user.is_superuser) and super().has_add_permission(request)

    def has_change_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        if obj is not None and obj.is_superuser and not request.user.is_superuser:
            return False
        return super().has_change_permission(request, obj)  # type: ignore[no-any-return]

    def has_delete_permission(self, request: HttpRequest, obj: Any = None) -> bool:
        return _may_delete(request) and super().has_delete_permission(request, obj)  # type: ignore[no-any-return]
