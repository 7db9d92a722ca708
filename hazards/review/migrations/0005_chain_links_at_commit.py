"""Events are linked to the chain at COMMIT (issue 22 item 4): the chain lock is no longer
held from a transaction's first event through its indicator recompute, only for the append.

Replaces the per-event trigger of 0002 (dropped with its function) by the stage and commit
triggers of `hazards.review.chain_sql`; links any event that reached the trail while no
trigger was installed. The link formula is unchanged, so the existing chain continues."""

from django.db import migrations, models

from hazards.review import chain_sql

# The stage is emptied by the transaction that fills it: vacuum its dead rows early.
PENDING_STORAGE_SQL = (
    "ALTER TABLE review_chainpending SET (autovacuum_vacuum_threshold = 1000, "
    "autovacuum_vacuum_scale_factor = 0, autovacuum_vacuum_insert_threshold = 1000)"
)


def link_at_commit(apps, schema_editor):
    # At run time, not when the migration is loaded: migrations must load without the app.
    from hazards.review import audit  # noqa: PLC0415 — migration

    with schema_editor.connection.cursor() as cursor:
        cursor.execute("DROP FUNCTION IF EXISTS review_chain_append() CASCADE")
    audit.install_chain_triggers(using=schema_editor.connection.alias)
    audit.adopt_unlinked_events()


class Migration(migrations.Migration):
    dependencies = [
        ("review", "0004_finding_duties"),
    ]

    operations = [
        migrations.CreateModel(
            name="ChainPending",
            fields=[
                ("id", models.BigAutoField(primary_key=True, serialize=False)),
                ("txid", models.BigIntegerField(db_index=True)),
                ("event_table", models.CharField(max_length=120)),
                ("event_id", models.BigIntegerField()),
                ("payload_sha256", models.CharField(max_length=64)),
            ],
        ),
        migrations.RunSQL(PENDING_STORAGE_SQL, migrations.RunSQL.noop),
        migrations.RunSQL(chain_sql.FUNCTIONS_SQL, chain_sql.DROP_FUNCTIONS_SQL),
        migrations.RunPython(link_at_commit, migrations.RunPython.noop),
    ]
