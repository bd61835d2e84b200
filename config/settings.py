"""Rimewatch settings, read from the environment.

Safe unless told otherwise: DEBUG is off, SECRET_KEY has no default, and every variable is
parsed strictly, so a typo stops start-up with a message naming the variable rather than
quietly meaning something else. Development uses config.settings_dev (``make run`` selects
it), the tests config.settings_test. docs/deployment.md lists every variable.
"""

from __future__ import annotations

import os
from pathlib import Path

import dj_database_url
from csp.constants import NONE, SELF
from django.core.exceptions import ImproperlyConfigured

from diagnostics.core.leaks import RULE_SETS, LeakRateMethod

BASE_DIR = Path(__file__).resolve().parent.parent

_YES = ("1", "true", "yes", "on")
_NO = ("0", "false", "no", "off")


def env_str(name: str, default: str) -> str:
    """A text setting, surrounding blanks removed."""
    return os.environ.get(name, default).strip()


def env_bool(name: str, default: bool) -> bool:
    """A yes/no setting: 1/true/yes/on or 0/false/no/off (any case); anything else is
    refused, so DEBUG=flase does not quietly mean something."""
    raw = os.environ.get(name)
    if raw is None:
        return default
    word = raw.strip().lower()
    if word in _YES:
        return True
    if word in _NO:
        return False
    raise ImproperlyConfigured(
        f"{name}={raw!r} is not a yes/no value: use one of {', '.join(_YES + _NO)}"
    )


def env_int(name: str, default: int, minimum: int = 0) -> int:
    """A whole number of at least ``minimum``."""
    raw = os.environ.get(name)
    if raw is None:
        return default
    try:
        value = int(raw.strip())
    except ValueError:
        raise ImproperlyConfigured(f"{name}={raw!r} is not a whole number") from None
    if value < minimum:
        raise ImproperlyConfigured(f"{name}={raw!r} must be at least {minimum}")
    return value


def env_choice(name: str, default: str, choices: tuple[str, ...]) -> str:
    """One of a fixed set of words."""
    value = env_str(name, default)
    if value not in choices:
        raise ImproperlyConfigured(f"{name}={value!r} is not one of: {', '.join(choices)}")
    return value


def env_rate(name: str, default: str) -> str:
    """A throttle rate as DRF reads it: requests per second, minute, hour or day."""
    value = env_str(name, default)
    count, _, period = value.partition("/")
    if not (count.isdigit() and period in ("second", "minute", "hour", "day")):
        raise ImproperlyConfigured(
            f"{name}={value!r} is not a rate: write N/second, N/minute, N/hour or N/day"
        )
    return value


def env_list(name: str, default: list[str]) -> list[str]:
    """A comma-separated list."""
    raw = os.environ.get(name)
    if raw is None:
        return default
    return [item.strip() for item in raw.split(",") if item.strip()]


VAR_DIR = Path(env_str("RIMEWATCH_VAR_DIR", str(BASE_DIR / "var")))
VAR_DIR.mkdir(parents=True, exist_ok=True)

DEBUG = env_bool("DEBUG", False)
SECRET_KEY = env_str("SECRET_KEY", "")
if not SECRET_KEY:
    raise ImproperlyConfigured(
        "SECRET_KEY is not set. Production needs a long random key of its own, e.g. "
        "SECRET_KEY=$(python -c 'import secrets; print(secrets.token_urlsafe(50))'); "
        "on a developer's machine use DJANGO_SETTINGS_MODULE=config.settings_dev "
        "(make run does)."
    )
ALLOWED_HOSTS = env_list("ALLOWED_HOSTS", ["127.0.0.1", "localhost"])
CSRF_TRUSTED_ORIGINS = env_list("CSRF_TRUSTED_ORIGINS", [])

INSTALLED_APPS = [
    "django.contrib.admin",
    "django.contrib.auth",
    "django.contrib.contenttypes",
    "django.contrib.sessions",
    "django.contrib.messages",
    "django.contrib.staticfiles",
    # Sign-in lockout (django-axes) and the Content-Security-Policy header (django-csp).
    "axes",
    "csp",
    "rest_framework",
    "rest_framework.authtoken",
    "django_filters",
    "drf_spectacular",
    "drf_spectacular_sidecar",  # Redoc's script for /api/docs/, served as our static file
    "fleet",
    "diagnostics",
    "reports",
    # The technician's installable app at /field/ (a shell page, its manifest, its worker).
    "field",
]

MIDDLEWARE = [
    "django.middleware.security.SecurityMiddleware",
    # Static files with hashed names and long cache headers, from the same server.
    "whitenoise.middleware.WhiteNoiseMiddleware",
    "django.contrib.sessions.middleware.SessionMiddleware",
    "django.middleware.common.CommonMiddleware",
    "django.middleware.csrf.CsrfViewMiddleware",
    "django.contrib.auth.middleware.AuthenticationMiddleware",
    "django.contrib.messages.middleware.MessageMiddleware",
    # A database that cannot be reached answers 503 with Retry-After (config/errors.py).
    "config.errors.DatabaseOutageMiddleware",
    # GET pages read from the read replica when there is one (config/replica.py).
    "config.replica.ReplicaReadsMiddleware",
    "django.middleware.clickjacking.XFrameOptionsMiddleware",
    "csp.middleware.CSPMiddleware",
    # Last: turns a sign-in refused for too many failures into the lockout page.
    "axes.middleware.AxesMiddleware",
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
                "csp.context_processors.nonce",
            ],
        },
    },
]

DATABASES = {
    "default": dj_database_url.parse(
        os.environ.get("DATABASE_URL", f"sqlite:///{VAR_DIR / 'rimewatch.sqlite3'}"),
        conn_max_age=env_int("DB_CONN_MAX_AGE", 60),
        # A kept connection is tried before a request uses it, so one the server closed
        # (a restart, an idle timeout) is replaced instead of failing that request.
        conn_health_checks=True,
    )
}
if DATABASES["default"]["ENGINE"] == "django.db.backends.postgresql" and env_bool(
    "DB_PREPARED_STATEMENTS", True
):
    # Parameters bound by the server, and psycopg prepares a statement once a connection
    # has sent it five times: every API request sends the same few, and PostgreSQL then
    # skips planning them (a visit with its units took 0.44 ms to plan, 0.12 to run).
    # DB_PREPARED_STATEMENTS=0 behind a pooler that cannot keep prepared statements.
    DATABASES["default"].setdefault("OPTIONS", {}).update(
        server_side_binding=True, prepare_threshold=5
    )
# A read replica (a PostgreSQL standby of the primary): with REPLICA_DATABASE_URL set,
# the pages' GET requests and the reports' gathering read our records from it, and
# everything else (writes, the API, sessions, the cache table, the job queue) uses the
# primary (fleet/replica.py). A browser that just wrote something reads the primary for
# RIMEWATCH_REPLICA_PIN_SECONDS, so it sees its own change whatever the replica's lag.
REPLICA_DATABASE_URL = env_str("REPLICA_DATABASE_URL", "")
RIMEWATCH_READ_REPLICA = ""
if REPLICA_DATABASE_URL:
    DATABASES["replica"] = dj_database_url.parse(
        REPLICA_DATABASE_URL,
        conn_max_age=DATABASES["default"]["CONN_MAX_AGE"],
        conn_health_checks=True,
    )
    DATABASES["replica"]["OPTIONS"] = dict(DATABASES["default"].get("OPTIONS", {}))
    DATABASES["replica"]["TEST"] = {"MIRROR": "default"}
    RIMEWATCH_READ_REPLICA = "replica"
DATABASE_ROUTERS = ["fleet.replica.ReplicaRouter"]
RIMEWATCH_REPLICA_PIN_SECONDS = env_int("RIMEWATCH_REPLICA_PIN_SECONDS", 10, minimum=1)
DEFAULT_AUTO_FIELD = "django.db.models.BigAutoField"

# The throttles count in the cache, so it must be one for every worker process: Django's
# default (memory) is per process, and each of N gunicorn workers would allow the full rate.
# REDIS_URL: a Redis server that several machines share (Django's own backend). Unset: a
# table in the database, shared by every worker and machine that uses the database, and
# written in the database's own transactions (a full disk fails a write cleanly there,
# where a file cache failed every request before the database was reached). `migrate`
# creates the table (fleet.apps).
REDIS_URL = env_str("REDIS_URL", "")
if REDIS_URL:
    CACHES = {
        "default": {
            "BACKEND": "django.core.cache.backends.redis.RedisCache",
            "LOCATION": REDIS_URL,
        }
    }
else:
    CACHES = {
        "default": {
            "BACKEND": "django.core.cache.backends.db.DatabaseCache",
            "LOCATION": "rimewatch_cache",
        }
    }

AUTH_PASSWORD_VALIDATORS = [
    {"NAME": "django.contrib.auth.password_validation.UserAttributeSimilarityValidator"},
    {"NAME": "django.contrib.auth.password_validation.MinimumLengthValidator"},
    {"NAME": "django.contrib.auth.password_validation.CommonPasswordValidator"},
    {"NAME": "django.contrib.auth.password_validation.NumericPasswordValidator"},
]
# Failed sign-ins on the sign-in page, the admin and the API's token endpoint are counted
# per username and client address (django-axes); past the limit that pair is refused
# until the cool-off ends or the office unlocks it (`manage.py axes_reset_username NAME`,
# or the admin's Access attempts). The address is the one the API's throttles use.
AUTHENTICATION_BACKENDS = [
    "axes.backends.AxesStandaloneBackend",
    "django.contrib.auth.backends.ModelBackend",
]
AXES_FAILURE_LIMIT = env_int("RIMEWATCH_SIGNIN_FAILURE_LIMIT", 10, minimum=1)
AXES_COOLOFF_TIME = env_int("RIMEWATCH_SIGNIN_COOLOFF_MINUTES", 60, minimum=1) / 60  # hours
AXES_LOCKOUT_PARAMETERS = [["username", "ip_address"]]
AXES_RESET_ON_SUCCESS = True
AXES_CLIENT_IP_CALLABLE = "fleet.api.throttles.client_address"
AXES_LOCKOUT_TEMPLATE = "registration/locked_out.html"
AXES_VERBOSE = False
# Proxies in front of Rimewatch that append the client's address to X-Forwarded-For. 0:
# the header is ignored and the connection's address counts (a client could write any
# header it liked); 1 behind one proxy (nginx, a load balancer), and so on.
RIMEWATCH_TRUSTED_PROXY_COUNT = env_int("RIMEWATCH_TRUSTED_PROXY_COUNT", 0)

LOGIN_URL = "login"
LOGIN_REDIRECT_URL = "/"

LANGUAGE_CODE = "en-us"
TIME_ZONE = env_str("TIME_ZONE", "America/Chicago")
USE_I18N = True
USE_TZ = True

STATIC_URL = "static/"
STATIC_ROOT = VAR_DIR / "static"
STATICFILES_DIRS = [BASE_DIR / "static"]
# Hashed, compressed copies made by `manage.py collectstatic`, served by WhiteNoise.
# Files attached to units (nameplate photos, diagrams) go through Django's storage API:
# on disk under MEDIA_ROOT by default; RIMEWATCH_FILE_STORAGE=s3 keeps them in an
# S3-compatible bucket (django-storages) that several machines share. Either way they are
# served only through a page that checks who may see the unit, never from a public URL.
RIMEWATCH_FILE_STORAGE = env_choice("RIMEWATCH_FILE_STORAGE", "disk", ("disk", "s3"))
FILE_STORAGE_S3 = {
    "BACKEND": "storages.backends.s3.S3Storage",
    "OPTIONS": {
        "bucket_name": env_str("RIMEWATCH_S3_BUCKET", "rimewatch-files"),
        # Empty: AWS itself; set for another S3-compatible store.
        "endpoint_url": env_str("RIMEWATCH_S3_ENDPOINT_URL", "") or None,
        "region_name": env_str("RIMEWATCH_S3_REGION", "") or None,
        "access_key": env_str("RIMEWATCH_S3_ACCESS_KEY", "") or None,
        "secret_key": env_str("RIMEWATCH_S3_SECRET_KEY", "") or None,
        "default_acl": None,  # the bucket's own (private) access rules
        "file_overwrite": False,
    },
}
STORAGES = {
    "default": FILE_STORAGE_S3
    if RIMEWATCH_FILE_STORAGE == "s3"
    else {"BACKEND": "django.core.files.storage.FileSystemStorage"},
    "staticfiles": {"BACKEND": "whitenoise.storage.CompressedManifestStaticFilesStorage"},
}
MEDIA_URL = "media/"
MEDIA_ROOT = VAR_DIR / "media"

# Saturation tables are built once per refrigerant and CoolProp version, then cached here.
RIMEWATCH_CACHE_DIR = Path(env_str("RIMEWATCH_CACHE_DIR", str(VAR_DIR / "cache")))
os.environ.setdefault("RIMEWATCH_CACHE_DIR", str(RIMEWATCH_CACHE_DIR))
# The contractor's default display units: "us" (F, psig, lb) or "si" (C, kPa gauge, kg).
RIMEWATCH_DISPLAY_UNITS = env_choice("RIMEWATCH_DISPLAY_UNITS", "us", ("us", "si"))

# Leak-rate rules: a rule set of diagnostics.core.leaks.RULE_SETS and the one method the
# facility uses for all its appliances (40 CFR 82.152 lets it choose).
RIMEWATCH_LEAK_RULE_SET = env_choice("RIMEWATCH_LEAK_RULE_SET", "us_epa", tuple(RULE_SETS))
RIMEWATCH_LEAK_RATE_METHOD = env_choice(
    "RIMEWATCH_LEAK_RATE_METHOD", "rolling_average", tuple(LeakRateMethod)
)

# Processes drawing report charts in parallel (1: in-process; measured in bench/report.py):
# one per core, up to four.
RIMEWATCH_REPORT_CHART_WORKERS = env_int(
    "RIMEWATCH_REPORT_CHART_WORKERS", min(4, os.cpu_count() or 1), minimum=1
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
        "write": env_rate("RIMEWATCH_WRITE_RATE", "240/minute"),
        "auth": env_rate("RIMEWATCH_AUTH_RATE", "10/minute"),
    },
    # The client address the throttles key on: X-Forwarded-For only through trusted proxies.
    "NUM_PROXIES": RIMEWATCH_TRUSTED_PROXY_COUNT,
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
    # A part's kind is one list wherever a part is written (components, parts fitted).
    "ENUM_NAME_OVERRIDES": {"ComponentKindEnum": "fleet.choices.ComponentKind"},
}

# E-mail (reports, password resets) through an SMTP server once EMAIL_HOST is set; without
# one, messages are written to the log, which fleet.checks warns about when DEBUG is off.
EMAIL_HOST = env_str("EMAIL_HOST", "")
EMAIL_BACKEND = env_str(
    "EMAIL_BACKEND",
    "django.core.mail.backends.smtp.EmailBackend"
    if EMAIL_HOST
    else "django.core.mail.backends.console.EmailBackend",
)
EMAIL_PORT = env_int("EMAIL_PORT", 587, minimum=1)
EMAIL_HOST_USER = env_str("EMAIL_HOST_USER", "")
EMAIL_HOST_PASSWORD = os.environ.get("EMAIL_HOST_PASSWORD", "")
EMAIL_USE_TLS = env_bool("EMAIL_USE_TLS", True)
EMAIL_USE_SSL = env_bool("EMAIL_USE_SSL", False)
if EMAIL_USE_TLS and EMAIL_USE_SSL:
    if "EMAIL_USE_TLS" in os.environ:
        raise ImproperlyConfigured("EMAIL_USE_TLS and EMAIL_USE_SSL cannot both be on")
    EMAIL_USE_TLS = False  # SSL asked for, STARTTLS only by default
EMAIL_TIMEOUT = env_int("EMAIL_TIMEOUT", 30, minimum=1)
DEFAULT_FROM_EMAIL = env_str("DEFAULT_FROM_EMAIL", "reports@rimewatch.invalid")
SERVER_EMAIL = env_str("SERVER_EMAIL", DEFAULT_FROM_EMAIL)

if not DEBUG:
    SECURE_SSL_REDIRECT = env_bool("SECURE_SSL_REDIRECT", True)
    SESSION_COOKIE_SECURE = True
    CSRF_COOKIE_SECURE = True
    SECURE_HSTS_SECONDS = env_int("SECURE_HSTS_SECONDS", 31536000)
    SECURE_HSTS_INCLUDE_SUBDOMAINS = env_bool("SECURE_HSTS_INCLUDE_SUBDOMAINS", True)
    # Preload by default so `check --deploy` is clean; set SECURE_HSTS_PRELOAD=0 to opt out.
    SECURE_HSTS_PRELOAD = env_bool("SECURE_HSTS_PRELOAD", True)
# Behind a proxy that ends TLS: the header it sets on requests that came in over HTTPS
# (e.g. X-Forwarded-Proto), so Django sees them as secure and does not redirect forever.
# Only with a proxy that always sets or strips it: a client could send it too.
_PROXY_SSL_HEADER = env_str("SECURE_PROXY_SSL_HEADER", "")
if _PROXY_SSL_HEADER:
    SECURE_PROXY_SSL_HEADER = ("HTTP_" + _PROXY_SSL_HEADER.upper().replace("-", "_"), "https")

# The pages load their script (htmx) and style sheet from our own static files and run
# nothing inline; report charts are data: images. The API docs page adds what its viewer
# needs (config/urls.py).
CONTENT_SECURITY_POLICY = {
    "DIRECTIVES": {
        "default-src": [SELF],
        "script-src": [SELF],
        "style-src": [SELF],
        "img-src": [SELF, "data:"],
        "font-src": [SELF],
        "connect-src": [SELF],
        "object-src": [NONE],
        "base-uri": [SELF],
        "form-action": [SELF],
        "frame-ancestors": [NONE],
    }
}

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
    "root": {
        "handlers": ["console"],
        "level": env_choice("LOG_LEVEL", "INFO", ("DEBUG", "INFO", "WARNING", "ERROR")),
    },
}
