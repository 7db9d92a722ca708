from django.apps import AppConfig


class ReviewConfig(AppConfig):
    """Review of process revisions, electronic sign-off and the hash-chained audit trail."""

    name = "hazards.review"
    label = "review"
    verbose_name = "Review and sign-off"

    def ready(self) -> None:
        from django.db.models.signals import post_migrate

        from hazards.review import audit, hooks

        post_migrate.connect(audit.install_chain_triggers_after_migrate, sender=self)
        hooks.connect()
