"""Live indicators: every change to an input recomputes the snapshots of the steps it touches.

Database triggers queue the affected steps (hazards.models.triggers); `flush_pending` drains
the queue inside the same transaction, computes through `calcs.scenario` and stores one new
snapshot per step whose inputs changed. Reads and writes are batched, so a change to a vessel
shared by thousands of steps costs a fixed number of queries.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Iterable
from dataclasses import dataclass

from django.db import connections, transaction
from django.db.models import Prefetch

import calcs
from hazards.models import (
    CalorimetryRun,
    CalorimetrySeries,
    DecompositionTest,
    IndicatorSnapshot,
    ReactionStep,
)


def canonical_json(data) -> str:
    """The one serialisation that is hashed and signed: sorted keys, no spaces, UTF-8."""
    return json.dumps(data, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      allow_nan=False)


def sha256_hex(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _basis(items: list, marked: str = "is_basis"):
    """The record marked as basis, else the most recent (list is ordered newest first)."""
    for item in items:
        if getattr(item, marked):
            return item, "marked as basis"
    return (items[0], "most recent") if items else (None, None)


@dataclass(frozen=True)
class StepCase:
    """Everything one step's assessment depends on, as plain data."""

    inputs: dict
    scenario_inputs: object  # calcs.scenario.StepInputs
    basis: dict


def _series_inputs(run: CalorimetryRun | None):
    from calcs import scenario

    try:
        series = run.series if run is not None else None
    except CalorimetrySeries.DoesNotExist:
        series = None
    if series is None:
        return None, None
    data = series.data
    return (
        scenario.SeriesInputs(
            time_s=data["time_s"],
            heat_release_rate_w=data["heat_release_rate_w"],
            dosed_fraction=data["dosed_fraction"],
            reactor_temperature_k=data.get("reactor_temperature_k"),
            initial_mass_kg=series.initial_mass_kg,
            feed_mass_kg=series.feed_mass_kg,
        ),
        series.sha256,
    )


def build_case(step: ReactionStep) -> StepCase:
    """Assemble a step's cooling-failure scenario from its (prefetched) records."""
    from calcs import scenario

    runs = list(step.calorimetry_runs.all())
    tests = list(step.decomposition_tests.all())
    run, run_why = _basis(runs)
    test, test_why = _basis(tests)
    solvent, vessel = step.solvent, step.vessel
    series, series_hash = _series_inputs(run)

    antoine = None
    if solvent is not None and solvent.vapour_pressure_source == "antoine":
        antoine = scenario.AntoineInputs(
            a=solvent.antoine_a,
            b=solvent.antoine_b,
            c=solvent.antoine_c,
            log_base=solvent.antoine_log_base,
            pressure_unit=solvent.antoine_pressure_unit,
            temperature_unit=solvent.antoine_temperature_unit,
            t_min_k=solvent.antoine_t_min_k,
            t_max_k=solvent.antoine_t_max_k,
        )
    peaks = tuple(
        (p.heating_rate_k_per_s, p.peak_temperature_k) for p in test.peaks.all()
    ) if test is not None else ()

    fields = {
        "operation_mode": step.operation_mode,
        "process_temperature_k": step.process_temperature_k,
        "reaction_mass_kg": step.reaction_mass_kg,
        "specific_heat_capacity_j_per_kg_k": step.specific_heat_capacity_j_per_kg_k,
        "system": step.system,
        "operating_pressure_pa": step.operating_pressure_pa,
        "dosing_time_s": step.dosing_time_s,
        "mtt_override_k": step.mtt_override_k,
        "solvent_cas": solvent.cas_number if solvent and not antoine else None,
        "vessel_heat_transfer_area_m2": vessel.heat_transfer_area_m2 if vessel else None,
        "vessel_u_w_per_m2_k": vessel.heat_transfer_coefficient_w_per_m2_k if vessel else None,
        "vessel_coolant_temperature_k": vessel.coolant_temperature_k if vessel else None,
        "vessel_relief_set_pressure_pa": vessel.relief_set_pressure_pa if vessel else None,
        "vessel_design_pressure_pa": vessel.design_pressure_pa if vessel else None,
        "vessel_headspace_m3": vessel.headspace_volume_m3 if vessel else None,
        "specific_reaction_heat_j_per_kg": run.specific_reaction_heat_j_per_kg if run else None,
        "max_accumulation": run.max_accumulation if run else None,
        "max_heat_release_rate_w_per_kg": run.max_heat_release_rate_w_per_kg if run else None,
        "gas_release_mol_per_kg": run.gas_release_mol_per_kg if run else None,
        "decomposition_method": test.method if test else None,
        "onset_temperature_k": test.onset_temperature_k if test else None,
        "decomposition_energy_j_per_kg": test.decomposition_energy_j_per_kg if test else None,
        "activation_energy_j_per_mol": test.activation_energy_j_per_mol if test else None,
        "reference_temperature_k": test.reference_temperature_k if test else None,
        "heat_release_rate_at_reference_w_per_kg": (
            test.heat_release_rate_at_reference_w_per_kg if test else None
        ),
        "phi_factor": test.phi_factor if test else None,
    }
    scenario_inputs = scenario.StepInputs(
        **fields,
        solvent_antoine=antoine,
        series=series,
        peak_temperatures=peaks or None,
    )
    basis = {
        "calorimetry_run": run.pk if run else None,
        "calorimetry_run_chosen": run_why,
        "decomposition_test": test.pk if test else None,
        "decomposition_test_chosen": test_why,
        "solvent": solvent.pk if solvent else None,
        "vessel": vessel.pk if vessel else None,
    }
    inputs = {
        **fields,
        "solvent_antoine": None if antoine is None else {
            "a": antoine.a, "b": antoine.b, "c": antoine.c, "log_base": antoine.log_base,
            "pressure_unit": antoine.pressure_unit, "temperature_unit": antoine.temperature_unit,
            "t_min_k": antoine.t_min_k, "t_max_k": antoine.t_max_k,
        },
        "series_sha256": series_hash,
        "peak_temperatures": [list(p) for p in peaks],
        "basis": basis,
    }
    return StepCase(inputs=inputs, scenario_inputs=scenario_inputs, basis=basis)


def steps_for_assessment(step_ids: Iterable[int]):
    """The steps with everything `build_case` reads, in a fixed number of queries."""
    return (
        ReactionStep._base_manager.filter(pk__in=list(step_ids))
        .select_related("solvent", "vessel")
        .prefetch_related(
            Prefetch(
                "calorimetry_runs",
                queryset=CalorimetryRun._base_manager.select_related("series").order_by(
                    "-run_date", "-id"
                ),
            ),
            Prefetch(
                "decomposition_tests",
                queryset=DecompositionTest._base_manager.order_by("-test_date", "-id")
                .prefetch_related("peaks"),
            ),
            Prefetch(
                "snapshots",
                queryset=IndicatorSnapshot.objects.filter(is_current=True),
                to_attr="current_snapshots",
            ),
        )
    )


PROVENANCE_KEYS = ("warnings", "methods", "parameters", "references")


def assess(case: StepCase) -> dict:
    """Compute the indicator set of one case; returns the snapshot's JSON parts."""
    from calcs import scenario

    data = scenario.assess_step(case.scenario_inputs).to_dict()
    provenance = {key: data.pop(key) for key in PROVENANCE_KEYS}
    return {"values": data, **provenance}


def _snapshot_from(step: ReactionStep, case: StepCase, inputs_hash: str, now) -> IndicatorSnapshot:
    data = assess(case)
    return IndicatorSnapshot(
        step=step,
        computed_at=now,
        inputs=case.inputs,
        inputs_hash=inputs_hash,
        calcs_version=calcs.__version__,
        values=data["values"],
        methods=data["methods"],
        parameters=data.get("parameters", {}),
        warnings=list(data["warnings"]),
        references=list(data["references"]),
        criticality_class=data["values"].get("criticality_class"),
        is_current=True,
    )


def recompute_steps(step_ids: Iterable[int], *, using: str = "default", force: bool = False):
    """Recompute the given steps; returns {step_id: (old_class, new_class)} of those renewed."""
    ids = sorted(set(step_ids))
    if not ids:
        return {}
    changed: dict[int, tuple] = {}
    with transaction.atomic(using=using):
        with connections[using].cursor() as cursor:
            cursor.execute("SELECT now()")
            (now,) = cursor.fetchone()
        fresh, retire, stale_approval = [], [], []
        for step in steps_for_assessment(ids).using(using):
            case = build_case(step)
            inputs_hash = sha256_hex(canonical_json(case.inputs))
            current = step.current_snapshots[0] if step.current_snapshots else None
            if (not force and current is not None and current.inputs_hash == inputs_hash
                    and current.calcs_version == calcs.__version__):
                continue
            snap = _snapshot_from(step, case, inputs_hash, now)
            fresh.append(snap)
            if current is not None:
                retire.append(current.pk)
            changed[step.pk] = (current.criticality_class if current else None,
                                snap.criticality_class)
            if step.approved_inputs_hash and step.approved_inputs_hash != inputs_hash:
                stale_approval.append(step.pk)
        if retire:
            IndicatorSnapshot.objects.using(using).filter(pk__in=retire).update(is_current=False)
        if fresh:
            IndicatorSnapshot.objects.using(using).bulk_create(fresh)
        if stale_approval:
            ReactionStep._base_manager.using(using).filter(pk__in=stale_approval).update(
                needs_review=True
            )
    return changed


def flush_pending(*, using: str = "default") -> dict:
    """Drain the queue of steps whose inputs changed in this transaction and recompute them."""
    with transaction.atomic(using=using):
        with connections[using].cursor() as cursor:
            cursor.execute("DELETE FROM hazards_pendingrecompute RETURNING step_id")
            ids = {row[0] for row in cursor.fetchall()}
        return recompute_steps(ids, using=using) if ids else {}


def current_snapshot(step: ReactionStep) -> IndicatorSnapshot | None:
    return IndicatorSnapshot.objects.filter(step=step, is_current=True).first()
