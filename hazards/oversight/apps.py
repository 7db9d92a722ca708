from django.apps import AppConfig


class OversightConfig(AppConfig):
    """Keeping approvals current: revalidation dates, change records and notifications."""

    name = "hazards.oversight"
    label = "oversight"
    verbose_name = "Revalidation, change records and notifications"

    def ready(self) -> None:
        # Models exist once the registry is ready (Django's place for it).
        from hazards.oversight import hooks  # noqa: PLC0415 — app registry

        hooks.connect()
