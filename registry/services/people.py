"""Writes for accounts, people and research groups, and the role-to-permission mapping.

A person's role is stored on Person. The admin works with Django permissions, so each
role also has a Django group whose permissions follow ROLE_PERMISSIONS; person_create and
person_set_role keep the account's group membership and staff flag in step with its role.
"""
from __future__ import annotations

from django.contrib.auth import get_user_model, password_validation
from django.contrib.auth.models import AbstractUser, Group, Permission
from django.core.exceptions import ValidationError
from typing import Any

from django.db import transaction

from registry.models import Person, ResearchGroup, Role
from registry.services._common import apply_changes, lock_for_change, require_role, validated_save
from registry.services._logging import service_action

ROLE_GROUP_NAMES: dict[str, str] = {
    Role.LSO: "Laser safety officers",
    Role.RESEARCHER: "Researchers",
    Role.USER: "Laser users",
    Role.INSPECTOR: "Inspectors",
}

# Which admin permissions each role's Django group carries, as codename prefixes on the
# registry app's models (plus the account models for the LSO). Researchers and users work
# through the API and the web pages, not the admin.
ROLE_PERMISSIONS: dict[str, tuple[str, ...]] = {
    Role.LSO: ("add_", "change_", "view_"),
    Role.INSPECTOR: ("view_",),
    Role.RESEARCHER: (),
    Role.USER: (),
}
STAFF_ROLES = frozenset({Role.LSO, Role.INSPECTOR})

# The account (username, name, email) belongs to Django's user model, not to Person.
PERSON_EDITABLE_FIELDS = frozenset({"role", "research_group", "supervisor", "phone"})


def role_groups_ensure() -> dict[str, Group]:
    """Create or refresh the four role groups and their permissions; returns them by role."""
    registry_permissions = Permission.objects.filter(content_type__app_label="registry")
    account_permissions = Permission.objects.filter(content_type__app_label="auth", content_type__model="user")
    groups: dict[str, Group] = {}
    for role, name in ROLE_GROUP_NAMES.items():
        group, _ = Group.objects.get_or_create(name=name)
        prefixes = ROLE_PERMISSIONS[role]
        chosen = [permission for permission in registry_permissions if permission.codename.startswith(prefixes)]
        if role == Role.LSO:
            chosen += [permission for permission in account_permissions if permission.codename.startswith(prefixes)]
        group.permissions.set(chosen)
        groups[role] = group
    return groups


def person_sync_account(*, person: Person) -> None:
    """Put the account in its role's Django group (and only that one); staff for LSO and inspector."""
    groups = role_groups_ensure()
    user = person.user
    user.groups.remove(*[group for role, group in groups.items() if role != person.role])
    user.groups.add(groups[person.role])
    staff = person.role in STAFF_ROLES
    if user.is_staff != staff and not user.is_superuser:
        user.is_staff = staff
        user.save(update_fields=["is_staff"])


@service_action
@transaction.atomic
def person_create(
    *,
    username: str,
    role: str,
    first_name: str = "",
    last_name: str = "",
    email: str = "",
    password: str | None = None,
    research_group: ResearchGroup | None = None,
    supervisor: Person | None = None,
    phone: str = "",
    by: Person | None = None,
) -> Person:
    """A new account and its person. Without a password the account cannot sign in
    until one is set (an unusable password, not an empty one); a password given is held
    to the site's password validators (AUTH_PASSWORD_VALIDATORS), refused keyed "password"."""
    user: AbstractUser = get_user_model()(username=username, first_name=first_name, last_name=last_name,
                                          email=email)
    if password is None:
        user.set_unusable_password()
    else:
        try:
            password_validation.validate_password(password, user)
        except ValidationError as error:
            raise ValidationError({"password": error.messages}) from None
        user.set_password(password)
    user.full_clean()
    user.save()
    person = validated_save(
        Person(user=user, role=role, research_group=research_group, supervisor=supervisor, phone=phone), by=by
    )
    person_sync_account(person=person)
    return person


@service_action
@transaction.atomic
def person_set_role(*, person: Person, role: str, by: Person) -> Person:
    require_role(by, Role.LSO, action="change a person's role")
    lock_for_change(person)
    return _set_role(person, role, by=by)


def _set_role(person: Person, role: str, *, by: Person) -> Person:
    person.role = role
    validated_save(person, by=by)
    person_sync_account(person=person)
    return person


@service_action
@transaction.atomic
def person_update(*, person: Person, by: Person | None, **changes: Any) -> Person:
    """Change the given PERSON_EDITABLE_FIELDS only; a new role goes through person_set_role
    (LSO only), which also moves the account to the role's group."""
    role = changes.pop("role", None)
    lock_for_change(person)
    apply_changes(person, changes, editable=PERSON_EDITABLE_FIELDS - {"role"}, what="a person")
    if role is None or role == person.role:
        return validated_save(person, by=by)
    if by is None:
        raise ValidationError({"role": "A role change needs the laser safety officer who makes it."})
    require_role(by, Role.LSO, action="change a person's role")
    # Saved with the other changes, as one history entry.
    return _set_role(person, role, by=by)


@service_action
@transaction.atomic
def research_group_create(*, slug: str, name: str, department: str = "", by: Person | None = None) -> ResearchGroup:
    return validated_save(ResearchGroup(slug=slug, name=name, department=department), by=by)
