"""Test settings: the development settings with fast hashing, in-memory email and cache,
the database from DATABASE_URL if set."""

from __future__ import annotations

import tempfile
from pathlib import Path

from .settings_dev import *  # noqa: F403

PASSWORD_HASHERS = ["django.contrib.auth.hashers.MD5PasswordHasher"]
EMAIL_BACKEND = "django.core.mail.backends.locmem.EmailBackend"
DATABASES["default"]["CONN_MAX_AGE"] = 0  # noqa: F405
# One process, and every test starts with no throttle counts: memory is enough.
CACHES = {"default": {"BACKEND": "django.core.cache.backends.locmem.LocMemCache"}}

# Generated reports go to a throwaway folder, not the developer's var/media.
MEDIA_ROOT = Path(tempfile.mkdtemp(prefix="rimewatch-test-media-"))

# A second alias that mirrors the test database, as a read replica would (fleet/replica.py):
# tests that set RIMEWATCH_READ_REPLICA = "replica" see which reads go to it.
DATABASES.setdefault("replica", {**DATABASES["default"], "TEST": {"MIRROR": "default"}})  # noqa: F405
