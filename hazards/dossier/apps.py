from django.apps import AppConfig


class DossierConfig(AppConfig):
    name = "hazards.dossier"
    label = "dossier"
    verbose_name = "Dossiers"
    default_auto_field = "django.db.models.BigAutoField"
