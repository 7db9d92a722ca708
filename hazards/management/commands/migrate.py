"""`migrate` as the owner of the tables, not as the application's role.

The application's role may not create or alter tables (hazards.dbroles). Some migrations
(ours and third-party data migrations) use the `default` connection rather than the
migrating one, and a second session would wait on the first one's locks; so while this
command runs, `default` itself connects as the owner, and afterwards as before.
"""

from __future__ import annotations

from django.core.management.commands.migrate import Command as DjangoMigrate
from django.db import connections


class Command(DjangoMigrate):
    def add_arguments(self, parser):
        super().add_arguments(parser)
        parser.set_defaults(database=None)  # unset: the owner, through `default`

    def execute(self, *args, **options):
        if options.get("database") or "owner" not in connections.settings:
            return super().execute(
                *args, **{**options, "database": options.get("database") or "default"}
            )
        default = connections["default"]
        saved = dict(default.settings_dict)
        default.close()
        default.settings_dict.update(
            {key: connections["owner"].settings_dict[key] for key in ("USER", "PASSWORD")}
        )
        try:
            return super().execute(*args, **{**options, "database": "default"})
        finally:
            default.close()
            default.settings_dict.clear()
            default.settings_dict.update(saved)
