"""The recompute queue holds no live row between transactions but gathers a dead row per
queued step: vacuum it after a few hundred, not after 20 % of nothing (the defaults), and
without the cost delay. `manage.py housekeeping` vacuums it too, for servers whose autovacuum
is off."""

from django.db import migrations

TABLE = "hazards_pendingrecompute"


class Migration(migrations.Migration):
    dependencies = [("hazards", "0007_step_edges_inputs")]

    operations = [
        migrations.RunSQL(
            f"ALTER TABLE {TABLE} SET (autovacuum_vacuum_threshold = 200, "
            "autovacuum_vacuum_scale_factor = 0, autovacuum_vacuum_insert_threshold = 200, "
            "autovacuum_vacuum_insert_scale_factor = 0, autovacuum_vacuum_cost_delay = 0, "
            "autovacuum_analyze_threshold = 200, autovacuum_analyze_scale_factor = 0)",
            f"ALTER TABLE {TABLE} RESET (autovacuum_vacuum_threshold, "
            "autovacuum_vacuum_scale_factor, autovacuum_vacuum_insert_threshold, "
            "autovacuum_vacuum_insert_scale_factor, autovacuum_vacuum_cost_delay, "
            "autovacuum_analyze_threshold, autovacuum_analyze_scale_factor)",
        ),
    ]
