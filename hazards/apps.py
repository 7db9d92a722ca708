from django.apps import AppConfig


class HazardsConfig(AppConfig):
    name = "hazards"
    verbose_name = "Exoledger hazard-review records"
    default_auto_field = "django.db.models.BigAutoField"

    def ready(self) -> None:
        from hazards import checks  # noqa: F401  (registers system checks)
