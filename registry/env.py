"""Typed readers for settings taken from the environment.

Each reader fails loudly (ImproperlyConfigured naming the variable) on a value it cannot
read, instead of guessing: "yes", "1" or "on" are not booleans here. Secrets may also come
from a file named by ``<NAME>_FILE`` (the way container secrets are mounted).
"""
from __future__ import annotations

import os
import zoneinfo
from typing import Any
from urllib.parse import urlsplit

from django.core.exceptions import ImproperlyConfigured

try:
    # What `check --deploy` calls a weak key (security.W009): short, few distinct
    # characters, or Django's "django-insecure-" prefix.
    from django.core.checks.security.base import _check_secret_key as _strong_secret_key
except ImportError:  # A Django that renamed its private test: the same criteria.
    def _strong_secret_key(secret_key: str) -> bool:
        return len(set(secret_key)) >= 5 and len(secret_key) >= 50 and not secret_key.startswith("django-insecure-")

_TRUE = "true"
_FALSE = "false"

# Published with the code, so sessions survive restarts of runserver; never a production key.
DEVELOPMENT_SECRET_KEY = "development-only-key-not-secret-do-not-deploy-0123456789abcdef"


def env_str(name: str, default: str | None = None) -> str:
    """The variable as text; without a default, a missing or empty variable is an error."""
    value = os.environ.get(name, "")
    if value:
        return value
    if default is None:
        raise ImproperlyConfigured(f"The environment variable {name} must be set.")
    return default


def env_secret(name: str) -> str | None:
    """A secret from ``NAME`` or from the file named by ``NAME_FILE``; None when neither is set."""
    value = os.environ.get(name, "")
    path = os.environ.get(f"{name}_FILE", "")
    if value and path:
        raise ImproperlyConfigured(f"Set either {name} or {name}_FILE, not both.")
    if path:
        try:
            with open(path, encoding="utf-8") as handle:
                value = handle.read().strip()
        except OSError as error:
            raise ImproperlyConfigured(f"{name}_FILE: cannot read {path!r}: {error.strerror}") from None
        if not value:
            raise ImproperlyConfigured(f"{name}_FILE: {path!r} is empty.")
    return value or None


def env_bool(name: str, default: bool) -> bool:
    """Exactly "true" or "false" (any case); anything else is an error."""
    value = os.environ.get(name, "").strip().lower()
    if not value:
        return default
    if value == _TRUE:
        return True
    if value == _FALSE:
        return False
    raise ImproperlyConfigured(f"The environment variable {name} must be 'true' or 'false', got {value!r}.")


def env_int(name: str, default: int, *, minimum: int | None = None) -> int:
    value = os.environ.get(name, "").strip()
    if not value:
        return default
    try:
        number = int(value)
    except ValueError:
        raise ImproperlyConfigured(f"The environment variable {name} must be an integer, got {value!r}.") from None
    if minimum is not None and number < minimum:
        raise ImproperlyConfigured(f"The environment variable {name} must be at least {minimum}, got {number}.")
    return number


def env_mapping(name: str, default: dict[str, str], *, keys: tuple[str, ...]) -> dict[str, str]:
    """Comma-separated ``key=value`` pairs, each key one of ``keys``; keys left out keep no value.

    "3B=WARNING,4=DANGER" -> {"3B": "WARNING", "4": "DANGER"}. Unset: ``default``.
    """
    pairs = env_list(name, [])
    if not pairs:
        return dict(default)
    mapping: dict[str, str] = {}
    for pair in pairs:
        key, equals, value = (part.strip() for part in pair.partition("="))
        if not equals or not value or key not in keys:
            raise ImproperlyConfigured(
                f"The environment variable {name} must be comma-separated KEY=VALUE pairs with KEY one of "
                f"{', '.join(keys)}; got {pair!r}.")
        mapping[key] = value
    return mapping


def env_list(name: str, default: list[str]) -> list[str]:
    """A comma-separated list; blanks around items are dropped, empty items are an error."""
    value = os.environ.get(name, "")
    if not value.strip():
        return list(default)
    items = [item.strip() for item in value.split(",")]
    if any(not item for item in items):
        raise ImproperlyConfigured(f"The environment variable {name} has an empty item: {value!r}.")
    return items


def env_choice(name: str, default: str, choices: tuple[str, ...]) -> str:
    value = os.environ.get(name, "").strip() or default
    if value not in choices:
        raise ImproperlyConfigured(
            f"The environment variable {name} must be one of {', '.join(choices)}; got {value!r}."
        )
    return value


def env_time_zone(name: str, default: str) -> str:
    value = env_str(name, default)
    try:
        zoneinfo.ZoneInfo(value)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError):
        raise ImproperlyConfigured(f"The environment variable {name} is not a known time zone: {value!r}.") from None
    return value


def refuse_unsafe_production(*, secret_key: str | None, debug: bool, allowed_hosts: list[str]) -> None:
    """BEAMKEEPER_ENV=production refuses to start on a setting that would leave it open:
    no SECRET_KEY, a weak one (security.W009) or the published development key; DEBUG on;
    no ALLOWED_HOSTS, or "*" among them (any Host header accepted, so links in mail and
    password resets could point anywhere)."""
    if secret_key is None:
        raise ImproperlyConfigured("BEAMKEEPER_ENV=production needs SECRET_KEY or SECRET_KEY_FILE.")
    if secret_key == DEVELOPMENT_SECRET_KEY:
        raise ImproperlyConfigured("SECRET_KEY is the development key published with the code; "
                                   "BEAMKEEPER_ENV=production needs a key of its own.")
    if not _strong_secret_key(secret_key):
        raise ImproperlyConfigured("SECRET_KEY is too weak for BEAMKEEPER_ENV=production: it needs at least 50 "
                                   "characters, 5 of them different, and not the 'django-insecure-' prefix "
                                   "(python -c 'import secrets; print(secrets.token_urlsafe(50))' makes one).")
    if debug:
        raise ImproperlyConfigured("DEBUG=true is refused when BEAMKEEPER_ENV=production.")
    if not allowed_hosts:
        raise ImproperlyConfigured("BEAMKEEPER_ENV=production needs ALLOWED_HOSTS (comma-separated host names).")
    if "*" in allowed_hosts:
        raise ImproperlyConfigured("ALLOWED_HOSTS=* is refused when BEAMKEEPER_ENV=production; name the hosts.")


# The cache every server shares (throttles, sign-in lockout) when CACHE_URL names none.
DATABASE_CACHE_TABLE = "beamkeeper_cache"


def env_cache(name: str, *, shared_by_default: bool) -> dict[str, Any]:
    """Django's default cache: Redis when ``name`` holds a redis:// or rediss:// URL, else the
    database cache (table DATABASE_CACHE_TABLE, made by ``manage.py createcachetable``) when
    ``shared_by_default``, else local memory, which each process keeps to itself."""
    url = os.environ.get(name, "").strip()
    if url:
        parts = urlsplit(url)
        if parts.scheme not in ("redis", "rediss") or not parts.hostname:
            raise ImproperlyConfigured(
                f"The environment variable {name} must be a redis:// or rediss:// URL with a host, got {url!r}.")
        return {"BACKEND": "django.core.cache.backends.redis.RedisCache", "LOCATION": url,
                "KEY_PREFIX": "beamkeeper"}
    if shared_by_default:
        return {"BACKEND": "django.core.cache.backends.db.DatabaseCache", "LOCATION": DATABASE_CACHE_TABLE}
    return {"BACKEND": "django.core.cache.backends.locmem.LocMemCache"}
