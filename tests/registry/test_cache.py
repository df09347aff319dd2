"""The shared cache: chosen from the environment, and shared by every worker when it is Redis,
so that a throttle counts the attempts made at all of them."""
from __future__ import annotations

import os
import uuid
from collections.abc import Iterator

import pytest
from django.core.cache.backends.redis import RedisCache
from django.core.exceptions import ImproperlyConfigured
from rest_framework.parsers import JSONParser
from rest_framework.request import Request
from rest_framework.test import APIRequestFactory
from rest_framework.throttling import ScopedRateThrottle

from registry.api.auth import SignInUsernameThrottle, TokenSignInView
from registry.env import DATABASE_CACHE_TABLE, env_cache

# Redis runs on the development machines and in CI (.ci/run starts it); database 15 is the tests'.
REDIS_URL = os.environ.get("REDIS_TEST_URL", "redis://127.0.0.1:6379/15")


@pytest.mark.parametrize(("url", "production", "backend", "location"), [
    ("", False, "django.core.cache.backends.locmem.LocMemCache", None),
    ("", True, "django.core.cache.backends.db.DatabaseCache", DATABASE_CACHE_TABLE),
    ("redis://cache.campus.example:6379/0", False, "django.core.cache.backends.redis.RedisCache",
     "redis://cache.campus.example:6379/0"),
    ("rediss://:secret@cache.campus.example:6380/2", True, "django.core.cache.backends.redis.RedisCache",
     "rediss://:secret@cache.campus.example:6380/2"),
])
def test_the_cache_comes_from_the_environment(monkeypatch: pytest.MonkeyPatch, url: str, production: bool,
                                              backend: str, location: str | None) -> None:
    monkeypatch.setenv("CACHE_URL", url)
    cache = env_cache("CACHE_URL", shared_by_default=production)
    assert cache["BACKEND"] == backend
    assert cache.get("LOCATION") == location


@pytest.mark.parametrize("url", ["memcached://cache:11211", "redis://", "cache.campus.example:6379"])
def test_a_cache_url_that_names_no_redis_server_is_refused(monkeypatch: pytest.MonkeyPatch, url: str) -> None:
    monkeypatch.setenv("CACHE_URL", url)
    with pytest.raises(ImproperlyConfigured, match="CACHE_URL must be a redis:// or rediss:// URL with a host"):
        env_cache("CACHE_URL", shared_by_default=True)


@pytest.fixture
def redis_clients() -> Iterator[tuple[RedisCache, RedisCache]]:
    """Two clients of one Redis server, each with its own connection pool, as two gunicorn
    workers (or two servers) have; under a key prefix of this test's own."""
    params = {"KEY_PREFIX": f"test-{uuid.uuid4().hex}"}
    first, second = RedisCache(REDIS_URL, params), RedisCache(REDIS_URL, params)
    try:
        first.get("ping")
    except Exception as error:  # noqa: BLE001 - any failure to connect means no Redis here
        pytest.skip(f"no Redis at {REDIS_URL}: {error}")
    yield first, second
    first.clear()


def _sign_in_attempt(username: str) -> Request:
    request = APIRequestFactory().post("/api/v1/auth/token/", {"username": username, "password": "guess"},
                                       format="json", REMOTE_ADDR="192.0.2.7")
    return Request(request, parsers=[JSONParser()])


def test_two_workers_share_the_sign_in_throttles_through_redis(redis_clients: tuple[RedisCache, RedisCache]) -> None:
    view = TokenSignInView()
    workers = []
    for client in redis_clients:
        by_username, by_address = SignInUsernameThrottle(), ScopedRateThrottle()
        by_username.cache = by_address.cache = client
        workers.append((by_username, by_address))

    def allowed(worker: int) -> tuple[bool, bool]:
        by_username, by_address = workers[worker]
        request = _sign_in_attempt("ada")
        return by_username.allow_request(request, view), by_address.allow_request(request, view)

    # Per username: 5 a minute, per address: 10 a minute (the defaults of API_SIGN_IN_*_RATE),
    # whichever worker the attempts reach, taking turns.
    answers = [allowed(attempt % 2) for attempt in range(11)]
    assert [by_username for by_username, _ in answers] == [True] * 5 + [False] * 6
    assert [by_address for _, by_address in answers] == [True] * 10 + [False]
    # Each worker alone saw at most six attempts, yet both refuse: the counters are shared.
    assert allowed(0) == (False, False) and allowed(1) == (False, False)
