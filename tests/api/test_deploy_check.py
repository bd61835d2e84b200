"""Production settings pass Django's deployment checklist without a warning."""

from __future__ import annotations

import os
import secrets
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def test_check_deploy_has_no_warnings(tmp_path):
    """`manage.py check --deploy` with DEBUG=0, a real SECRET_KEY and a host: no issues, so
    secure cookies, HSTS, SSL redirect and the rest are on (fails on any warning)."""
    env = {
        **os.environ,
        "DJANGO_SETTINGS_MODULE": "config.settings",
        "DEBUG": "0",
        "SECRET_KEY": secrets.token_urlsafe(60),
        "ALLOWED_HOSTS": "rimewatch.example.com",
        "RIMEWATCH_VAR_DIR": str(tmp_path),
    }
    env.pop("DJANGO_ALLOW_ASYNC_UNSAFE", None)  # a test-only escape hatch, never in deployment
    result = subprocess.run(
        [sys.executable, "manage.py", "check", "--deploy", "--fail-level", "WARNING"],
        cwd=ROOT,
        env=env,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert result.returncode == 0, result.stdout + result.stderr
    assert "no issues" in result.stdout


def _database_options(**env: str) -> str:
    code = (
        "import config.settings as s; "
        "print(sorted(s.DATABASES['default'].get('OPTIONS', {}).items()))"
    )
    result = subprocess.run(
        [sys.executable, "-c", code],
        cwd=ROOT,
        env={**os.environ, "DJANGO_SETTINGS_MODULE": "config.settings", **env},
        capture_output=True,
        text=True,
        timeout=60,
        check=True,
    )
    return result.stdout.strip()


def test_postgresql_prepares_the_statements_it_is_sent_often():
    """On PostgreSQL the server binds parameters and psycopg prepares a statement sent five
    times; DB_PREPARED_STATEMENTS=0 turns that off (for a pooler that cannot keep them)."""
    url = "postgres://rimewatch@127.0.0.1:5432/rimewatch"
    prepared = "[('prepare_threshold', 5), ('server_side_binding', True)]"
    assert _database_options(DATABASE_URL=url) == prepared
    assert _database_options(DATABASE_URL=url, DB_PREPARED_STATEMENTS="0") == "[]"
    assert _database_options(DATABASE_URL="sqlite:////tmp/x.sqlite3") == "[]"


def test_the_throttles_count_in_a_cache_every_worker_process_shares(tmp_path):
    """What one process counts (a sign-in attempt, a write), another process sees: under
    gunicorn each worker is a process, and a cache of its own would let each one allow
    the full rate."""
    env = {
        **os.environ,
        "DJANGO_SETTINGS_MODULE": "config.settings",
        "RIMEWATCH_VAR_DIR": str(tmp_path),
    }

    def run(code: str) -> str:
        setup = "import django; django.setup(); from django.core.cache import cache; "
        result = subprocess.run(
            [sys.executable, "-c", setup + code],
            cwd=ROOT,
            env=env,
            capture_output=True,
            text=True,
            timeout=60,
            check=True,
        )
        return result.stdout.strip()

    run("cache.set('throttle_auth_10.0.0.7', [1.0, 2.0], 60)")
    assert run("print(cache.get('throttle_auth_10.0.0.7'))") == "[1.0, 2.0]"
