"""Who may see and do what through the API: one policy per kind of record.

A policy answers three questions, so that viewsets hold no permission logic:

- which roles may call each action (``rules``; an action not listed is refused),
- whether the caller may act on this particular record (``Rule.on_object``, for the
  roles it binds: a researcher edits only the lasers they own), and
- which records each role can see at all (``scope``; records outside it answer 404,
  so their existence is not disclosed).

Roles: the laser safety officer may do everything; inspectors read everything including
history; researchers register and look after their own lasers and act for their own
research group; laser users see their own authorizations and training.
"""
from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from django.core.exceptions import ObjectDoesNotExist
from django.db.models import Model, Q, QuerySet
from rest_framework.permissions import BasePermission

from registry import selectors
from registry.models import Laser, Person, Role

if TYPE_CHECKING:
    from rest_framework.request import Request
    from rest_framework.views import APIView

LSO, RESEARCHER, USER, INSPECTOR = Role.LSO.value, Role.RESEARCHER.value, Role.USER.value, Role.INSPECTOR.value

ObjectCheck = Callable[[Person, Any], bool]
Scope = Callable[[Person, QuerySet[Any]], QuerySet[Any]]


def person_of(user: Any) -> Person | None:
    """The register's Person behind a request's user, or None (anonymous, or no role yet)."""
    if user is None or not user.is_authenticated:
        return None
    try:
        person: Person = user.person
    except ObjectDoesNotExist:
        return None
    return person


@dataclass(frozen=True)
class Rule:
    roles: frozenset[str]
    on_object: ObjectCheck | None = None
    # The roles ``on_object`` applies to; the others among ``roles`` may act on any record.
    checked_roles: frozenset[str] = frozenset()


def allow(*roles: str, on_object: ObjectCheck | None = None, checked: tuple[str, ...] | None = None) -> Rule:
    """A rule; ``on_object`` binds every listed role but the LSO unless ``checked`` says whom."""
    checked_roles = frozenset(checked) if checked is not None else frozenset(roles) - {LSO}
    return Rule(frozenset(roles), on_object, checked_roles if on_object is not None else frozenset())


@dataclass(frozen=True)
class Policy:
    rules: Mapping[str, Rule]
    scope: Mapping[str, Scope] = field(default_factory=dict)

    def allows(self, person: Person | None, action: str, record: Any = None) -> bool:
        """Whether ``person`` may take ``action`` (on ``record``, when the rule checks records)."""
        rule = self.rules.get(action)
        if person is None or rule is None or person.role not in rule.roles:
            return False
        if record is None or rule.on_object is None or person.role not in rule.checked_roles:
            return True
        return rule.on_object(person, record)

    def visible(self, person: Person | None, queryset: QuerySet[Any]) -> QuerySet[Any]:
        """``queryset`` narrowed to what ``person`` may see; roles without a scope see all of it."""
        if person is None:
            return queryset.none()
        narrow = self.scope.get(person.role)
        return queryset if narrow is None else narrow(person, queryset)


class RolePolicy(BasePermission):
    """Applies ``view.policy`` (a Policy) to the view's action and, for details, the object."""

    message = "Your role does not allow this."

    def has_permission(self, request: Request, view: APIView) -> bool:
        person = person_of(request.user)
        if person is None:
            if request.user and request.user.is_authenticated:
                self.message = "This account has no role in the register; ask the laser safety officer."
            return False
        if not hasattr(view, (request.method or "").lower()):
            # No handler for this method on this route: let DRF answer 405, not 403.
            return True
        rule = _rule_for(view, request.method or "")
        return rule is not None and person.role in rule.roles

    def has_object_permission(self, request: Request, view: APIView, obj: Model) -> bool:
        person = person_of(request.user)
        rule = _rule_for(view, request.method or "")
        if person is None or rule is None:
            return False
        if rule.on_object is None or person.role not in rule.checked_roles:
            return True
        return rule.on_object(person, obj)


class HasRole(BasePermission):
    """Any signed-in person with a role in the register (for views that touch no records)."""

    message = "This account has no role in the register; ask the laser safety officer."

    def has_permission(self, request: Request, view: APIView) -> bool:
        return person_of(request.user) is not None


_METADATA_METHODS = {"POST": "create", "PUT": "update", "PATCH": "partial_update"}


def _rule_for(view: APIView, method: str) -> Rule | None:
    policy: Policy = getattr(view, "policy")
    action = getattr(view, "action", None) or ""
    if action == "metadata":
        # OPTIONS needs what listing needs; DRF then asks again, per method, whether to
        # describe that method's form, with the request's method set to it.
        action = _METADATA_METHODS.get(method, "list")
    return policy.rules.get(action)


# --- object checks -------------------------------------------------------------------------

def owns_laser(person: Person, laser: Any) -> bool:
    return laser.owner_id == person.pk


def owns_parent_laser(person: Person, record: Any) -> bool:
    return record.laser.owner_id == person.pk


def owns_emission_laser(person: Person, result: Any) -> bool:
    return result.emission.laser.owner_id == person.pk


def requested_it(person: Person, authorization: Any) -> bool:
    return authorization.requested_by_id == person.pk


def is_action_owner(person: Person, finding: Any) -> bool:
    return finding.owner_id == person.pk


def reported_it(person: Person, incident: Any) -> bool:
    return incident.reported_by_id == person.pk


# --- scopes -------------------------------------------------------------------------------

def group_people(person: Person) -> Q:
    """The people a researcher acts for: themselves and their research group (as
    registry.selectors.people_visible_to)."""
    condition = Q(pk=person.pk)
    if person.research_group_id is not None:
        condition |= Q(research_group_id=person.research_group_id)
    return condition


def _people_in_group(person: Person, queryset: QuerySet[Any]) -> QuerySet[Any]:
    return queryset.filter(group_people(person))


def _only_self(person: Person, queryset: QuerySet[Any]) -> QuerySet[Any]:
    return queryset.filter(pk=person.pk)


def _records_of_group(person: Person, queryset: QuerySet[Any]) -> QuerySet[Any]:
    return queryset.filter(person__in=Person.objects.filter(group_people(person)))


def _records_of_self(person: Person, queryset: QuerySet[Any]) -> QuerySet[Any]:
    return queryset.filter(person_id=person.pk)


def _authorizations_for_researcher(person: Person, queryset: QuerySet[Any]) -> QuerySet[Any]:
    return queryset.filter(Q(person__in=Person.objects.filter(group_people(person))) | Q(laser__owner_id=person.pk))


def _findings_for_researcher(person: Person, queryset: QuerySet[Any]) -> QuerySet[Any]:
    return queryset.filter(Q(owner_id=person.pk) | Q(laser__owner_id=person.pk))


def _incidents_for_researcher(person: Person, queryset: QuerySet[Any]) -> QuerySet[Any]:
    return queryset.filter(Q(reported_by_id=person.pk) | Q(laser__owner_id=person.pk))


def _sops_of_own_lasers(person: Person, queryset: QuerySet[Any]) -> QuerySet[Any]:
    return queryset.filter(laser__in=Laser.objects.filter(authorizations__person_id=person.pk))


def _authorized_lasers(person: Person, queryset: QuerySet[Any]) -> QuerySet[Any]:
    """The lasers a laser user holds an authorization in force on (approved, unretired, not expired)."""
    return queryset.filter(pk__in=selectors.authorizations_in_force(person=person).values("laser_id"))


def visible_lasers(person: Person, queryset: QuerySet[Any]) -> QuerySet[Any]:
    """The lasers ``person`` may see (and so name in an incident report)."""
    return LASERS.visible(person, queryset)


def editable_lasers(person: Person, queryset: QuerySet[Any]) -> QuerySet[Any]:
    """Lasers ``person`` may attach emissions, SOPs and authorization requests to."""
    return queryset if person.role == LSO else queryset.filter(owner_id=person.pk)


def requestable_people(person: Person, queryset: QuerySet[Any]) -> QuerySet[Any]:
    """People ``person`` may request an authorization for."""
    return queryset if person.role == LSO else queryset.filter(group_people(person))


# --- the policies --------------------------------------------------------------------------

_READERS = (LSO, INSPECTOR, RESEARCHER)
_EVERYONE = (LSO, INSPECTOR, RESEARCHER, USER)


def _read(*roles: str, history: tuple[str, ...] = (LSO, INSPECTOR)) -> dict[str, Rule]:
    return {"list": allow(*roles), "retrieve": allow(*roles), "history": allow(*history)}


def _edit(*roles: str, on_object: ObjectCheck | None = None) -> dict[str, Rule]:
    """PUT and PATCH; which fields and in which states is the update service's decision."""
    rule = allow(*roles, on_object=on_object)
    return {"update": rule, "partial_update": rule}


LOCATIONS = Policy({**_read(*_READERS), "sign": allow(*_READERS), "create": allow(LSO), **_edit(LSO)})

LASERS = Policy({
    # A laser user reads the lasers they are authorized on, with their figures (scope below).
    **_read(*_EVERYONE),
    "history": allow(LSO, INSPECTOR, RESEARCHER, on_object=owns_laser, checked=(RESEARCHER,)),
    # Researchers register lasers; the service starts them as pending review, owned by them.
    "create": allow(LSO, RESEARCHER),
    "update": allow(LSO, RESEARCHER, on_object=owns_laser),
    "partial_update": allow(LSO, RESEARCHER, on_object=owns_laser),
    "submit": allow(LSO, RESEARCHER, on_object=owns_laser),
    "approve": allow(LSO),
    "send_back": allow(LSO),
    "change_status": allow(LSO),
    "label": allow(*_READERS),
    # The spreadsheet import (its page; the command acts as a named LSO).
    "import": allow(LSO),
}, scope={USER: _authorized_lasers})

EMISSIONS = Policy({
    **_read(*_READERS),
    "history": allow(LSO, INSPECTOR, RESEARCHER, on_object=owns_parent_laser, checked=(RESEARCHER,)),
    # Which laser a new emission may join is limited by the serializer (editable_lasers).
    "create": allow(LSO, RESEARCHER),
    "update": allow(LSO, RESEARCHER, on_object=owns_parent_laser),
    "partial_update": allow(LSO, RESEARCHER, on_object=owns_parent_laser),
})

HAZARD_RESULTS = Policy({**_read(*_READERS), "working": allow(*_READERS)})

PEOPLE = Policy(
    # Adding a person creates their account (person_create).
    {**_read(*_EVERYONE), "create": allow(LSO), **_edit(LSO)},
    scope={RESEARCHER: _people_in_group, USER: _only_self},
)

TRAINING_RECORDS = Policy(
    {**_read(*_EVERYONE), "create": allow(LSO), "retire": allow(LSO), **_edit(LSO)},
    scope={RESEARCHER: _records_of_group, USER: _records_of_self},
)

AUTHORIZATIONS = Policy(
    {
        **_read(*_EVERYONE),
        # Researchers request for people of their group (the serializer limits whom).
        "create": allow(LSO, RESEARCHER),
        "prerequisites": allow(*_EVERYONE),
        "approve": allow(LSO),
        "refuse": allow(LSO),
        "revoke": allow(LSO),
        "withdraw": allow(LSO, RESEARCHER, on_object=requested_it),
        "retire": allow(LSO),
    },
    scope={RESEARCHER: _authorizations_for_researcher, USER: _records_of_self},
)

SOPS = Policy(
    {
        **_read(*_EVERYONE),
        # Whoever may read the SOP may read its document.
        "document": allow(*_EVERYONE),
        "create": allow(LSO, RESEARCHER),
        # The researcher who owns the laser corrects their drafts; sop_update refuses approved versions.
        **_edit(LSO, RESEARCHER, on_object=owns_parent_laser),
        "approve": allow(LSO),
        # Reading the SOP is a prerequisite of one's own authorization.
        "acknowledge": allow(LSO, RESEARCHER, USER),
        "retire": allow(LSO),
    },
    scope={USER: _sops_of_own_lasers},
)

EYEWEAR = Policy({**_read(*_READERS), "create": allow(LSO), "inspect": allow(LSO), "set_markings": allow(LSO),
                  "retire": allow(LSO), **_edit(LSO)})

AUDITS = Policy({
    **_read(LSO, INSPECTOR),
    "report_pdf": allow(LSO, INSPECTOR),
    "report_json": allow(LSO, INSPECTOR),
    "create": allow(LSO),
    "start": allow(LSO),
    "answer": allow(LSO),
    "raise_finding": allow(LSO),
    "sign_off": allow(LSO),
    "retire": allow(LSO),
    **_edit(LSO),
})

FINDINGS = Policy(
    {
        **_read(*_READERS),
        # The person who owns the corrective action closes it, giving the evidence.
        "close": allow(LSO, RESEARCHER, on_object=is_action_owner),
        "retire": allow(LSO),
        **_edit(LSO),
    },
    scope={RESEARCHER: _findings_for_researcher},
)

INCIDENTS = Policy(
    # Anyone signed in reports an incident, on a laser they can see (visible_lasers).
    {**_read(*_READERS), "create": allow(*_EVERYONE), "investigate": allow(LSO), "close": allow(LSO),
     "retire": allow(LSO),
     # The reporter may correct their account while the incident is open (incident_update).
     **_edit(LSO, RESEARCHER, on_object=reported_it)},
    scope={RESEARCHER: _incidents_for_researcher},
)
