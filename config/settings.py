"""Rimewatch settings, read from the environment.

Defaults suit a developer's machine (SQLite under var/, DEBUG on); production sets
SECRET_KEY, DEBUG=0, ALLOWED_HOSTS and DATABASE_URL (PostgreSQL).
"""

from __future__ import annotations

import os
from pathlib import Path

import dj_database_url

BASE_DIR = Path(__file__).resolve().parent.parent
VAR_DIR = Path(os.environ.get("RIMEWATCH_VAR_DIR", BASE_DIR / "var"))
VAR_DIR.mkdir(parents=True, exist_ok=True)


def env_bool(name: str, default: bool) -> bool:
    """Read a yes/no setting; '1', 'true', 'yes', 'on' count as yes."""
    raw = os.environ.get(name)
    if raw is None:
        return default
    return raw.strip().lower() in {"1", "true", "yes", "on"}


def env_list(name: str, default: list[str]) -> list[str]:
    raw = os.environ.get(name)
    if raw is None:
        return default
    return [item.strip() for item in raw.split(",") if item.strip()]


DEBUG = env_bool("DEBUG", True)
# The fallback key is only for local development; production must set SECRET_KEY.
SECRET_KEY = os.environ.get("SECRET_KEY", "dev-only-insecure-key-change-me" if DEBUG else "")
if not SECRET_KEY:
    raise RuntimeError("SECRET_KEY must be set when DEBUG is off")
ALLOWED_HOSTS = env_list("ALLOWED_HOSTS", ["127.0.0.1", "localhost", "testserver"])
CSRF_TRUSTED_ORIGINS = env_list("CSRF_TRUSTED_ORIGINS", [])

INSTALLED_APPS = [
    "django.contrib.admin",
    "django.contrib.auth",
    "django.contrib.contenttypes",
    "django.contrib.sessions",
    "django.contrib.messages",
    "django.contrib.staticfiles",
    "rest_framework",
    "rest_framework.authtoken",
    "django_filters",
    "drf_spectacular",
    "drf_spectacular_sidecar",  # Redoc's script for /api/docs/, served as our static file
    "fleet",
    "diagnostics",
    "reports",
]

MIDDLEWARE = [
    "django.middleware.security.SecurityMiddleware",
    "django.contrib.sessions.middleware.SessionMiddleware",
    "django.middleware.common.CommonMiddleware",
    "django.middleware.csrf.CsrfViewMiddleware",
    "django.contrib.auth.middleware.AuthenticationMiddleware",
    "django.contrib.messages.middleware.MessageMiddleware",
    # A database that cannot be reached answers 503 with Retry-After (config/errors.py).
    "config.errors.DatabaseOutageMiddleware",
    "django.middleware.clickjacking.XFrameOptionsMiddleware",
]

ROOT_URLCONF = "config.urls"
WSGI_APPLICATION = "config.wsgi.application"

TEMPLATES = [
    {
        "BACKEND": "django.template.backends.django.DjangoTemplates",
        "DIRS": [BASE_DIR / "templates"],
        "APP_DIRS": True,
        "OPTIONS": {
            "context_processors": [
                "django.template.context_processors.request",
                "django.contrib.auth.context_processors.auth",
                "django.contrib.messages.context_processors.messages",
                # the menu's roles and counts, for pages rendered without fleet's page()
                "fleet.views.base.navigation",
            ],
        },
    },
]

DATABASES = {
    "default": dj_database_url.parse(
        os.environ.get("DATABASE_URL", f"sqlite:///{VAR_DIR / 'rimewatch.sqlite3'}"),
        conn_max_age=int(os.environ.get("DB_CONN_MAX_AGE", "60")),
    )
}
if DATABASES["default"]["ENGINE"] == "django.db.backends.postgresql" and (
    os.environ.get("DB_PREPARED_STATEMENTS", "1") == "1"
):
    # Parameters bound by the server, and psycopg prepares a statement once a connection
    # has sent it five times: every API request sends the same few, and PostgreSQL then
    # skips planning them (a visit with its units took 0.44 ms to plan, 0.12 to run).
    # DB_PREPARED_STATEMENTS=0 behind a pooler that cannot keep prepared statements.
    DATABASES["default"].setdefault("OPTIONS", {}).update(
        server_side_binding=True, prepare_threshold=5
    )
DEFAULT_AUTO_FIELD = "django.db.models.BigAutoField"

# The throttles count in the cache, so it must be one for every worker process: Django's
# default (memory) is per process, and each of N gunicorn workers would allow the full rate.
# Files under var/ are shared by the workers of one machine; several machines need a
# shared cache server instead.
CACHES = {
    "default": {
        "BACKEND": "django.core.cache.backends.filebased.FileBasedCache",
        "LOCATION": str(VAR_DIR / "django-cache"),  # var/cache holds the saturation tables
    }
}

AUTH_PASSWORD_VALIDATORS = [
    {"NAME": "django.contrib.auth.password_validation.UserAttributeSimilarityValidator"},
    {"NAME": "django.contrib.auth.password_validation.MinimumLengthValidator"},
    {"NAME": "django.contrib.auth.password_validation.CommonPasswordValidator"},
    {"NAME": "django.contrib.auth.password_validation.NumericPasswordValidator"},
]
LOGIN_URL = "login"
LOGIN_REDIRECT_URL = "/"

LANGUAGE_CODE = "en-us"
TIME_ZONE = os.environ.get("TIME_ZONE", "America/Chicago")
USE_I18N = True
USE_TZ = True

STATIC_URL = "static/"
STATIC_ROOT = VAR_DIR / "static"
STATICFILES_DIRS = [BASE_DIR / "static"]
MEDIA_URL = "media/"
MEDIA_ROOT = VAR_DIR / "media"

# Saturation tables are built once per refrigerant and CoolProp version, then cached here.
RIMEWATCH_CACHE_DIR = Path(os.environ.get("RIMEWATCH_CACHE_DIR", VAR_DIR / "cache"))
os.environ.setdefault("RIMEWATCH_CACHE_DIR", str(RIMEWATCH_CACHE_DIR))
# The contractor's default display units: "us" (F, psig, lb) or "si" (C, kPa gauge, kg).
RIMEWATCH_DISPLAY_UNITS = os.environ.get("RIMEWATCH_DISPLAY_UNITS", "us")

# Leak-rate rules: a rule set of diagnostics.core.leaks.RULE_SETS and the one method the
# facility uses for all its appliances (40 CFR 82.152 lets it choose).
RIMEWATCH_LEAK_RULE_SET = os.environ.get("RIMEWATCH_LEAK_RULE_SET", "us_epa")
RIMEWATCH_LEAK_RATE_METHOD = os.environ.get("RIMEWATCH_LEAK_RATE_METHOD", "rolling_average")

# Processes drawing report charts in parallel (1: in-process; measured in bench/report.py):
# one per core, up to four.
RIMEWATCH_REPORT_CHART_WORKERS = int(
    os.environ.get("RIMEWATCH_REPORT_CHART_WORKERS", str(min(4, os.cpu_count() or 1)))
)

REST_FRAMEWORK = {
    "DEFAULT_AUTHENTICATION_CLASSES": [
        "rest_framework.authentication.TokenAuthentication",
        "rest_framework.authentication.SessionAuthentication",
    ],
    "DEFAULT_PERMISSION_CLASSES": ["rest_framework.permissions.IsAuthenticated"],
    "DEFAULT_RENDERER_CLASSES": ["rest_framework.renderers.JSONRenderer"],
    # JSON by orjson, with size and nesting limits (fleet/api/parsers.py).
    "DEFAULT_PARSER_CLASSES": ["fleet.api.parsers.JSONParser"],
    "DEFAULT_FILTER_BACKENDS": ["django_filters.rest_framework.DjangoFilterBackend"],
    "DEFAULT_PAGINATION_CLASS": "rest_framework.pagination.PageNumberPagination",
    "PAGE_SIZE": 50,
    # drf-spectacular's, plus each operation's error answers (fleet/api/schema.py).
    "DEFAULT_SCHEMA_CLASS": "fleet.api.schema.ErrorsAutoSchema",
    "EXCEPTION_HANDLER": "fleet.api.exceptions.exception_handler",
    # Writes are limited per user, token requests per client address. The counters live in
    # the default cache (per process unless a shared cache is configured).
    "DEFAULT_THROTTLE_CLASSES": ["fleet.api.throttles.WriteRateThrottle"],
    "DEFAULT_THROTTLE_RATES": {
        "write": os.environ.get("RIMEWATCH_WRITE_RATE", "240/minute"),
        "auth": os.environ.get("RIMEWATCH_AUTH_RATE", "10/minute"),
    },
}
SPECTACULAR_SETTINGS = {
    "TITLE": "Rimewatch API",
    "DESCRIPTION": "Service-fleet records, readings and diagnoses for refrigeration contractors. "
    "A request body naming a field its schema does not list is refused with 400 naming that "
    "field; read-only fields sent back from a response are ignored.",
    "VERSION": "1",
    "SERVE_INCLUDE_SCHEMA": False,
    # /api/docs/ loads Redoc from our own static files (drf-spectacular-sidecar), never a CDN.
    "REDOC_DIST": "SIDECAR",
    # <id:...> in paths is a record id (fleet/validation.py): an integer in the schema.
    "PATH_CONVERTER_OVERRIDES": {"id": int},
}

EMAIL_BACKEND = os.environ.get("EMAIL_BACKEND", "django.core.mail.backends.console.EmailBackend")
DEFAULT_FROM_EMAIL = os.environ.get("DEFAULT_FROM_EMAIL", "reports@rimewatch.invalid")

if not DEBUG:
    SECURE_SSL_REDIRECT = env_bool("SECURE_SSL_REDIRECT", True)
    SESSION_COOKIE_SECURE = True
    CSRF_COOKIE_SECURE = True
    SECURE_HSTS_SECONDS = int(os.environ.get("SECURE_HSTS_SECONDS", "31536000"))
    SECURE_HSTS_INCLUDE_SUBDOMAINS = True
    # Preload by default so `check --deploy` is clean; set SECURE_HSTS_PRELOAD=0 to opt out.
    SECURE_HSTS_PRELOAD = env_bool("SECURE_HSTS_PRELOAD", True)

# Background work (the scheduled monthly reports, the nightly flag refresh, alert delivery,
# reports asked for from the page) runs on django-tasks (the backport of Django 6's
# django.tasks) with its database backend: a job is a row in our own database, enqueued in
# the same transaction as the record it is about, and run by `manage.py db_worker`;
# `manage.py run_scheduler` enqueues the scheduled jobs. No extra server. The choice and
# its measurements: docs/operations.md.
INSTALLED_APPS += ["django_tasks", "django_tasks_db", "jobs", "alerts"]
TASKS = {"default": {"BACKEND": "django_tasks_db.DatabaseBackend"}}
# A failed job runs again up to this many times in all, waiting 1, 4, 16 ... minutes.
RIMEWATCH_JOB_ATTEMPTS = int(os.environ.get("RIMEWATCH_JOB_ATTEMPTS", "5"))
RIMEWATCH_JOB_FIRST_RETRY_SECONDS = int(os.environ.get("RIMEWATCH_JOB_FIRST_RETRY_SECONDS", "60"))
# The nightly flag refresh and the daily alert digest, at these hours of TIME_ZONE.
RIMEWATCH_FLAG_REFRESH_HOUR = int(os.environ.get("RIMEWATCH_FLAG_REFRESH_HOUR", "2"))
RIMEWATCH_DIGEST_HOUR = int(os.environ.get("RIMEWATCH_DIGEST_HOUR", "7"))
# Alerts: a leak-repair deadline this many days ahead is announced; the signed webhook
# (docs/api.md) is posted to RIMEWATCH_ALERT_WEBHOOK_URL when both it and its secret are set.
RIMEWATCH_ALERT_LEAK_DAYS = int(os.environ.get("RIMEWATCH_ALERT_LEAK_DAYS", "7"))
RIMEWATCH_ALERT_WEBHOOK_URL = os.environ.get("RIMEWATCH_ALERT_WEBHOOK_URL", "")
RIMEWATCH_ALERT_WEBHOOK_SECRET = os.environ.get("RIMEWATCH_ALERT_WEBHOOK_SECRET", "")

LOGGING = {
    "version": 1,
    "disable_existing_loggers": False,
    "handlers": {"console": {"class": "logging.StreamHandler"}},
    "root": {"handlers": ["console"], "level": os.environ.get("LOG_LEVEL", "INFO")},
}
