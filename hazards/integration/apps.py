from django.apps import AppConfig


class IntegrationConfig(AppConfig):
    name = "hazards.integration"
    label = "integration"
    verbose_name = "Exoledger integration (API idempotency, service accounts)"
    default_auto_field = "django.db.models.BigAutoField"
