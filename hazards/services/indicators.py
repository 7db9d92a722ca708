"""Live indicators: every change to an input recomputes the snapshots of the steps it touches.

Database triggers queue the affected steps (hazards.models.triggers); `flush_pending` drains
the queue inside the same transaction, computes through `calcs.scenario` and stores one new
snapshot per step whose inputs changed. Reads and writes are batched, so a change to a vessel
shared by thousands of steps costs a fixed number of queries.
"""

from __future__ import annotations

import hashlib
import json
import platform
from collections.abc import Iterable
from dataclasses import dataclass
from dataclasses import fields as dataclass_fields
from functools import cache
from importlib import metadata

from django.db import connections, transaction
from django.dispatch import Signal

import calcs
from calcs import operating_point, scenario
from calcs.errors import CalcInputError
from calcs.scenario import MeasureInputs
from hazards.models import IndicatorSnapshot, ReactionStep
from hazards.models.base import inputs_written

# The libraries whose releases can move an indicator: a changed number can be traced to a
# changed library through the versions each snapshot records.
NUMERIC_LIBRARIES = ("numpy", "scipy", "pint", "chemicals")
# Those that also shape a dossier's pages (charts, layout).
DOSSIER_LIBRARIES = (*NUMERIC_LIBRARIES, "matplotlib", "weasyprint")


@cache
def library_versions(names: tuple[str, ...] = NUMERIC_LIBRARIES) -> dict[str, str]:
    """{"python": "3.11.7", "calcs": ..., "<library>": "<installed version>", ...}."""
    versions = {"python": platform.python_version(), "calcs": calcs.__version__}
    for name in names:
        try:
            versions[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            versions[name] = "not installed"
    return versions


def canonical_json(data) -> str:
    """The one serialisation that is hashed and signed: sorted keys, no spaces, UTF-8."""
    return json.dumps(data, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      allow_nan=False)


def sha256_hex(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


@dataclass(frozen=True)
class StepCase:
    """Everything one step's assessment depends on, as plain data."""

    step_id: int
    inputs: dict
    scenario_inputs: object  # calcs.scenario.StepInputs
    current: dict | None  # id, inputs_hash, calcs_version, criticality_class of the snapshot


# One query reads every step with all it depends on, however many steps there are. The basis
# run/test is the one marked as basis, else the most recent (undated ones last).
_LOAD_SQL = """
SELECT now(),
       s.id,
       row_to_json(s) AS step,
       (SELECT row_to_json(x) FROM (
            SELECT v.heat_transfer_area_m2, v.heat_transfer_coefficient_w_per_m2_k,
                   v.coolant_temperature_k, v.relief_set_pressure_pa, v.design_pressure_pa,
                   v.headspace_volume_m3
            FROM hazards_vessel v WHERE v.id = s.vessel_id) x) AS vessel,
       (SELECT row_to_json(x) FROM (
            SELECT sv.cas_number, sv.vapour_pressure_source, sv.antoine_a, sv.antoine_b,
                   sv.antoine_c, sv.antoine_log_base, sv.antoine_pressure_unit,
                   sv.antoine_temperature_unit, sv.antoine_t_min_k, sv.antoine_t_max_k
            FROM hazards_solvent sv WHERE sv.id = s.solvent_id) x) AS solvent,
       (SELECT row_to_json(x) FROM (
            SELECT r.id, r.is_basis, r.specific_reaction_heat_j_per_kg, r.max_accumulation,
                   r.max_heat_release_rate_w_per_kg, r.gas_release_mol_per_kg,
                   ser.sha256 AS series_sha256, ser.data AS series_data,
                   ser.initial_mass_kg AS series_initial_mass_kg,
                   ser.feed_mass_kg AS series_feed_mass_kg
            FROM hazards_calorimetryrun r
            LEFT JOIN hazards_calorimetryseries ser ON ser.run_id = r.id
            WHERE r.step_id = s.id
            ORDER BY r.is_basis DESC, r.run_date DESC NULLS LAST, r.id DESC LIMIT 1) x) AS run,
       (SELECT row_to_json(x) FROM (
            SELECT t.id, t.is_basis, t.method, t.onset_temperature_k,
                   t.decomposition_energy_j_per_kg, t.activation_energy_j_per_mol,
                   t.reference_temperature_k, t.heat_release_rate_at_reference_w_per_kg,
                   t.phi_factor, t.kinetics,
                   (SELECT coalesce(json_agg(json_build_array(p.heating_rate_k_per_s,
                                                              p.peak_temperature_k)
                                             ORDER BY p.heating_rate_k_per_s), '[]'::json)
                    FROM hazards_decompositionpeak p WHERE p.test_id = t.id) AS peaks
            FROM hazards_decompositiontest t
            WHERE t.step_id = s.id
            ORDER BY t.is_basis DESC, t.test_date DESC NULLS LAST, t.id DESC LIMIT 1) x) AS test,
       (SELECT row_to_json(x) FROM (
            SELECT c.id, c.inputs_hash, c.calcs_version, c.criticality_class
            FROM hazards_indicatorsnapshot c WHERE c.step_id = s.id AND c.is_current) x)
           AS current,
       (SELECT coalesce(json_agg(row_to_json(x) ORDER BY x.id), '[]'::json) FROM (
            SELECT m.id, m.kind, {measure_columns}
            FROM hazards_measure m WHERE m.step_id = s.id) x) AS measures,
       -- every series of a step with two or more: the desired reaction's E_a over the runs
       (SELECT CASE WHEN count(*) >= 2 THEN json_agg(json_build_object(
                    'run_id', r2.id, 'sha256', ser2.sha256, 'data', ser2.data,
                    'initial_mass_kg', ser2.initial_mass_kg,
                    'feed_mass_kg', ser2.feed_mass_kg) ORDER BY r2.id) END
        FROM hazards_calorimetryrun r2
        JOIN hazards_calorimetryseries ser2 ON ser2.run_id = r2.id
        WHERE r2.step_id = s.id) AS all_series
FROM hazards_reactionstep s
WHERE s.id = ANY(%s)
ORDER BY s.id
"""

# The design values of a measure that its barrier checks read (calcs.scenario.MeasureInputs).
MEASURE_FIELDS = tuple(f.name for f in dataclass_fields(MeasureInputs) if f.name not in ("id", "kind"))
_LOAD_SQL = _LOAD_SQL.replace("{measure_columns}", ", ".join(f"m.{n}" for n in MEASURE_FIELDS))

_STEP_FIELDS = ("operation_mode", "process_temperature_k", "reaction_mass_kg",
                "specific_heat_capacity_j_per_kg_k", "system", "operating_pressure_pa",
                "dosing_time_s", "mtt_override_k")
_OPTIONAL_STEP_FIELDS = ("initial_mass_fraction", "non_volatile_declared")
_VESSEL_FIELDS = {
    "vessel_heat_transfer_area_m2": "heat_transfer_area_m2",
    "vessel_u_w_per_m2_k": "heat_transfer_coefficient_w_per_m2_k",
    "vessel_coolant_temperature_k": "coolant_temperature_k",
    "vessel_relief_set_pressure_pa": "relief_set_pressure_pa",
    "vessel_design_pressure_pa": "design_pressure_pa",
    "vessel_headspace_m3": "headspace_volume_m3",
}
_RUN_FIELDS = ("specific_reaction_heat_j_per_kg", "max_accumulation",
               "max_heat_release_rate_w_per_kg", "gas_release_mol_per_kg")
_TEST_FIELDS = {
    "decomposition_method": "method",
    "onset_temperature_k": "onset_temperature_k",
    "decomposition_energy_j_per_kg": "decomposition_energy_j_per_kg",
    "activation_energy_j_per_mol": "activation_energy_j_per_mol",
    "reference_temperature_k": "reference_temperature_k",
    "heat_release_rate_at_reference_w_per_kg": "heat_release_rate_at_reference_w_per_kg",
    "phi_factor": "phi_factor",
}
_ANTOINE_FIELDS = {"a": "antoine_a", "b": "antoine_b", "c": "antoine_c",
                   "log_base": "antoine_log_base", "pressure_unit": "antoine_pressure_unit",
                   "temperature_unit": "antoine_temperature_unit",
                   "t_min_k": "antoine_t_min_k", "t_max_k": "antoine_t_max_k"}


def _chosen(row: dict | None) -> str | None:
    if row is None:
        return None
    return "marked as basis" if row["is_basis"] else "most recent"


def _kinetics(stored: dict | None):
    """The fitted model a test's curves gave (`DecompositionTest.kinetics`), or None."""
    if not stored or stored.get("status") != "fitted":
        return None
    cov = stored.get("covariance")
    return scenario.DecompositionKinetics(
        model=stored["model"], parameters=tuple(stored["parameters"]),
        reference_temperature_k=stored["reference_temperature_k"],
        covariance=(tuple(tuple(r) for r in cov)
                    if cov and all(x is not None for r in cov for x in r) else None),
        lowest_measured_k=stored.get("lowest_measured_k"),
        files_sha256=tuple(stored.get("files_sha256") or ()),
        degrees_of_freedom=stored.get("degrees_of_freedom"),
        energy_stderr_j_per_kg=stored.get("energy_stderr_j_per_kg") or 0.0)


def _measures(rows: list[dict] | None) -> tuple[list[dict], tuple]:
    """The measures' design values as the case's inputs (only those entered) and as calcs
    inputs; a relief's kind of system counts only when set."""
    inputs, measures = [], []
    for row in rows or []:
        values = {name: row[name] for name in MEASURE_FIELDS if row.get(name) not in (None, "")}
        inputs.append({"id": row["id"], "kind": row["kind"], **values})
        measures.append(MeasureInputs(id=row["id"], kind=row["kind"], **values))
    return inputs, tuple(measures)


def dosing_arrhenius(rows: list[dict] | None, process_temperature_k: float):
    """(E_a [J/mol] or None, the SHA-256 of the series it came from, warnings): the dosing
    model fitted to each series of the step (as the what-if fits them), then Arrhenius over
    the runs' temperatures (`calcs.operating_point.arrhenius_of_runs`)."""
    temps, ks, shas, warnings = [], [], [], []
    for row in rows or []:
        d = row["data"]
        try:
            model = operating_point.model_from_series(
                d["time_s"], d["heat_release_rate_w"], d["dosed_fraction"],
                row["initial_mass_kg"], row["feed_mass_kg"], d.get("reactor_temperature_k"),
                process_temperature_k)
        except CalcInputError:
            continue  # the what-if names the series that do not support the model
        temps.append(model.reference_temperature_k)
        ks.append(model.rate_constant_per_s)
        shas.append(row["sha256"])
    try:
        fit = operating_point.arrhenius_of_runs(temps, ks)
    except CalcInputError as exc:
        return None, [], [f"Arrhenius fit of the runs refused: {exc.rule}"]
    if fit is None:
        return None, [], warnings
    return fit.activation_energy_j_per_mol, sorted(shas), list(fit.warnings)


def case_from_row(step_id: int, step: dict, vessel: dict | None, solvent: dict | None,
                  run: dict | None, test: dict | None, current: dict | None,
                  measures: list[dict] | None = None,
                  all_series: list[dict] | None = None) -> StepCase:
    """Assemble one step's cooling-failure scenario from the rows `load_cases` read."""
    vessel, run, test = vessel or {}, run or {}, test or {}
    antoine = None
    if solvent is not None and solvent["vapour_pressure_source"] == "antoine":
        antoine = {key: solvent[col] for key, col in _ANTOINE_FIELDS.items()}
    fields = {name: step[name] for name in _STEP_FIELDS}
    # Inputs added later enter the case (and its hash) only when set, so a step that does not
    # use them keeps its inputs hash and an approval stays valid.
    for name in _OPTIONAL_STEP_FIELDS:
        if step.get(name):
            fields[name] = step[name]
    fields["solvent_cas"] = solvent["cas_number"] if solvent and antoine is None else None
    fields.update({key: vessel.get(col) for key, col in _VESSEL_FIELDS.items()})
    fields.update({key: run.get(key) for key in _RUN_FIELDS})
    fields.update({key: test.get(col) for key, col in _TEST_FIELDS.items()})
    peaks = [tuple(p) for p in test.get("peaks") or []]
    data = run.get("series_data")
    series = None
    if data is not None:
        series = scenario.SeriesInputs(
            time_s=data["time_s"],
            heat_release_rate_w=data["heat_release_rate_w"],
            dosed_fraction=data["dosed_fraction"],
            reactor_temperature_k=data.get("reactor_temperature_k"),
            initial_mass_kg=run["series_initial_mass_kg"],
            feed_mass_kg=run["series_feed_mass_kg"],
        )
    kinetics = _kinetics(test.get("kinetics"))
    measure_inputs, measure_cases = _measures(measures)
    dosing_ea, dosing_shas, _ = (dosing_arrhenius(all_series, step["process_temperature_k"])
                                 if step["operation_mode"] == "semi_batch" else (None, [], []))
    scenario_inputs = scenario.StepInputs(
        dosing_activation_energy_j_per_mol=dosing_ea,
        measures=measure_cases,
        **fields,
        decomposition_kinetics=kinetics,
        solvent_antoine=scenario.AntoineInputs(**antoine) if antoine else None,
        series=series,
        peak_temperatures=tuple(peaks) or None,
    )
    inputs = {
        **fields,
        **({"non_volatile_reason": step.get("non_volatile_reason") or ""}
           if fields.get("non_volatile_declared") else {}),
        "solvent_antoine": antoine,
        "series_sha256": run.get("series_sha256"),
        "peak_temperatures": [list(p) for p in peaks],
        # Only steps with measures carry the key, so the others keep their inputs hash.
        **({"measures": measure_inputs} if measure_inputs else {}),
        # likewise the series an E_a of the desired reaction was fitted over (two or more runs)
        **({"dosing_arrhenius_series_sha256": dosing_shas} if dosing_ea is not None else {}),
        "decomposition_kinetics": None if kinetics is None else {
            "model": kinetics.model, "parameters": list(kinetics.parameters),
            "reference_temperature_k": kinetics.reference_temperature_k,
            "lowest_measured_k": kinetics.lowest_measured_k,
            "files_sha256": list(kinetics.files_sha256)},
        # the curves of a test without a fitted model (adiabatic runs); only when present
        **({"decomposition_curves_sha256": (test.get("kinetics") or {})["files_sha256"]}
           if kinetics is None and (test.get("kinetics") or {}).get("files_sha256") else {}),
        "basis": {
            "calorimetry_run": run.get("id"),
            "calorimetry_run_chosen": _chosen(run or None),
            "decomposition_test": test.get("id"),
            "decomposition_test_chosen": _chosen(test or None),
            "solvent": step["solvent_id"],
            "vessel": step["vessel_id"],
        },
    }
    return StepCase(step_id=step_id, inputs=inputs, scenario_inputs=scenario_inputs,
                    current=current)


def load_cases_at(step_ids: Iterable[int], *, using: str = "default"):
    """The cases of the given steps, read in one query, with the database clock of this
    transaction (the time every snapshot of the transaction carries)."""
    ids = sorted(set(step_ids))
    if not ids:
        return [], None
    with connections[using].cursor() as cursor:
        cursor.execute(_LOAD_SQL, [ids])
        rows = cursor.fetchall()
    if not rows:
        return [], None
    return [case_from_row(*row[1:]) for row in rows], rows[0][0]


def load_cases(step_ids: Iterable[int], *, using: str = "default") -> list[StepCase]:
    """The cases of the given steps, read in one query."""
    return load_cases_at(step_ids, using=using)[0]


def inputs_hash(case: StepCase) -> str:
    return sha256_hex(canonical_json(case.inputs))


PROVENANCE_KEYS = ("warnings", "methods", "parameters", "references")


def assess(case: StepCase) -> dict:
    """Compute the indicator set of one case; returns the snapshot's JSON parts."""
    data = scenario.assess_step(case.scenario_inputs).to_dict()
    provenance = {key: data.pop(key) for key in PROVENANCE_KEYS}
    return {"values": data, **provenance}


def snapshot_for(case: StepCase, digest: str, now) -> IndicatorSnapshot:
    data = assess(case)
    return IndicatorSnapshot(
        step_id=case.step_id,
        computed_at=now,
        inputs=case.inputs,
        inputs_hash=digest,
        calcs_version=calcs.__version__,
        libraries=library_versions(),
        values=data["values"],
        methods=data["methods"],
        parameters=data["parameters"],
        warnings=list(data["warnings"]),
        references=list(data["references"]),
        criticality_class=data["values"].get("criticality_class"),
        is_current=True,
    )


# Sent inside the recomputing transaction with the approved steps among those renewed:
# `steps` {step_id: inputs now differ from the approved ones}, `snapshots` {step_id: new
# snapshot}, `previous` {step_id: id of the snapshot it replaced, or None}. The change
# records of hazards.oversight listen; every write path passes through here.
approved_inputs_changed = Signal()


def recompute_steps(step_ids: Iterable[int], *, using: str = "default", force: bool = False):
    """Recompute the given steps; returns {step_id: (old_class, new_class)} of those renewed.

    A step whose inputs and `calcs` version are unchanged keeps its snapshot (unless `force`).
    """
    changed: dict[int, tuple] = {}
    with transaction.atomic(using=using):
        cases, now = load_cases_at(step_ids, using=using)
        fresh, retire, digests, previous = [], [], {}, {}
        for case in cases:
            digest = inputs_hash(case)
            current = case.current
            if (not force and current is not None and current["inputs_hash"] == digest
                    and current["calcs_version"] == calcs.__version__):
                continue
            snap = snapshot_for(case, digest, now)
            fresh.append(snap)
            digests[case.step_id] = digest
            if current is not None:
                retire.append(current["id"])
            previous[case.step_id] = current["id"] if current is not None else None
            changed[case.step_id] = (current["criticality_class"] if current else None,
                                     snap.criticality_class)
        if fresh:
            _lock_class_counts([snap.step_id for snap in fresh], using)
        if retire:
            IndicatorSnapshot.objects.using(using).filter(pk__in=retire).update(is_current=False)
        if fresh:
            IndicatorSnapshot.objects.using(using).bulk_create(fresh)
            _mark_stale_approvals(digests, using, fresh, previous)
    return changed


def _lock_class_counts(step_ids: list[int], using: str) -> None:
    """Take the per-process locks of the class counts (`ProcessClassTally`, kept by a
    trigger on the snapshots) in process order, before the trigger takes them row by row."""
    with connections[using].cursor() as cursor:
        cursor.execute(
            "SELECT pg_advisory_xact_lock(22, p::integer) FROM (SELECT DISTINCT process_id AS p "
            "FROM hazards_reactionstep WHERE id = ANY(%s) ORDER BY 1) x",
            [step_ids],
        )


def _mark_stale_approvals(digests: dict[int, str], using: str, fresh=(), previous=None) -> None:
    """Steps approved on other inputs than they now have need review again (one statement,
    which also returns every approved step among them for `approved_inputs_changed`)."""
    with connections[using].cursor() as cursor:
        cursor.execute(
            """
            WITH d(id, digest) AS (SELECT * FROM unnest(%s::bigint[], %s::text[])),
            approved AS (
                SELECT s.id, s.needs_review, s.approved_inputs_hash <> d.digest AS differs
                FROM hazards_reactionstep s JOIN d ON d.id = s.id
                WHERE s.approved_inputs_hash <> ''),
            marked AS (
                UPDATE hazards_reactionstep s SET needs_review = true FROM approved a
                WHERE s.id = a.id AND a.differs AND NOT a.needs_review)
            SELECT a.id, a.differs FROM approved a
            """,
            [list(digests), list(digests.values())],
        )
        approved = dict(cursor.fetchall())
    if approved:
        approved_inputs_changed.send(
            sender=ReactionStep, using=using, steps=approved,
            snapshots={s.step_id: s for s in fresh if s.step_id in approved},
            previous={k: v for k, v in (previous or {}).items() if k in approved},
        )


def flush_pending(*, using: str = "default") -> dict:
    """Drain the queue of steps whose inputs changed in this transaction and recompute them."""
    with transaction.atomic(using=using):
        with connections[using].cursor() as cursor:
            cursor.execute("DELETE FROM hazards_pendingrecompute RETURNING step_id")
            ids = {row[0] for row in cursor.fetchall()}
        return recompute_steps(ids, using=using) if ids else {}


def on_inputs_written(sender, *, using: str = "default", **kwargs) -> None:
    """Subscriber of `hazards.models.base.inputs_written`: recompute in the same transaction."""
    flush_pending(using=using)


def connect() -> None:
    """Subscribe the recompute to the models' announcement (HazardsConfig.ready)."""
    inputs_written.connect(on_inputs_written, dispatch_uid="indicators-recompute")


def current_snapshot(step: ReactionStep) -> IndicatorSnapshot | None:
    return IndicatorSnapshot.objects.filter(step=step, is_current=True).first()


CLASS_COUNTS_SQL = """
SELECT s.process_id, coalesce(c.criticality_class, 0) AS klass, count(*) AS steps
FROM hazards_indicatorsnapshot c JOIN hazards_reactionstep s ON s.id = c.step_id
WHERE c.is_current GROUP BY 1, 2
"""


TALLY_OF_COUNTS_SQL = f"""
SELECT process_id,
       coalesce(sum(steps) FILTER (WHERE klass = 0), 0),
       coalesce(sum(steps) FILTER (WHERE klass = 1), 0),
       coalesce(sum(steps) FILTER (WHERE klass = 2), 0),
       coalesce(sum(steps) FILTER (WHERE klass = 3), 0),
       coalesce(sum(steps) FILTER (WHERE klass = 4), 0),
       coalesce(sum(steps) FILTER (WHERE klass = 5), 0)
FROM ({CLASS_COUNTS_SQL}) counts GROUP BY process_id
"""


def class_counts_rebuild(using: str = "default") -> int:
    """Recount `ProcessClassTally` from the current snapshots (the trigger keeps it; this
    repairs it after a restore of part of the tables). Returns the rows that differed."""
    with transaction.atomic(using=using), connections[using].cursor() as cursor:
        cursor.execute("LOCK TABLE hazards_processclasstally IN EXCLUSIVE MODE")
        cursor.execute(
            f"""
            WITH truth(process_id, c0, c1, c2, c3, c4, c5) AS ({TALLY_OF_COUNTS_SQL}),
            fixed AS (
                INSERT INTO hazards_processclasstally AS t
                    (process_id, unassigned, class_1, class_2, class_3, class_4, class_5)
                SELECT * FROM truth
                ON CONFLICT (process_id) DO UPDATE SET
                    unassigned = EXCLUDED.unassigned, class_1 = EXCLUDED.class_1,
                    class_2 = EXCLUDED.class_2, class_3 = EXCLUDED.class_3,
                    class_4 = EXCLUDED.class_4, class_5 = EXCLUDED.class_5
                WHERE (t.unassigned, t.class_1, t.class_2, t.class_3, t.class_4, t.class_5)
                    IS DISTINCT FROM (EXCLUDED.unassigned, EXCLUDED.class_1, EXCLUDED.class_2,
                                      EXCLUDED.class_3, EXCLUDED.class_4, EXCLUDED.class_5)
                RETURNING 1),
            zeroed AS (
                UPDATE hazards_processclasstally t SET unassigned = 0, class_1 = 0,
                    class_2 = 0, class_3 = 0, class_4 = 0, class_5 = 0
                WHERE (t.unassigned, t.class_1, t.class_2, t.class_3, t.class_4, t.class_5)
                    <> (0, 0, 0, 0, 0, 0)
                  AND NOT EXISTS (SELECT 1 FROM truth WHERE truth.process_id = t.process_id)
                RETURNING 1)
            SELECT (SELECT count(*) FROM fixed) + (SELECT count(*) FROM zeroed)
            """
        )
        return cursor.fetchone()[0]
