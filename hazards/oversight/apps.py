from django.apps import AppConfig


class OversightConfig(AppConfig):
    """Keeping approvals current: revalidation dates, change records and notifications."""

    name = "hazards.oversight"
    label = "oversight"
    verbose_name = "Revalidation, change records and notifications"

    def ready(self) -> None:
        from hazards.oversight import hooks

        hooks.connect()
