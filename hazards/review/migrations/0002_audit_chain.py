"""The hash chain over every audit event: its trigger function, triggers, and the events
that existed before the chain (linked once, here; later unlinked events are reported)."""

from django.db import migrations

from hazards.review import audit


def link_existing(apps, schema_editor):
    audit.install_chain_triggers(using=schema_editor.connection.alias)
    audit.adopt_unlinked_events()


class Migration(migrations.Migration):

    dependencies = [
        ("review", "0001_initial"),
    ]

    operations = [
        migrations.RunSQL(audit.FUNCTIONS_SQL, audit.DROP_FUNCTIONS_SQL),
        migrations.RunPython(link_existing, migrations.RunPython.noop),
    ]
