"""System checks for configuration mistakes that Django itself does not catch."""

from __future__ import annotations

from django.conf import settings
from django.core.checks import Error, Warning, register
from django.db import DatabaseError

from hazards.dbroles import role_problems


@register()
def database_is_postgresql(app_configs=None, **kwargs):
    engine = settings.DATABASES["default"]["ENGINE"]
    if engine != "django.db.backends.postgresql":
        return [Error(f"Only PostgreSQL is supported, not {engine}.", id="exoledger.E001")]
    return []


@register(deploy=True)
def seal_key_differs_from_secret_key(app_configs=None, **kwargs):
    if getattr(settings, "PRODUCTION", False) and settings.SIGNATURE_SEAL_KEY == settings.SECRET_KEY:
        return [
            Warning(
                "EXOLEDGER_SEAL_KEY is not set: signatures are sealed with the secret key.",
                hint="Set EXOLEDGER_SEAL_KEY to a separate secret kept outside the database.",
                id="exoledger.W001",
            )
        ]
    return []


@register(deploy=True)
def application_role_cannot_rewrite_history(app_configs=None, **kwargs):
    """The application must not connect as a superuser or the owner of the audit tables.

    Asked of the database; skipped when it cannot be reached (the other deployment checks
    need none)."""

    try:
        problems = role_problems("default")
    except DatabaseError:
        return []
    return [
        Warning(
            f"{problem}: it could rewrite the audit trail.",
            hint="Connect as the restricted role (EXOLEDGER_DB_APP_ROLE, created and granted "
            "by `manage.py migrate` run as the owner in DATABASE_URL); see the README.",
            id="exoledger.W002",
        )
        for problem in problems
    ]
