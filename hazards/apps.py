from django.apps import AppConfig
from django.contrib.auth.signals import user_logged_in
from django.db.models.signals import post_migrate


class HazardsConfig(AppConfig):
    name = "hazards"
    verbose_name = "Exoledger hazard-review records"
    default_auto_field = "django.db.models.BigAutoField"

    def ready(self) -> None:
        # Here and not at the top: these read models, which exist once the registry is ready
        # (Django's place for it); `checks` registers the system checks by being imported.
        from hazards import checks, dbroles  # noqa: F401, PLC0415 — app registry (above)
        from hazards.services import indicators  # noqa: PLC0415 — app registry (above)
        from hazards.web import middleware  # noqa: PLC0415 — app registry (above)

        # After every migrate, as the owner: the application's role and its grants.
        post_migrate.connect(dbroles.ensure_app_role_after_migrate, sender=self)
        # Models announce written inputs; the indicator recompute subscribes (same transaction).
        indicators.connect()
        # A session starts with the person's display units (no page has to read them).
        user_logged_in.connect(middleware.remember_display_units_at_sign_in,
                               dispatch_uid="display-units-at-sign-in")
