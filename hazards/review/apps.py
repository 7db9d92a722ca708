from django.apps import AppConfig
from django.db.models.signals import post_migrate


class ReviewConfig(AppConfig):
    """Review of process revisions, electronic sign-off and the hash-chained audit trail."""

    name = "hazards.review"
    label = "review"
    verbose_name = "Review and sign-off"

    def ready(self) -> None:
        # Models exist once the registry is ready (Django's place for it).
        from hazards.review import audit, hooks  # noqa: PLC0415 — app registry

        post_migrate.connect(audit.install_chain_triggers_after_migrate, sender=self)
        hooks.connect()
