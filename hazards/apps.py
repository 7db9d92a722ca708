from django.apps import AppConfig


class HazardsConfig(AppConfig):
    name = "hazards"
    verbose_name = "Exoledger hazard-review records"
    default_auto_field = "django.db.models.BigAutoField"

    def ready(self) -> None:
        from django.db.models.signals import post_migrate

        from hazards import checks  # noqa: F401  (registers system checks)
        from hazards.dbroles import ensure_app_role_after_migrate
        from hazards.models.base import inputs_written
        from hazards.services.indicators import on_inputs_written

        # After every migrate, as the owner: the application's role and its grants.
        post_migrate.connect(ensure_app_role_after_migrate, sender=self)
        # Models announce written inputs; the indicator recompute subscribes (same transaction).
        inputs_written.connect(on_inputs_written, dispatch_uid="indicators-recompute")
