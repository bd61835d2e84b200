"""Production settings: safe unless told otherwise, strict about what they are told, and
clean on Django's deployment checklist."""

from __future__ import annotations

import os
import secrets
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]

#: Variables a test sets for itself: none leaks in from the machine running the tests.
OWN = ("DEBUG", "SECRET_KEY", "DATABASE_URL", "REDIS_URL", "EMAIL_HOST", "EMAIL_BACKEND")


def _env(tmp_path: Path, **env: str) -> dict[str, str]:
    base = {k: v for k, v in os.environ.items() if k not in OWN}
    base.pop("DJANGO_ALLOW_ASYNC_UNSAFE", None)  # a test-only escape hatch, never deployed
    return {
        **base,
        "DJANGO_SETTINGS_MODULE": "config.settings",
        "RIMEWATCH_VAR_DIR": str(tmp_path),
        **env,
    }


def _production(tmp_path: Path, **env: str) -> dict[str, str]:
    """What a deployment sets: a key, a host, an SMTP server; DEBUG left at its default."""
    return _env(
        tmp_path,
        SECRET_KEY=secrets.token_urlsafe(60),
        ALLOWED_HOSTS="rimewatch.example.com",
        EMAIL_HOST="smtp.example.com",
        **env,
    )


def _manage(env: dict[str, str], *args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "manage.py", *args],
        cwd=ROOT,
        env=env,
        capture_output=True,
        text=True,
        timeout=120,
    )


def _settings(env: dict[str, str], expression: str) -> subprocess.CompletedProcess[str]:
    """Import the settings module in a fresh process and print ``expression`` of it."""
    module = env["DJANGO_SETTINGS_MODULE"]
    return subprocess.run(
        [sys.executable, "-c", f"import {module} as s; print({expression})"],
        cwd=ROOT,
        env=env,
        capture_output=True,
        text=True,
        timeout=60,
    )


@pytest.mark.parametrize(
    "proxy", [{}, {"SECURE_PROXY_SSL_HEADER": "X-Forwarded-Proto"}], ids=["direct", "behind-tls"]
)
def test_check_deploy_has_no_warnings(tmp_path, proxy):
    """`manage.py check --deploy` with the production settings as deployed (DEBUG at its
    default, a real SECRET_KEY, a host, an SMTP server): no issues, so secure cookies, HSTS,
    SSL redirect and the rest are on (fails on any warning), directly or behind a proxy that
    ends TLS."""
    result = _manage(_production(tmp_path, **proxy), "check", "--deploy", "--fail-level", "WARNING")
    assert result.returncode == 0, result.stdout + result.stderr
    assert "no issues" in result.stdout


def test_debug_is_off_unless_set(tmp_path):
    result = _settings(_production(tmp_path), "s.DEBUG, s.SESSION_COOKIE_SECURE")
    assert result.stdout.strip() == "False True", result.stderr


def test_a_tls_proxy_header_is_read_from_the_environment(tmp_path):
    env = _production(tmp_path, SECURE_PROXY_SSL_HEADER="X-Forwarded-Proto")
    result = _settings(env, "s.SECURE_PROXY_SSL_HEADER")
    assert result.stdout.strip() == "('HTTP_X_FORWARDED_PROTO', 'https')", result.stderr


def test_without_a_secret_key_start_up_stops_naming_it(tmp_path):
    """No key of ours to fall back on: start-up stops with ImproperlyConfigured naming
    SECRET_KEY, with DEBUG off by default and even with DEBUG on in these settings."""
    for debug in ({}, {"DEBUG": "1"}):
        result = _manage(_env(tmp_path, **debug), "check")
        assert result.returncode != 0
        assert "ImproperlyConfigured: SECRET_KEY is not set" in result.stderr


def test_the_development_settings_set_debug_and_a_key_of_their_own(tmp_path):
    env = _env(tmp_path, DJANGO_SETTINGS_MODULE="config.settings_dev")
    result = _settings(env, "s.DEBUG, s.SECRET_KEY.startswith('dev-only')")
    assert result.stdout.strip() == "True True", result.stderr


def test_the_development_settings_write_mail_to_files_unless_a_server_is_given(tmp_path):
    """``make run`` mails the demo's reports (PDFs attached) to var/mail, not the terminal."""
    env = _env(tmp_path, DJANGO_SETTINGS_MODULE="config.settings_dev")
    result = _settings(env, "s.EMAIL_BACKEND.rsplit('.', 2)[-2], s.EMAIL_FILE_PATH.name")
    assert result.stdout.strip() == "filebased mail", result.stderr
    served = _settings({**env, "EMAIL_HOST": "smtp.example.com"}, "s.EMAIL_BACKEND")
    assert served.stdout.strip() == "django.core.mail.backends.smtp.EmailBackend", served.stderr


@pytest.mark.parametrize(
    ("name", "value", "message"),
    [
        ("DEBUG", "flase", "DEBUG='flase' is not a yes/no value: use one of 1, true, yes, on"),
        ("SECURE_SSL_REDIRECT", "maybe", "SECURE_SSL_REDIRECT='maybe' is not a yes/no value"),
        ("DB_CONN_MAX_AGE", "sixty", "DB_CONN_MAX_AGE='sixty' is not a whole number"),
        ("EMAIL_PORT", "0", "EMAIL_PORT='0' must be at least 1"),
        ("RIMEWATCH_TRUSTED_PROXY_COUNT", "-1", "RIMEWATCH_TRUSTED_PROXY_COUNT='-1' must be"),
        ("RIMEWATCH_DISPLAY_UNITS", "metric", "RIMEWATCH_DISPLAY_UNITS='metric' is not one of: us"),
        ("RIMEWATCH_LEAK_RULE_SET", "eu_fgas", "RIMEWATCH_LEAK_RULE_SET='eu_fgas' is not one of"),
        ("RIMEWATCH_LEAK_RATE_METHOD", "average", "is not one of: annualizing, rolling_average"),
        ("RIMEWATCH_WRITE_RATE", "fast", "RIMEWATCH_WRITE_RATE='fast' is not a rate"),
        ("LOG_LEVEL", "LOUD", "LOG_LEVEL='LOUD' is not one of: DEBUG, INFO, WARNING, ERROR"),
    ],
)
def test_a_setting_that_does_not_parse_stops_start_up_naming_it(tmp_path, name, value, message):
    """A typo is not read as something else (DEBUG=flase used to mean "off", an unknown
    display unit reached the pages): start-up stops and says which variable takes what."""
    result = _settings(_production(tmp_path, **{name: value}), "'started'")
    assert result.returncode != 0
    assert "ImproperlyConfigured" in result.stderr
    assert message in result.stderr


def test_stale_database_connections_are_checked_before_use(tmp_path):
    result = _settings(_production(tmp_path), "s.DATABASES['default']['CONN_HEALTH_CHECKS']")
    assert result.stdout.strip() == "True", result.stderr


def test_the_cache_is_redis_when_a_server_is_given_else_the_database(tmp_path):
    expression = "s.CACHES['default']['BACKEND'], s.CACHES['default']['LOCATION']"
    redis = _settings(_production(tmp_path, REDIS_URL="redis://cache.internal:6379/1"), expression)
    assert redis.stdout.strip() == (
        "django.core.cache.backends.redis.RedisCache redis://cache.internal:6379/1"
    ), redis.stderr
    database = _settings(_production(tmp_path), expression)
    assert database.stdout.strip() == (
        "django.core.cache.backends.db.DatabaseCache rimewatch_cache"
    ), database.stderr


def test_without_an_email_server_start_up_warns_that_reset_links_go_to_the_log(tmp_path):
    """With DEBUG off and no EMAIL_HOST, mail is written to the log: the start-up checks
    (run by migrate, runserver, check and gunicorn's start) say so."""
    env = _production(tmp_path)
    del env["EMAIL_HOST"]
    result = _manage(env, "check")
    assert result.returncode == 0, result.stderr
    assert "rimewatch.W001" in result.stderr
    assert "password-reset links would go to the server's log" in result.stderr


def test_postgresql_prepares_the_statements_it_is_sent_often(tmp_path):
    """On PostgreSQL the server binds parameters and psycopg prepares a statement sent five
    times; DB_PREPARED_STATEMENTS=0 turns that off (for a pooler that cannot keep them)."""

    def options(**env: str) -> str:
        expression = "sorted(s.DATABASES['default'].get('OPTIONS', {}).items())"
        result = _settings(_production(tmp_path, **env), expression)
        assert result.returncode == 0, result.stderr
        return result.stdout.strip()

    url = "postgres://rimewatch@127.0.0.1:5432/rimewatch"
    prepared = "[('prepare_threshold', 5), ('server_side_binding', True)]"
    assert options(DATABASE_URL=url) == prepared
    assert options(DATABASE_URL=url, DB_PREPARED_STATEMENTS="0") == "[]"
    assert options(DATABASE_URL="sqlite:////tmp/x.sqlite3") == "[]"


def test_the_throttles_count_in_a_cache_every_worker_process_shares(tmp_path):
    """What one process counts (a sign-in attempt, a write), another process sees: under
    gunicorn each worker is a process, and a cache of its own would let each one allow
    the full rate. The default cache is a database table, which `migrate` creates (with
    any app's migrations: here only auth's, the quickest)."""
    env = _production(tmp_path)
    migrated = _manage(env, "migrate", "auth", "--no-input", "-v", "0")
    assert migrated.returncode == 0, migrated.stderr

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
