"""Settings from the environment: typed readers that fail loudly, and a production mode
that refuses to start without a secret and passes Django's deployment checks."""
from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest
from django.conf import settings
from django.core.exceptions import ImproperlyConfigured

from registry.env import (
    DEVELOPMENT_SECRET_KEY,
    env_bool,
    env_choice,
    env_int,
    env_list,
    env_mapping,
    env_secret,
    env_str,
    env_time_zone,
    refuse_unsafe_production,
)

ROOT = Path(__file__).resolve().parents[2]

# 64 characters of no pattern: what `manage.py check --deploy` accepts as a real key.
PRODUCTION_KEY = "p7Vq2xLw9RtY4zKc8NbM3sJd6HfG1aQe5UoI0lZrXvCtBnWmAsDfGhJkLqWeRtYu"


def run_manage(*args: str, **env: str) -> subprocess.CompletedProcess[str]:
    environment = {name: value for name, value in os.environ.items()
                   if name not in {"DEBUG", "SECRET_KEY", "SECRET_KEY_FILE", "ALLOWED_HOSTS", "BEAMKEEPER_ENV"}}
    environment.update(env)
    return subprocess.run([sys.executable, "manage.py", *args], cwd=ROOT, env=environment, capture_output=True,
                          text=True, timeout=120)


def test_production_settings_pass_the_deployment_checks() -> None:
    result = run_manage("check", "--deploy", "--fail-level", "WARNING", BEAMKEEPER_ENV="production",
                        SECRET_KEY=PRODUCTION_KEY, ALLOWED_HOSTS="register.campus.example",
                        EMAIL_HOST="smtp.campus.example")
    assert result.returncode == 0, result.stderr
    # The one check silenced is axes.W006, on purpose (registry/settings.py says why).
    assert "System check identified no issues (1 silenced)." in result.stdout
    assert result.stderr == ""


def test_the_only_silenced_check_is_the_lockout_by_address() -> None:
    assert settings.SILENCED_SYSTEM_CHECKS == ["axes.W006"]


def test_production_refuses_to_start_without_a_secret_key() -> None:
    result = run_manage("check", BEAMKEEPER_ENV="production", ALLOWED_HOSTS="register.campus.example")
    assert result.returncode != 0
    assert "BEAMKEEPER_ENV=production needs SECRET_KEY or SECRET_KEY_FILE." in result.stderr


def test_production_refuses_debug() -> None:
    result = run_manage("check", BEAMKEEPER_ENV="production", SECRET_KEY=PRODUCTION_KEY,
                        ALLOWED_HOSTS="register.campus.example", DEBUG="true")
    assert result.returncode != 0
    assert "DEBUG=true is refused when BEAMKEEPER_ENV=production." in result.stderr


@pytest.mark.parametrize(("key", "message"), [
    (DEVELOPMENT_SECRET_KEY, "SECRET_KEY is the development key published with the code"),
    ("short-but-varied-0123456789", "SECRET_KEY is too weak"),
    ("a" * 64, "SECRET_KEY is too weak"),
    ("django-insecure-" + PRODUCTION_KEY, "SECRET_KEY is too weak"),
])
def test_production_refuses_a_weak_or_published_secret_key(key: str, message: str) -> None:
    with pytest.raises(ImproperlyConfigured, match=message):
        refuse_unsafe_production(secret_key=key, debug=False, allowed_hosts=["register.campus.example"])


def test_production_refuses_any_host() -> None:
    with pytest.raises(ImproperlyConfigured, match=r"ALLOWED_HOSTS=\* is refused"):
        refuse_unsafe_production(secret_key=PRODUCTION_KEY, debug=False,
                                 allowed_hosts=["register.campus.example", "*"])


def test_production_accepts_a_strong_key_and_named_hosts() -> None:
    assert refuse_unsafe_production(secret_key=PRODUCTION_KEY, debug=False,
                                    allowed_hosts=["register.campus.example", ".campus.example"]) is None


def test_production_refuses_the_published_key_and_any_host_at_start() -> None:
    published = run_manage("check", BEAMKEEPER_ENV="production", SECRET_KEY=DEVELOPMENT_SECRET_KEY,
                           ALLOWED_HOSTS="register.campus.example")
    assert published.returncode != 0
    assert "SECRET_KEY is the development key published with the code" in published.stderr
    any_host = run_manage("check", BEAMKEEPER_ENV="production", SECRET_KEY=PRODUCTION_KEY, ALLOWED_HOSTS="*")
    assert any_host.returncode != 0
    assert "ALLOWED_HOSTS=* is refused" in any_host.stderr


def test_production_without_mail_gets_a_deployment_warning() -> None:
    result = run_manage("check", "--deploy", BEAMKEEPER_ENV="production", SECRET_KEY=PRODUCTION_KEY,
                        ALLOWED_HOSTS="register.campus.example", EMAIL_HOST="")
    assert "registry.W001" in result.stderr


@pytest.mark.parametrize(("environment", "kept_seconds"), [
    ({"BEAMKEEPER_ENV": "production", "SECRET_KEY": PRODUCTION_KEY, "ALLOWED_HOSTS": "register.campus.example"}, "600"),
    ({}, "0"),
    ({"BEAMKEEPER_ENV": "production", "SECRET_KEY": PRODUCTION_KEY, "ALLOWED_HOSTS": "register.campus.example",
      "DATABASE_CONN_MAX_AGE": "0"}, "0"),
])
def test_production_keeps_its_database_connection_between_requests(environment: dict[str, str],
                                                                   kept_seconds: str) -> None:
    show = ("from django.conf import settings; database = settings.DATABASES['default']; "
            "print(database['CONN_MAX_AGE'], database['CONN_HEALTH_CHECKS'])")
    result = run_manage("shell", "--no-imports", "-c", show, **{"DATABASE_CONN_MAX_AGE": "", **environment})
    assert result.returncode == 0, result.stderr
    assert result.stdout.split() == [kept_seconds, "True"]


def test_development_mode_runs_the_checks_with_no_environment() -> None:
    result = run_manage("check")
    assert result.returncode == 0, result.stderr


@pytest.mark.parametrize(("value", "expected"), [("true", True), ("FALSE", False), ("", True)])
def test_env_bool_reads_true_and_false(monkeypatch: pytest.MonkeyPatch, value: str, expected: bool) -> None:
    monkeypatch.setenv("BK_FLAG", value)
    assert env_bool("BK_FLAG", default=True) is expected


@pytest.mark.parametrize("value", ["yes", "1", "on", "tru"])
def test_env_bool_refuses_anything_else(monkeypatch: pytest.MonkeyPatch, value: str) -> None:
    monkeypatch.setenv("BK_FLAG", value)
    with pytest.raises(ImproperlyConfigured, match="BK_FLAG must be 'true' or 'false'"):
        env_bool("BK_FLAG", default=False)


def test_env_readers_name_the_variable(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("BK_PORT", "25x")
    monkeypatch.setenv("BK_HOSTS", "a.example,,b.example")
    monkeypatch.setenv("BK_ZONE", "Mars/Olympus_Mons")
    monkeypatch.setenv("BK_MODE", "staging")
    monkeypatch.delenv("BK_MISSING", raising=False)
    with pytest.raises(ImproperlyConfigured, match="BK_PORT must be an integer, got '25x'"):
        env_int("BK_PORT", 25)
    with pytest.raises(ImproperlyConfigured, match="BK_HOSTS has an empty item"):
        env_list("BK_HOSTS", [])
    with pytest.raises(ImproperlyConfigured, match="BK_ZONE is not a known time zone"):
        env_time_zone("BK_ZONE", "UTC")
    with pytest.raises(ImproperlyConfigured, match="BK_MODE must be one of development, production"):
        env_choice("BK_MODE", "development", ("development", "production"))
    with pytest.raises(ImproperlyConfigured, match="BK_MISSING must be set"):
        env_str("BK_MISSING")


def test_env_list_and_time_zone_values(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("BK_HOSTS", " a.example , b.example")
    monkeypatch.setenv("BK_ZONE", "Europe/Vienna")
    assert env_list("BK_HOSTS", []) == ["a.example", "b.example"]
    assert env_time_zone("BK_ZONE", "UTC") == "Europe/Vienna"


def test_a_secret_can_come_from_a_file(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    secret = tmp_path / "key"
    secret.write_text(PRODUCTION_KEY + "\n")
    monkeypatch.delenv("BK_SECRET", raising=False)
    monkeypatch.setenv("BK_SECRET_FILE", str(secret))
    assert env_secret("BK_SECRET") == PRODUCTION_KEY
    monkeypatch.setenv("BK_SECRET", "also-set")
    with pytest.raises(ImproperlyConfigured, match="Set either BK_SECRET or BK_SECRET_FILE, not both."):
        env_secret("BK_SECRET")


def test_env_mapping_reads_pairs_and_names_the_variable(monkeypatch: pytest.MonkeyPatch) -> None:
    keys = ("2", "3B", "4")
    assert env_mapping("BK_WORDS", {"4": "DANGER"}, keys=keys) == {"4": "DANGER"}
    monkeypatch.setenv("BK_WORDS", "3B = WARNING, 4=DANGER")
    assert env_mapping("BK_WORDS", {}, keys=keys) == {"3B": "WARNING", "4": "DANGER"}
    for bad in ("5=DANGER", "4", "4="):
        monkeypatch.setenv("BK_WORDS", bad)
        with pytest.raises(ImproperlyConfigured, match="BK_WORDS"):
            env_mapping("BK_WORDS", {}, keys=keys)
