"""The canonical content of a process: exactly what a revision freezes and a signature binds."""

from __future__ import annotations

import datetime as dt

from django.db import models
from django.db.models import Prefetch

from hazards.models import (
    CalorimetryRun,
    DecompositionTest,
    IndicatorSnapshot,
    Measure,
    Process,
    ReactionStep,
)
from hazards.services.indicators import canonical_json, sha256_hex

CONTENT_SCHEMA = "exoledger.revision-content/1"
# Bookkeeping columns that say nothing about the assessment.
SKIPPED = {"created_at", "updated_at", "version", "needs_review", "approved_inputs_hash",
           "raw_file", "original", "data"}


def _value(value):
    if isinstance(value, dt.datetime | dt.date):
        return value.isoformat()
    if isinstance(value, bytes | memoryview):
        return None
    return value


def record_fields(obj: models.Model, *, skip: tuple[str, ...] = ()) -> dict:
    """A record's own columns as plain JSON values, keyed by column name."""
    return {
        f.attname: _value(getattr(obj, f.attname))
        for f in obj._meta.concrete_fields
        if f.attname not in SKIPPED and f.attname not in skip
    }


def _snapshot(snapshot: IndicatorSnapshot | None) -> dict | None:
    if snapshot is None:
        return None
    return {
        "inputs": snapshot.inputs,
        "inputs_hash": snapshot.inputs_hash,
        "values": snapshot.values,
        "methods": snapshot.methods,
        "parameters": snapshot.parameters,
        "warnings": snapshot.warnings,
        "references": snapshot.references,
        "calcs_version": snapshot.calcs_version,
        "criticality_class": snapshot.criticality_class,
    }


def _series(run: CalorimetryRun) -> dict | None:
    try:
        series = run.series
    except models.ObjectDoesNotExist:
        return None
    return record_fields(series, skip=("columns", "derived"))


def _measures(step: ReactionStep) -> dict:
    measures = [record_fields(m) for m in step.measures.all()]
    return {"measures": measures} if measures else {}


def _curves(test: DecompositionTest) -> dict:
    curves = sorted(test.curves.all(), key=lambda c: c.pk)
    if not curves:
        return {}
    return {"curves": [record_fields(c, skip=("columns", "derived")) | {"derived": _derived(c)}
                       for c in curves]}


def _derived(curve) -> dict:
    """What a curve yields, without the chart points of its φ-corrected curve."""
    out = dict(curve.derived)
    if out.get("corrected"):
        out["corrected"] = {k: v for k, v in out["corrected"].items() if k != "curve"}
    return out


def revision_content(process: Process) -> dict:
    """The canonical content of the process's current state: its fields, and for each step
    its fields, measurements and current indicator snapshot (inputs and values)."""
    process = Process._base_manager.select_related("site").get(pk=process.pk)
    steps = (
        ReactionStep._base_manager.filter(process_id=process.pk)
        .order_by("sequence", "id")
        .prefetch_related(
            Prefetch(
                "calorimetry_runs",
                queryset=CalorimetryRun._base_manager.select_related("series").order_by("id"),
            ),
            Prefetch(
                "decomposition_tests",
                queryset=DecompositionTest._base_manager.order_by("id").prefetch_related(
                    "peaks", "curves"
                ),
            ),
            Prefetch("measures", queryset=Measure._base_manager.order_by("id")),
            Prefetch(
                "snapshots",
                queryset=IndicatorSnapshot.objects.filter(is_current=True),
                to_attr="current_snapshots",
            ),
        )
    )
    return {
        "schema": CONTENT_SCHEMA,
        "process": {
            **record_fields(process, skip=("owner_id",)),
            "site": {"code": process.site.code, "name": process.site.name},
        },
        "steps": [
            {
                **record_fields(step),
                "calorimetry_runs": [
                    {**record_fields(run), "series": _series(run)}
                    for run in step.calorimetry_runs.all()
                ],
                "decomposition_tests": [
                    {
                        **record_fields(test),
                        "peaks": [
                            record_fields(p)
                            for p in sorted(test.peaks.all(), key=lambda p: p.pk)
                        ],
                        # the measured curves by the SHA-256 of their bytes and the analysis
                        # settings (the test's kinetics above names the model and parameters);
                        # only where a test has curves, so other content is unchanged
                        **_curves(test),
                    }
                    for test in step.decomposition_tests.all()
                ],
                "indicators": _snapshot(
                    step.current_snapshots[0] if step.current_snapshots else None
                ),
                # only steps with measures carry the key: older content keeps its hash
                **_measures(step),
            }
            for step in steps
        ],
    }


def content_sha256(content: dict) -> str:
    return sha256_hex(canonical_json(content))
