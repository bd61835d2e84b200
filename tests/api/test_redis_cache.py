"""The shared cache on a real Redis server, as a deployment with REDIS_URL runs it: the
throttles' counts live there, so every worker process (and every machine) sees one count.

``make test`` runs these in its PostgreSQL pass, inside ``scripts/with-redis.sh``, which
starts a throwaway Redis and sets REDIS_URL; elsewhere (the SQLite pass, a bare ``pytest``)
they are skipped with the reason. Under REQUIRE_REDIS=1 (CI) the script itself fails when it
cannot start Redis, so the PostgreSQL pass never skips them silently.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest
from django.core.cache import cache
from rest_framework.test import APIClient

from tests.processes import production_env

ROOT = Path(__file__).resolve().parents[2]
REDIS_URL = os.environ.get("REDIS_URL", "")

pytestmark = pytest.mark.skipif(
    not REDIS_URL, reason="no REDIS_URL: `make test` runs these inside scripts/with-redis.sh"
)

REDIS_CACHE = {
    "default": {"BACKEND": "django.core.cache.backends.redis.RedisCache", "LOCATION": REDIS_URL}
}


def _production_process(code: str) -> str:
    """Run ``code`` in a fresh process on the production settings with REDIS_URL set."""
    env = production_env(REDIS_URL=REDIS_URL)
    setup = "import django; django.setup(); from django.core.cache import cache; "
    result = subprocess.run(
        [sys.executable, "-c", setup + code],
        cwd=ROOT,
        env=env,
        capture_output=True,
        text=True,
        timeout=60,
        check=False,
    )
    assert result.returncode == 0, result.stderr
    return result.stdout.strip()


def test_what_one_process_counts_another_sees_through_redis():
    """Two processes, as two gunicorn workers (or two machines) would be."""
    key = f"throttle_auth_test_{os.getpid()}"
    backend = _production_process(
        f"cache.set({key!r}, [1.0, 2.0], 60); "
        "from django.core.cache import caches; print(type(caches['default']).__name__)"
    )
    assert backend == "RedisCache"
    assert _production_process(f"print(cache.get({key!r}))") == "[1.0, 2.0]"
    _production_process(f"cache.delete({key!r})")


@pytest.mark.django_db
def test_sign_in_attempts_are_counted_and_refused_in_redis(technician, settings):
    """The token endpoint's throttle counts in Redis: the eleventh attempt in a minute is
    429, and the count is a key on the server."""
    settings.CACHES = REDIS_CACHE
    cache.clear()
    client = APIClient()
    codes = [
        client.post(
            "/api/v1/auth/token/", {"username": "tech1", "password": "guess"}, format="json"
        ).status_code
        for _ in range(11)
    ]
    assert codes[:10] == [400] * 10
    assert codes[10] == 429
    keys = cache._cache.get_client(write=False).keys("*throttle_auth_*")
    assert keys, "the throttle's count is not on the Redis server"
    cache.clear()
