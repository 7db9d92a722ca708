"""System checks for configuration mistakes that Django itself does not catch."""

from __future__ import annotations

from django.conf import settings
from django.core.checks import Error, Warning, register


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
