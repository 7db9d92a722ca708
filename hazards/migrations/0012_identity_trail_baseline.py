"""A `baseline` event for every identity row that existed before it was tracked, so that
`verify` can tell later changes that bypass the trail from rows that predate it; the chain
trigger is installed on the new event tables first, so these events are linked too."""

from django.db import migrations

from hazards.review import audit

# Event tables of the rows that existed before (never a password event: none happened).
BASELINE = [
    "hazards_userevent",
    "hazards_groupevent",
    "hazards_usergroupevent",
    "hazards_userpermissionevent",
    "hazards_grouppermissionevent",
    "hazards_apitokenevent",
    "hazards_serviceaccountevent",
    "oversight_changepolicyevent",
    "review_signinglockoutevent",
]


def record_baseline(apps, schema_editor):
    connection = schema_editor.connection
    audit.install_chain_triggers(using=connection.alias)
    models = {m._meta.db_table: m for m in audit.event_models()}
    with connection.cursor() as cursor:
        for table in BASELINE:
            event_model = models[table]
            tracked = event_model.pgh_tracked_model._meta
            has_obj = any(f.name == "pgh_obj" for f in event_model._meta.fields)
            columns = [
                f.column for f in event_model._meta.fields if not f.column.startswith("pgh_")
            ]
            cols = ", ".join(f'"{c}"' for c in columns)
            values = ", ".join(f'o."{c}"' for c in columns)
            obj = (", pgh_obj_id", f', o."{tracked.pk.column}"') if has_obj else ("", "")
            cursor.execute(
                f'INSERT INTO "{table}" ({cols}, pgh_created_at, pgh_label{obj[0]}) '
                f"SELECT {values}, now(), 'baseline'{obj[1]} FROM \"{tracked.db_table}\" o "
                f'WHERE NOT EXISTS (SELECT 1 FROM "{table}" e WHERE e."id" = o."id") '
                f'ORDER BY o."id"'
            )


class Migration(migrations.Migration):
    dependencies = [
        ("hazards", "0011_identity_trail"),
        ("oversight", "0003_change_policy_trail"),
        ("review", "0009_signing_lockout_trail"),
    ]

    operations = [migrations.RunPython(record_baseline, migrations.RunPython.noop)]
