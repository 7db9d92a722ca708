"""Database triggers that queue steps for recomputation whenever one of their inputs changes.

Triggers run for ORM saves, `QuerySet.update()`, bulk writes and raw SQL alike. A deferred
constraint trigger refuses to commit a transaction that still has queued steps, so no
write path can leave a stale indicator snapshot behind, even one outside the application.
"""

from __future__ import annotations

import pgtrigger

from hazards.models.indicators import PendingRecompute
from hazards.models.measurements import (
    CalorimetryRun,
    CalorimetrySeries,
    DecompositionCurve,
    DecompositionPeak,
    DecompositionTest,
)
from hazards.models.measures import Measure
from hazards.models.process import ReactionStep
from hazards.models.reference import Solvent, Vessel

PENDING = "hazards_pendingrecompute"
# Columns whose change does not touch the indicators.
BOOKKEEPING = {"id", "created_at", "updated_at", "version", "needs_review", "approved_inputs_hash",
               "notes", "raw_file", "raw_file_name", "original", "file_name"}


def _input_columns(model) -> list[str]:
    return [
        f.column for f in model._meta.concrete_fields if f.column not in BOOKKEEPING
    ]


def _unchanged(model) -> str:
    cols = _input_columns(model)
    old = ", ".join(f"OLD.{c}" for c in cols)
    new = ", ".join(f"NEW.{c}" for c in cols)
    return f"TG_OP = 'UPDATE' AND ROW({old}) IS NOT DISTINCT FROM ROW({new})"


def _queue(select_new: str, select_old: str, model) -> str:
    return f"""
        IF {_unchanged(model)} THEN RETURN NULL; END IF;
        IF TG_OP IN ('INSERT', 'UPDATE') THEN
            INSERT INTO {PENDING} (step_id, queued_at) {select_new};
        END IF;
        IF TG_OP IN ('UPDATE', 'DELETE') THEN
            INSERT INTO {PENDING} (step_id, queued_at) {select_old};
        END IF;
        RETURN NULL;
    """


def _register(model, name: str, func: str) -> None:
    pgtrigger.register(
        pgtrigger.Trigger(
            name=name,
            when=pgtrigger.After,
            operation=pgtrigger.Insert | pgtrigger.Update | pgtrigger.Delete,
            func=func,
        )
    )(model)


_register(
    ReactionStep,
    "queue_step_recompute",
    _queue(
        "SELECT NEW.id, now()",
        # A deleted step takes its snapshots with it; nothing to recompute.
        "SELECT OLD.id, now() WHERE TG_OP = 'UPDATE'",
        ReactionStep,
    ),
)
for _model, _name in ((CalorimetryRun, "queue_calorimetry_recompute"),
                      (DecompositionTest, "queue_decomposition_recompute"),
                      (Measure, "queue_measure_recompute")):
    _register(
        _model,
        _name,
        _queue("SELECT NEW.step_id, now()", "SELECT OLD.step_id, now()", _model),
    )
_register(
    CalorimetrySeries,
    "queue_series_recompute",
    _queue(
        "SELECT r.step_id, now() FROM hazards_calorimetryrun r WHERE r.id = NEW.run_id",
        "SELECT r.step_id, now() FROM hazards_calorimetryrun r WHERE r.id = OLD.run_id",
        CalorimetrySeries,
    ),
)
_register(
    DecompositionCurve,
    "queue_curve_recompute",
    _queue(
        "SELECT t.step_id, now() FROM hazards_decompositiontest t WHERE t.id = NEW.test_id",
        "SELECT t.step_id, now() FROM hazards_decompositiontest t WHERE t.id = OLD.test_id",
        DecompositionCurve,
    ),
)
_register(
    DecompositionPeak,
    "queue_peak_recompute",
    _queue(
        "SELECT t.step_id, now() FROM hazards_decompositiontest t WHERE t.id = NEW.test_id",
        "SELECT t.step_id, now() FROM hazards_decompositiontest t WHERE t.id = OLD.test_id",
        DecompositionPeak,
    ),
)
for _model, _name, _fk in ((Vessel, "queue_vessel_fanout", "vessel_id"),
                           (Solvent, "queue_solvent_fanout", "solvent_id")):
    _register(
        _model,
        _name,
        _queue(
            f"SELECT s.id, now() FROM hazards_reactionstep s WHERE s.{_fk} = NEW.id",
            f"SELECT s.id, now() FROM hazards_reactionstep s WHERE s.{_fk} = OLD.id",
            _model,
        ),
    )

pgtrigger.register(
    pgtrigger.Trigger(
        name="refuse_commit_with_stale_indicators",
        when=pgtrigger.After,
        operation=pgtrigger.Insert,
        timing=pgtrigger.Deferred,
        func=f"""
            IF EXISTS (SELECT 1 FROM {PENDING} WHERE id = NEW.id) THEN
                RAISE EXCEPTION USING
                    ERRCODE = 'integrity_constraint_violation',
                    MESSAGE = 'indicator snapshot of step ' || NEW.step_id || ' would be stale',
                    HINT = 'Write through the application, or call '
                           'hazards.services.indicators.flush_pending() before COMMIT.';
            END IF;
            RETURN NULL;
        """,
    )
)(PendingRecompute)
