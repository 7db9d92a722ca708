"""Django settings of Exoledger, read from the environment (see README, "Configuration")."""

from __future__ import annotations

import os
import sys
from pathlib import Path

from django.core.exceptions import ImproperlyConfigured

from hazards.db import data_dir, databases
from hazards.env import env_bool, env_int, env_list, env_str

BASE_DIR = Path(__file__).resolve().parent.parent

ENVIRONMENT = env_str("EXOLEDGER_ENV", "development")
if ENVIRONMENT not in ("development", "production", "test"):
    raise ImproperlyConfigured(
        f"EXOLEDGER_ENV={ENVIRONMENT!r}: expected development, test or production."
    )
PRODUCTION = ENVIRONMENT == "production"
TESTING = ENVIRONMENT == "test" or "pytest" in sys.modules

if PRODUCTION:
    SECRET_KEY = env_str("EXOLEDGER_SECRET_KEY", required=True)
    ALLOWED_HOSTS = env_list("EXOLEDGER_ALLOWED_HOSTS")
    if not ALLOWED_HOSTS:
        raise ImproperlyConfigured("EXOLEDGER_ALLOWED_HOSTS must list the host names served.")
    DEBUG = False
else:
    # A development key: never used when EXOLEDGER_ENV=production.
    SECRET_KEY = env_str("EXOLEDGER_SECRET_KEY", "dev-only-insecure-key-change-me-0123456789abcdef")
    ALLOWED_HOSTS = env_list("EXOLEDGER_ALLOWED_HOSTS", ["127.0.0.1", "localhost", "testserver"])
    DEBUG = env_bool("EXOLEDGER_DEBUG", False)

# The key that seals signatures is kept outside the database (INTEGRITY.md §1.4).
SIGNATURE_SEAL_KEY = env_str("EXOLEDGER_SEAL_KEY", SECRET_KEY)

INSTALLED_APPS = [
    "django.contrib.admin",
    "django.contrib.auth",
    "django.contrib.contenttypes",
    "django.contrib.sessions",
    "django.contrib.messages",
    "django.contrib.staticfiles",
    "rest_framework",
    "django_filters",
    "drf_spectacular",
    "drf_spectacular_sidecar",
    "pgtrigger",
    "pghistory",
    "pghistory.admin",
    "csp",
    "hazards",
    "hazards.review",
    "hazards.integration",
    "django_tasks",
    "django_tasks_db",
    "hazards.dossier",
    "hazards.whatif",
    "hazards.oversight",
    # Sign-in lockout: failures are recorded from Django's login signals; the sign-in page
    # (hazards.web.auth) refuses a locked-out name before it authenticates (no Axes backend,
    # so other callers of authenticate() keep working unchanged).
    "axes",
]

MIDDLEWARE = [
    "django.middleware.security.SecurityMiddleware",
    "whitenoise.middleware.WhiteNoiseMiddleware",
    "hazards.middleware.RetryTransientDatabaseErrors",
    "django.contrib.sessions.middleware.SessionMiddleware",
    "django.middleware.common.CommonMiddleware",
    "django.middleware.csrf.CsrfViewMiddleware",
    "django.contrib.auth.middleware.AuthenticationMiddleware",
    # Before anything reads the body (the CSRF check reads a form in process_view, later).
    "hazards.middleware.RefuseOversizedBodies",
    "hazards.web.middleware.SessionExpiryMiddleware",
    "hazards.web.middleware.DisplayUnitsMiddleware",
    "django_htmx.middleware.HtmxMiddleware",
    "django.contrib.messages.middleware.MessageMiddleware",
    "django.middleware.clickjacking.XFrameOptionsMiddleware",
    "pghistory.middleware.HistoryMiddleware",
    "csp.middleware.CSPMiddleware",
    "hazards.middleware.ApiNoStoreMiddleware",
]

ROOT_URLCONF = "hazards.urls"
WSGI_APPLICATION = "hazards.wsgi.application"

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
            ],
            "libraries": {
                "exo": "hazards.web.tags",
                "oversight": "hazards.web.oversight_tags",
            },
        },
    },
]

# `default`: the application's own role, which cannot rewrite the audit trail; `owner`: the
# role of DATABASE_URL, which owns the tables and runs migrations (hazards.db, README).
DATABASES = databases(testing=TESTING)

# The step page's charts, keyed by the inputs they are drawn from (hazards.web.indicators):
# one file per key, shared by every worker on the host, the oldest dropped past MAX_ENTRIES.
CACHES = {
    "default": {"BACKEND": "django.core.cache.backends.locmem.LocMemCache"},
    "charts": {
        "BACKEND": "django.core.cache.backends.filebased.FileBasedCache",
        "LOCATION": str(data_dir() / "cache" / "charts"),
        "TIMEOUT": 30 * 24 * 3600,
        "OPTIONS": {"MAX_ENTRIES": 5000},
    },
}
DEFAULT_AUTO_FIELD = "django.db.models.BigAutoField"

PASSWORD_HASHERS = [
    "django.contrib.auth.hashers.Argon2PasswordHasher",
    "django.contrib.auth.hashers.PBKDF2PasswordHasher",
]
if TESTING:
    PASSWORD_HASHERS = ["django.contrib.auth.hashers.MD5PasswordHasher"]

AUTH_PASSWORD_VALIDATORS = [
    {"NAME": "django.contrib.auth.password_validation.UserAttributeSimilarityValidator"},
    {
        "NAME": "django.contrib.auth.password_validation.MinimumLengthValidator",
        "OPTIONS": {"min_length": 12},
    },
    {"NAME": "django.contrib.auth.password_validation.CommonPasswordValidator"},
    {"NAME": "django.contrib.auth.password_validation.NumericPasswordValidator"},
]

LANGUAGE_CODE = "en"
TIME_ZONE = "UTC"
USE_I18N = True
USE_TZ = True

STATIC_URL = "static/"
STATIC_ROOT = BASE_DIR / "var" / "static"
STATICFILES_DIRS = [BASE_DIR / "hazards" / "static"]
WHITENOISE_USE_FINDERS = not PRODUCTION

LOGIN_URL = "/signin/"
LOGIN_REDIRECT_URL = "/"

# Sign-in lockout (INTEGRITY.md §2.6): 5 failures of one user name from one address lock it
# for 15 minutes. Wrong passwords at signing count too (they pass through authenticate()).
AXES_FAILURE_LIMIT = env_int("EXOLEDGER_SIGNIN_FAILURES", 5, minimum=1)
AXES_COOLOFF_TIME = env_int("EXOLEDGER_SIGNIN_LOCK_MINUTES", 15, minimum=1) / 60  # hours
AXES_LOCKOUT_PARAMETERS = [["username", "ip_address"]]
AXES_RESET_ON_SUCCESS = True
AXES_ENABLE_ACCESS_FAILURE_LOG = True
# The client's address: REMOTE_ADDR, or behind the documented proxy the last address in the
# header it sets (hazards.lockout.client_ip). Set only when every request passes that proxy.
EXOLEDGER_CLIENT_IP_HEADER = env_str("EXOLEDGER_CLIENT_IP_HEADER", "")
AXES_CLIENT_IP_CALLABLE = "hazards.lockout.client_ip"
# Password spraying: this many failed sign-ins from one address within the cool-off, whatever
# the user names, refuse that address (sign-in page and token endpoint alike).
EXOLEDGER_SPRAY_LIMIT = env_int("EXOLEDGER_SIGNIN_SPRAY_LIMIT", 20, minimum=1)
# Requests to the token endpoint per client address (DRF rate syntax); 429 with Retry-After.
# Counted in the process's cache: a per-worker fairness limit on top of the lockouts above.
EXOLEDGER_TOKEN_RATE = env_str("EXOLEDGER_TOKEN_RATE", "30/min")
# No AxesMiddleware or AxesBackend on purpose (see INSTALLED_APPS); silence their checks.
SILENCED_SYSTEM_CHECKS = ["axes.W002", "axes.W003"]

# Uploads: calorimeter files are small; anything bigger is refused, never streamed to disk.
DATA_UPLOAD_MAX_MEMORY_SIZE = env_int("EXOLEDGER_MAX_UPLOAD_BYTES", 5 * 1024 * 1024, minimum=1024)
FILE_UPLOAD_MAX_MEMORY_SIZE = DATA_UPLOAD_MAX_MEMORY_SIZE

REST_FRAMEWORK = {
    "DEFAULT_AUTHENTICATION_CLASSES": [
        "hazards.api.auth.HashedTokenAuthentication",
        "rest_framework.authentication.SessionAuthentication",
    ],
    "DEFAULT_PERMISSION_CLASSES": ["rest_framework.permissions.IsAuthenticated"],
    # One bounded parser set for every view (hazards.api.parsers): no 500 from a body.
    "DEFAULT_PARSER_CLASSES": [
        "hazards.api.parsers.LimitedJSONParser",
        "hazards.api.parsers.LimitedFormParser",
        "hazards.api.parsers.LimitedMultiPartParser",
    ],
    "DEFAULT_SCHEMA_CLASS": "hazards.api.schema.ExoledgerAutoSchema",
    "DEFAULT_FILTER_BACKENDS": [
        "django_filters.rest_framework.DjangoFilterBackend",
        "rest_framework.filters.OrderingFilter",
    ],
    "DEFAULT_PAGINATION_CLASS": "hazards.api.pagination.StrictLimitOffsetPagination",
    "PAGE_SIZE": 50,
    "EXCEPTION_HANDLER": "hazards.api.errors.exception_handler",
    "UNAUTHENTICATED_USER": "django.contrib.auth.models.AnonymousUser",
}

SPECTACULAR_SETTINGS = {
    "TITLE": "Exoledger API",
    "DESCRIPTION": (
        "Thermal-safety review records: processes, reaction steps, measurements, vessels, "
        "solvents and their computed indicators. Quantities are objects "
        '`{"value": number, "unit": "pint unit"}` in the canonical unit of each field; '
        "on input any compatible unit, a string such as `\"30 degC\"`, or a bare number in "
        "the canonical unit is accepted.\n\n"
        "**Caution.** These numbers support and do not replace a qualified assessment by a "
        "competent process-safety professional. Local codes, company standards and licensed "
        "practice prevail."
    ),
    "VERSION": "1",
    "SERVE_INCLUDE_SCHEMA": False,
    # Deliberately public (README, "The API"): the schema and its documentation describe the
    # API's shape only, clients are generated from them, and every operation needs sign-in.
    "SERVE_PERMISSIONS": ["rest_framework.permissions.AllowAny"],
    "SWAGGER_UI_DIST": "SIDECAR",
    "SWAGGER_UI_FAVICON_HREF": "SIDECAR",
    "REDOC_DIST": "SIDECAR",
    "COMPONENT_SPLIT_REQUEST": True,
    "POSTPROCESSING_HOOKS": [
        "drf_spectacular.hooks.postprocess_schema_enums",
        "hazards.api.schema_hooks.honour_nullable",
    ],
    # One name per choice set, so the schema generates without warnings.
    "ENUM_NAME_OVERRIDES": {
        "ReviewStateEnum": "hazards.review.models.ReviewState",
        "TokenStateEnum": "hazards.api.token_views.TOKEN_STATES",
        "FindingStatusEnum": "hazards.review.models.FindingStatus",
        "DossierStatusEnum": "hazards.dossier.models.DossierStatus",
        "NotificationKindEnum": "hazards.oversight.models.Kind",
        "FindingKindEnum": "hazards.review.models.FindingKind",
        "HistoryActionEnum": "hazards.api.review_serializers.HISTORY_ACTIONS",
        "MeasureKindEnum": "hazards.models.measures.MeasureKind",
        "MeasureStatusEnum": "hazards.models.measures.MeasureStatus",
        "ReliefSystemEnum": "hazards.models.measures.ReliefSystem",
        "BarrierCheckResultEnum": "hazards.api.serializers.CHECK_RESULTS",
    },
}

# Background work: the tasks API (django-tasks backport) with the database backend; run
# `python manage.py db_worker` (docker-compose's worker service; `serve` starts one).
TASKS = {"default": {"BACKEND": "django_tasks_db.DatabaseBackend", "QUEUES": ["default"]}}

# E-mail of notifications (hazards.oversight): printed to the console unless configured;
# tests use Django's in-memory outbox. Links in e-mails start with EXOLEDGER_BASE_URL.
EMAIL_BACKEND = env_str("EXOLEDGER_EMAIL_BACKEND", "django.core.mail.backends.smtp.EmailBackend"
                        if PRODUCTION else "django.core.mail.backends.console.EmailBackend")
EMAIL_HOST = env_str("EXOLEDGER_EMAIL_HOST", "localhost")
EMAIL_PORT = env_int("EXOLEDGER_EMAIL_PORT", 25, minimum=1)
DEFAULT_FROM_EMAIL = env_str("EXOLEDGER_FROM_EMAIL", "exoledger@localhost")
EXOLEDGER_BASE_URL = env_str("EXOLEDGER_BASE_URL", "http://127.0.0.1:8000")

# Bounds of one dossier render (a child process: RLIMIT_AS, RLIMIT_CPU and a wall clock).
DOSSIER_RENDER_TIMEOUT_SECONDS = env_int("EXOLEDGER_DOSSIER_TIMEOUT_SECONDS", 300, minimum=5)
DOSSIER_RENDER_MEMORY_BYTES = env_int(
    "EXOLEDGER_DOSSIER_MEMORY_MB", 2048, minimum=256) * 1024 * 1024
# A row left `rendering` longer than this lost its worker: it is queued again (at the next
# render job), at most DOSSIER_RENDER_MAX_ATTEMPTS claims in all, then marked failed.
DOSSIER_RENDER_LEASE_SECONDS = env_int(
    "EXOLEDGER_DOSSIER_LEASE_SECONDS", DOSSIER_RENDER_TIMEOUT_SECONDS * 2 + 60, minimum=1)
DOSSIER_RENDER_MAX_ATTEMPTS = 3
# Dossiers a re-issue through the API may bring one process to within 24 hours (429 beyond;
# a re-issue still queued absorbs the next ones).
DOSSIER_REISSUES_PER_DAY = env_int("EXOLEDGER_DOSSIER_REISSUES_PER_DAY", 20, minimum=1)
# Charts of a long dossier are drawn on this many forked processes (1: in the worker itself).
DOSSIER_CHART_PROCESSES = env_int(
    "EXOLEDGER_DOSSIER_CHART_PROCESSES", min(os.cpu_count() or 1, 4), minimum=1)

# A signature made this soon after its signer's password changed says so (page, API, dossier).
CREDENTIAL_CHANGE_HOURS = env_int("EXOLEDGER_CREDENTIAL_CHANGE_HOURS", 72, minimum=1)

# API tokens live this long unless a shorter life is asked for.
API_TOKEN_TTL_HOURS = env_int("EXOLEDGER_API_TOKEN_TTL_HOURS", 24 * 30, minimum=1)

LOGGING = {
    "version": 1,
    "disable_existing_loggers": False,
    "handlers": {"console": {"class": "logging.StreamHandler"}},
    "root": {"handlers": ["console"], "level": env_str("EXOLEDGER_LOG_LEVEL", "WARNING")},
}

SESSION_COOKIE_HTTPONLY = True
CSRF_COOKIE_HTTPONLY = False
SESSION_COOKIE_AGE = env_int("EXOLEDGER_SESSION_SECONDS", 8 * 3600, minimum=60)
# Idle expiry of a signed-in session (INTEGRITY.md §2.3); SESSION_COOKIE_AGE is the absolute
# lifetime. Both are enforced on the server by hazards.web.middleware.SessionExpiryMiddleware.
SESSION_IDLE_SECONDS = env_int("EXOLEDGER_SESSION_IDLE_SECONDS", 30 * 60, minimum=60)
X_FRAME_OPTIONS = "DENY"
SECURE_CONTENT_TYPE_NOSNIFF = True
if PRODUCTION:
    SESSION_COOKIE_SECURE = True
    CSRF_COOKIE_SECURE = True
    SECURE_SSL_REDIRECT = env_bool("EXOLEDGER_SSL_REDIRECT", True)
    SECURE_HSTS_SECONDS = env_int("EXOLEDGER_HSTS_SECONDS", 31536000)
    SECURE_HSTS_INCLUDE_SUBDOMAINS = True
    SECURE_HSTS_PRELOAD = True
    SECURE_PROXY_SSL_HEADER = ("HTTP_X_FORWARDED_PROTO", "https")

# The audit trail: append-only event tables for every tracked model (INTEGRITY.md §0.2).
PGHISTORY_APPEND_ONLY = True

# Content Security Policy (django-csp 4): only our own scripts, styles, fonts and images.
CONTENT_SECURITY_POLICY = {
    "DIRECTIVES": {
        "default-src": ["'self'"],
        "script-src": ["'self'"],
        "style-src": ["'self'"],
        "img-src": ["'self'", "data:"],
        "font-src": ["'self'"],
        "connect-src": ["'self'"],
        "frame-ancestors": ["'none'"],
        "form-action": ["'self'"],
        "base-uri": ["'self'"],
        "object-src": ["'none'"],
    }
}
