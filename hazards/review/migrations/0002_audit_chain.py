"""The hash chain over every audit event: its trigger function, triggers, and the events
that existed before the chain (linked once, here; later unlinked events are reported).

Frozen as first applied: the chain then linked each event as it was inserted, under the
chain lock held to COMMIT. 0004 replaces this with linking at COMMIT."""

from django.db import migrations

CHAIN_LOCK_KEY = 7_345_012_026

FUNCTIONS_SQL = f"""
CREATE OR REPLACE FUNCTION review_payload_digest(tbl text, payload json) RETURNS text
LANGUAGE sql IMMUTABLE AS $$
    SELECT encode(sha256(convert_to(tbl || ':' || payload::text, 'UTF8')), 'hex')
$$;

CREATE OR REPLACE FUNCTION review_chain_append() RETURNS trigger
LANGUAGE plpgsql SET timezone = 'UTC' SET extra_float_digits = 1 AS $$
DECLARE
    prev text;
    payload text;
BEGIN
    PERFORM pg_advisory_xact_lock({CHAIN_LOCK_KEY});
    SELECT hash INTO prev FROM review_chainlink ORDER BY seq DESC LIMIT 1;
    prev := coalesce(prev, repeat('0', 64));
    payload := review_payload_digest(TG_TABLE_NAME, row_to_json(NEW));
    INSERT INTO review_chainlink (event_table, event_id, payload_sha256, prev_hash, hash,
                                  linked_at)
    VALUES (TG_TABLE_NAME, NEW.pgh_id, payload, prev,
            encode(sha256(convert_to(prev || payload, 'UTF8')), 'hex'), clock_timestamp());
    RETURN NULL;
END
$$;
"""
DROP_FUNCTIONS_SQL = """
DROP FUNCTION IF EXISTS review_chain_append() CASCADE;
DROP FUNCTION IF EXISTS review_payload_digest(text, json);
"""


def link_existing(apps, schema_editor):
    # At run time, not when the migration is loaded: migrations must load without the app.
    from hazards.review import audit  # noqa: PLC0415 — migration

    with schema_editor.connection.cursor() as cursor:
        for table in audit.existing_event_tables(cursor):
            cursor.execute(
                f'CREATE OR REPLACE TRIGGER review_chain_link AFTER INSERT ON "{table}" '
                "FOR EACH ROW EXECUTE FUNCTION review_chain_append()"
            )
    audit.adopt_unlinked_events(using=schema_editor.connection.alias)


class Migration(migrations.Migration):
    dependencies = [
        ("review", "0001_initial"),
    ]

    operations = [
        migrations.RunSQL(FUNCTIONS_SQL, DROP_FUNCTIONS_SQL),
        migrations.RunPython(link_existing, migrations.RunPython.noop),
    ]
