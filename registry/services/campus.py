"""Loading the demo campus (fixtures/campus.toml) into the register.

The loader is idempotent: every row is found by its natural key (asset tag, username,
room code, audit reference, ...) and updated in place, and a row whose values have not
changed is not saved again, so a second load neither duplicates rows nor writes history.
Dates in the file are whole days relative to ``today``, so that the demo always has
training that expires soon, training that has expired and reviews that are due.
"""
from __future__ import annotations

import datetime
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, TypeVar

from django.contrib.auth import get_user_model
from django.contrib.auth.hashers import make_password
from django.core.exceptions import ValidationError
from django.db import models, transaction
from django.utils import timezone

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
    Role,
    SOPAcknowledgement,
    TrainingRecord,
)
from registry.services._common import quantity
from registry.services._logging import service_action
from registry.services.hazards import hazard_results_refresh
from registry.services.lasers import emission_values
from registry.services.people import person_sync_account
from registry.services.standings import room_standings_batch, room_standings_refresh

ModelT = TypeVar("ModelT", bound=models.Model)

DEFAULT_CAMPUS_FILE = Path(__file__).resolve().parent.parent.parent / "fixtures" / "campus.toml"

# The time of day given to events that the file dates only by day.
_EVENT_TIME = datetime.time(10, 30)


@dataclass
class DemoLogin:
    username: str
    role: str
    password: str | None


@dataclass
class CampusSummary:
    site: str
    counts: dict[str, int] = field(default_factory=dict)
    saved_rows: int = 0
    logins: list[DemoLogin] = field(default_factory=list)
    not_assessed: list[tuple[str, str]] = field(default_factory=list)


def campus_read(path: Path = DEFAULT_CAMPUS_FILE) -> dict[str, Any]:
    with path.open("rb") as handle:
        return tomllib.load(handle)


def demo_password(username: str) -> str:
    """The demo password printed for a demo login: only ever set in development."""
    return f"{username}-demo"


class _Loader:
    def __init__(self, data: Mapping[str, Any], *, today: datetime.date, set_demo_passwords: bool) -> None:
        self.data = data
        self.today = today
        self.set_demo_passwords = set_demo_passwords
        self.saved_rows = 0
        self.people: dict[str, Person] = {}
        self.groups: dict[str, ResearchGroup] = {}
        self.locations: dict[str, Location] = {}
        self.lasers: dict[str, Laser] = {}
        self.logins: list[DemoLogin] = []

    # Dates and times relative to the load date.
    def day(self, offset: int | None) -> datetime.date | None:
        return None if offset is None else self.today + datetime.timedelta(days=int(offset))

    def moment(self, offset: int | None) -> datetime.datetime | None:
        date = self.day(offset)
        if date is None:
            return None
        return timezone.make_aware(datetime.datetime.combine(date, _EVENT_TIME))

    def upsert(self, model: type[ModelT], lookup: dict[str, Any], values: dict[str, Any]) -> ModelT:
        """update_or_create that validates (full_clean) and skips unchanged rows."""
        instance = model._default_manager.filter(**lookup).first()
        changed = instance is None
        if instance is None:
            instance = model(**lookup, **values)
        else:
            for name, value in values.items():
                if getattr(instance, name) != value:
                    setattr(instance, name, value)
                    changed = True
        if changed:
            try:
                instance.full_clean()
            except ValidationError as error:
                raise ValidationError(f"campus file, {model.__name__} {lookup}: {error}") from None
            instance.save()
            self.saved_rows += 1
        return instance

    def load(self) -> None:
        self.load_groups()
        self.load_people()
        self.load_locations()
        self.load_lasers()
        self.load_sops()
        self.load_training()
        self.load_authorizations()
        self.load_eyewear()
        self.load_audits()
        self.load_incidents()

    def load_groups(self) -> None:
        for row in self.data.get("groups", []):
            self.groups[row["slug"]] = self.upsert(
                ResearchGroup, {"slug": row["slug"]}, {"name": row["name"], "department": row.get("department", "")}
            )

    def load_people(self) -> None:
        user_model = get_user_model()
        rows = self.data.get("people", [])
        for row in rows:
            values = {"first_name": row.get("first_name", ""), "last_name": row.get("last_name", ""),
                      "email": row.get("email", "")}
            if not user_model._default_manager.filter(username=row["username"]).exists():
                # A new account cannot sign in until a password is set (or the demo one below).
                values["password"] = make_password(None)
            user = self.upsert(user_model, {"username": row["username"]}, values)
            password: str | None = None
            if row.get("demo_login") and self.set_demo_passwords:
                password = demo_password(row["username"])
                if not user.check_password(password):
                    user.set_password(password)
                    user.save(update_fields=["password"])
            group = self.groups[row["group"]] if row.get("group") else None
            self.people[row["username"]] = self.upsert(
                Person, {"user": user}, {"role": row["role"], "research_group": group}
            )
            if row.get("demo_login"):
                self.logins.append(DemoLogin(username=row["username"], role=row["role"], password=password))
        # Supervisors in a second pass: a supervisor may be listed after the supervisee.
        for row in rows:
            supervisor = self.people[row["supervisor"]] if row.get("supervisor") else None
            person = self.upsert(Person, {"user": self.people[row["username"]].user}, {"supervisor": supervisor})
            person_sync_account(person=person)
            self.people[row["username"]] = person

    def load_locations(self) -> None:
        site = self.data["site"]
        for row in self.data.get("locations", []):
            self.locations[row["code"]] = self.upsert(Location, {"code": row["code"]}, {
                "site": site, "building": row["building"], "room": row["room"], "name": row.get("name", ""),
                "is_controlled_area": row.get("controlled_area", False), "interlock": row.get("interlock", "none"),
                "has_warning_light": row.get("warning_light", False), "sign_posted_on": self.day(row.get("sign_posted")),
                "longest_dimension_m": quantity(row.get("longest_dimension"), field="longest_dimension", unit="m"),
            })

    def load_lasers(self) -> None:
        for row in self.data.get("lasers", []):
            laser = self.upsert(Laser, {"asset_tag": row["asset_tag"]}, {
                "manufacturer": row.get("manufacturer", ""), "model_name": row.get("model", ""),
                "serial_number": row.get("serial", ""), "laser_type": row["type"],
                "gain_medium": row.get("gain_medium", ""), "labelled_class": row["class"],
                "embedded_class": row.get("embedded_class", ""), "status": row["status"],
                "status_note": row.get("status_note", ""), "review_comments": row.get("review_comments", ""),
                "owner": self.people[row["owner"]] if row.get("owner") else None,
                "location": self.locations[row["location"]] if row.get("location") else None,
                "description": row.get("description", ""), "received_on": self.day(row.get("received")),
                "retired_on": self.day(row.get("retired")),
            })
            self.lasers[row["asset_tag"]] = laser
            for emission in row.get("emissions", []):
                values = emission_values(
                    wavelength_m=emission["wavelength"], wavelength_max_m=emission.get("wavelength_max"),
                    temporal_mode=emission["mode"], average_power_W=emission.get("average_power"),
                    pulse_energy_J=emission.get("pulse_energy"), pulse_duration_s=emission.get("pulse_duration"),
                    prf_Hz=emission.get("prf"), beam_diameter_m=emission.get("beam_diameter"),
                    diameter_definition=emission.get("diameter_at", "1/e2"),
                    divergence_rad=emission.get("divergence"), source_size_rad=emission.get("source_size"),
                    fibre_na=emission.get("fibre_na"),
                )
                self.upsert(Emission, {"laser": laser, "label": emission["label"]}, values)

    def load_sops(self) -> None:
        lso = self._first_lso()
        for row in self.data.get("sops", []):
            approved = self.day(row.get("approved"))
            sop = self.upsert(SOP, {"laser": self.lasers[row["laser"]], "version": row["version"]}, {
                "title": row["title"], "status": row["status"], "approved_on": approved,
                "approved_by": lso if approved is not None else None, "review_due": self.day(row.get("review_due")),
            })
            for username in row.get("acknowledged_by", []):
                # Read a week after approval, or today for an SOP approved in the last week.
                read_on = min(self.today, approved + datetime.timedelta(days=7)) if approved else self.today
                self.upsert(SOPAcknowledgement, {"sop": sop, "person": self.people[username]}, {
                    "acknowledged_at": timezone.make_aware(datetime.datetime.combine(read_on, _EVENT_TIME)),
                })

    def load_training(self) -> None:
        for row in self.data.get("training", []):
            laser = self.lasers[row["laser"]] if row.get("laser") else None
            self.upsert(TrainingRecord, {
                "person": self.people[row["person"]], "course": row["course"], "laser": laser, "title": row["title"],
            }, {
                "completed_on": self.day(row["completed"]), "valid_until": self.day(row.get("valid_until")),
                "evidence": row.get("evidence", ""),
                "verified_by": self.people[row["verified_by"]] if row.get("verified_by") else None,
            })

    def load_authorizations(self) -> None:
        lso = self._first_lso()
        for row in self.data.get("authorizations", []):
            decided = row.get("decided")
            requested = (decided - 7) if decided is not None else -3
            self.upsert(Authorization, {"person": self.people[row["person"]], "laser": self.lasers[row["laser"]]}, {
                "status": row["status"], "requested_by": self.people[row["requested_by"]],
                "requested_at": self.moment(requested), "decided_by": lso if decided is not None else None,
                "decided_at": self.moment(decided), "decision_reason": row.get("decision_reason", ""),
                "conditions": row.get("conditions", ""), "valid_until": self.day(row.get("valid_until")),
            })

    def load_eyewear(self) -> None:
        for row in self.data.get("eyewear", []):
            eyewear = self.upsert(Eyewear, {"inventory_tag": row["tag"]}, {
                "manufacturer": row.get("manufacturer", ""), "model_name": row.get("model", ""),
                "description": row.get("description", ""), "location": self.locations[row["location"]],
                "quantity": row.get("quantity", 1), "condition": row.get("condition", "good"),
                "last_inspected_on": self.day(row.get("inspected")),
            })
            for marking in row.get("markings", []):
                # A band is often marked twice, "D 740-1070 LB5 + IRM 740-1070 LB7": one row per test letters.
                self.upsert(EyewearMarking, {
                    "eyewear": eyewear,
                    "wavelength_min_m": quantity(marking["from"], field="from", unit="m"),
                    "wavelength_max_m": quantity(marking["to"], field="to", unit="m"),
                    "en207_conditions": marking.get("en207", ""),
                }, {
                    "optical_density": marking.get("od"), "en207_scale": marking.get("lb"),
                })

    def load_audits(self) -> None:
        for row in self.data.get("audits", []):
            signed_off = row.get("signed_off")
            audit = self.upsert(Audit, {"reference": row["reference"]}, {
                "scope": row["scope"],
                "location": self.locations[row["location"]] if row.get("location") else None,
                "site": self.data["site"] if row["scope"] == "site" else "",
                "planned_on": self.day(row["planned"]), "conducted_on": self.day(row.get("conducted")),
                "auditor": self.people[row["auditor"]], "summary": row.get("summary", ""),
                "status": "signed_off" if signed_off is not None else ("in_progress" if row.get("conducted") else
                                                                       "planned"),
                "signed_off_by": self.people[row["auditor"]] if signed_off is not None else None,
                "signed_off_at": self.moment(signed_off),
            })
            audit.lasers.set([self.lasers[tag] for tag in row.get("lasers", [])])
            for position, item in enumerate(row.get("checklist", []), start=1):
                self.upsert(AuditChecklistItem, {"audit": audit, "position": position}, {
                    "question": item["question"], "answer": item.get("answer", ""), "comment": item.get("comment", ""),
                })
            for finding in row.get("findings", []):
                closed = finding.get("closed")
                self.upsert(Finding, {"audit": audit, "description": finding["description"]}, {
                    "severity": finding["severity"],
                    "laser": self.lasers[finding["laser"]] if finding.get("laser") else None,
                    "location": audit.location, "corrective_action": finding.get("corrective_action", ""),
                    "owner": self.people[finding["owner"]], "due_on": self.day(finding.get("due")),
                    "status": "closed" if closed is not None else "open", "closed_on": self.day(closed),
                    "closed_by": self.people[finding["owner"]] if closed is not None else None,
                    "closure_evidence": finding.get("evidence", ""),
                })

    def load_incidents(self) -> None:
        for row in self.data.get("incidents", []):
            incident = self.upsert(Incident, {"reference": row["reference"]}, {
                "kind": row["kind"], "occurred_at": self.moment(row["occurred"]),
                "laser": self.lasers[row["laser"]] if row.get("laser") else None,
                "location": self.locations[row["location"]] if row.get("location") else None,
                "reported_by": self.people[row["reported_by"]], "description": row["description"],
                "follow_up": row.get("follow_up", ""), "status": row.get("status", "reported"),
                "closed_at": self.moment(row.get("closed")),
            })
            incident.people_involved.set([self.people[username] for username in row.get("people_involved", [])])

    def _first_lso(self) -> Person:
        for person in self.people.values():
            if person.role == Role.LSO:
                return person
        raise ValidationError("campus file: at least one person must have the role 'lso'.")


@service_action
@transaction.atomic
def campus_load(*, data: Mapping[str, Any], today: datetime.date | None = None,
                set_demo_passwords: bool = False) -> CampusSummary:
    """Load (or refresh) the demo campus described by ``data`` (see fixtures/README.md).

    With ``set_demo_passwords`` the demo logins get the password demo_password(username);
    without it, new accounts get unusable passwords and existing ones are left alone.
    """
    loader = _Loader(data, today=today or timezone.localdate(), set_demo_passwords=set_demo_passwords)
    loader.load()
    with room_standings_batch():
        hazards = hazard_results_refresh(
            emissions=Emission.objects.select_related("laser").prefetch_related("hazard_results"), only_stale=True)
        # The loader writes lasers, eyewear and rooms without the services that would refresh them.
        room_standings_refresh(locations=Location.objects.values_list("pk", flat=True))
    counts = {
        "locations": Location.objects.count(), "lasers": Laser.objects.count(), "emissions": Emission.objects.count(),
        "people": Person.objects.count(), "training records": TrainingRecord.objects.count(),
        "authorizations": Authorization.objects.count(), "SOPs": SOP.objects.count(),
        "eyewear": Eyewear.objects.count(), "audits": Audit.objects.count(), "findings": Finding.objects.count(),
        "incidents": Incident.objects.count(), "hazard results": HazardResult.objects.count(),
    }
    return CampusSummary(site=data["site"], counts=counts, saved_rows=loader.saved_rows + hazards.assessed,
                         logins=loader.logins, not_assessed=[(str(emission), reason)
                                                             for emission, reason in hazards.not_assessed])
