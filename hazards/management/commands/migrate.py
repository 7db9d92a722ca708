"""`migrate` as the owner of the tables (the `owner` database), not as the application.

The application's role may not create or alter tables (hazards.dbroles); without an explicit
`--database` this command uses the owner's connection when the application has its own role.
"""

from __future__ import annotations

from django.core.management.commands.migrate import Command as DjangoMigrate

from hazards.db import owner_alias


class Command(DjangoMigrate):
    def add_arguments(self, parser):
        super().add_arguments(parser)
        parser.set_defaults(database=None)

    def handle(self, *args, **options):
        if not options.get("database"):
            options["database"] = owner_alias()
        return super().handle(*args, **options)
