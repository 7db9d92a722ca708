"""What a dossier shows, frozen as plain JSON when the dossier is requested.

`dossier_content(process)` returns {"record": ..., "context": ...}:

- `record` is the canonical content of the process revision (review's
  `revision_content` / `ProcessRevision.content`); without a revision it is the process's
  current state in the same spirit (steps, inputs, indicators). It is attached to the PDF as
  revision.json and its SHA-256 is printed on the cover.
- `context` is what the pages show beside the record: the revision's identity, signatures,
  findings, change history, the audit-trail head hash, the provenance of the basis records
  (instrument, date, file hash), calorimetry series for the charts and the full text of every
  reference. It is attached as dossier-context.json.
"""

from __future__ import annotations

from django.db.models import Prefetch

import calcs
from calcs.constants import REFERENCES
from hazards.dossier import review_bridge
from hazards.dossier.decomposition_charts import evidence
from hazards.models import (
    CalorimetryRun,
    CalorimetrySeries,
    DecompositionCurve,
    DecompositionTest,
    IndicatorSnapshot,
    Process,
    ReactionStep,
)
from hazards.oversight.revalidation import flag_json, process_flag
from hazards.services.indicators import (
    DOSSIER_LIBRARIES,
    canonical_json,
    library_versions,
    sha256_hex,
)

SCHEMA = "exoledger.dossier/1"
SERIES_POINTS = 400  # enough for a chart, small enough to freeze in every dossier


def _iso(value) -> str | None:
    return value.isoformat().replace("+00:00", "Z") if value is not None else None


def _date(value) -> str | None:
    return value if isinstance(value, str) or value is None else value.isoformat()


def _snapshot_json(snap: IndicatorSnapshot | None) -> dict | None:
    if snap is None:
        return None
    return {
        "values": snap.values,
        "methods": snap.methods,
        "parameters": snap.parameters,
        "warnings": snap.warnings,
        "references": snap.references,
        "criticality_class": snap.criticality_class,
        "inputs": snap.inputs,
        "inputs_hash": snap.inputs_hash,
        "calcs_version": snap.calcs_version,
        "libraries": snap.libraries,
        "computed_at": _iso(snap.computed_at),
    }


def _steps(process: Process):
    return (
        ReactionStep.objects.filter(process=process)
        .select_related("solvent", "vessel")
        .prefetch_related(
            Prefetch("snapshots", queryset=IndicatorSnapshot.objects.filter(is_current=True),
                     to_attr="current_snapshots"),
        )
        .order_by("sequence")
    )


def current_state_record(process: Process) -> dict:
    """The process as it stands now, for a dossier when no revision exists."""
    steps = []
    for step in _steps(process):
        snap = step.current_snapshots[0] if step.current_snapshots else None
        steps.append({
            "id": step.pk,
            "sequence": step.sequence,
            "name": step.name,
            "operation_mode": step.operation_mode,
            "system": step.system,
            "mtt_override_reason": step.mtt_override_reason,
            "solvent": step.solvent.name if step.solvent else None,
            "vessel": step.vessel.tag if step.vessel else None,
            "snapshot": _snapshot_json(snap),
        })
    return {
        "kind": "process-state",
        "process": {"id": process.pk, "name": process.name, "description": process.description,
                    "site": {"code": process.site.code, "name": process.site.name}},
        "steps": steps,
        "calcs_version": calcs.__version__,
    }


def _in_record(record: dict) -> tuple[dict, dict, dict]:
    """Runs, series and tests as the revision froze them, by id (review's content schema)."""
    runs, series, tests = {}, {}, {}
    for step in record.get("steps", []):
        for run in step.get("calorimetry_runs") or []:
            runs[run["id"]] = run
            if run.get("series"):
                series[run["id"]] = run["series"]
        for test in step.get("decomposition_tests") or []:
            tests[test["id"]] = test
    return runs, series, tests


class _Row(dict):
    """A frozen record dict read like the model instance it came from."""

    def __getattr__(self, name):
        if name == "pk":
            return self["id"]
        if name == "get_method_display":
            return lambda: {"dsc": "DSC (dynamic scan)",
                            "adiabatic": "Adiabatic calorimetry"}.get(self["method"],
                                                                      self["method"])
        return self.get(name)


def _provenance(step_ids: list[int], basis_by_step: dict[int, dict], record: dict) -> dict:
    """Instrument, date and file hash of each step's basis records, by step id.

    Taken from the revision's frozen copy of the records where it has one, else from the
    database as it stands when the dossier is requested.
    """
    frozen_runs, frozen_series, frozen_tests = _in_record(record)
    run_ids = {b.get("calorimetry_run") for b in basis_by_step.values()} - {None}
    test_ids = {b.get("decomposition_test") for b in basis_by_step.values()} - {None}
    runs = {r.pk: r for r in CalorimetryRun._base_manager.filter(pk__in=run_ids)}
    series = {s.run_id: s for s in CalorimetrySeries._base_manager.filter(run_id__in=run_ids)
              .only("run_id", "file_name", "sha256")}
    tests = {t.pk: t for t in DecompositionTest._base_manager.filter(pk__in=test_ids)}
    runs.update({k: _Row(v) for k, v in frozen_runs.items()})
    series.update({k: _Row(v) for k, v in frozen_series.items()})
    tests.update({k: _Row(v) for k, v in frozen_tests.items()})
    steps = {s.pk: s for s in ReactionStep._base_manager.filter(pk__in=step_ids)
             .select_related("solvent", "vessel")}
    out = {}
    for step_id, basis in basis_by_step.items():
        run = runs.get(basis.get("calorimetry_run"))
        test = tests.get(basis.get("decomposition_test"))
        step = steps.get(step_id)
        ser = series.get(run.pk) if run else None
        out[str(step_id)] = {
            "calorimetry_run": None if run is None else {
                "id": run.pk, "instrument": run.instrument, "run_date": _date(run.run_date),
                "file_name": run.raw_file_name, "file_sha256": run.raw_file_sha256,
                "series_file_name": ser.file_name if ser else "",
                "series_sha256": ser.sha256 if ser else "",
                "chosen": basis.get("calorimetry_run_chosen"),
            },
            "decomposition_test": None if test is None else {
                "id": test.pk, "method": test.get_method_display(), "instrument": test.instrument,
                "test_date": _date(test.test_date), "crucible": test.crucible,
                "sample_mass_kg": test.sample_mass_kg,
                "heating_rate_k_per_s": test.heating_rate_k_per_s,
                "chosen": basis.get("decomposition_test_chosen"),
            },
            "solvent": None if step is None or step.solvent is None else {
                "name": step.solvent.name, "cas_number": step.solvent.cas_number,
                "vapour_pressure_source": step.solvent.vapour_pressure_source,
            },
            "vessel": None if step is None or step.vessel is None else {
                "tag": step.vessel.tag, "name": step.vessel.name,
            },
            "step_updated_at": _iso(step.updated_at) if step else None,
        }
    return out


def _series(hashes: set[str]) -> dict:
    """Calorimetry series by SHA-256, thinned to SERIES_POINTS points."""
    out = {}
    for ser in CalorimetrySeries._base_manager.filter(sha256__in=hashes).select_related("run"):
        data = ser.data
        n = len(data.get("time_s", []))
        stride = max(1, -(-n // SERIES_POINTS))
        picked = list(range(0, n, stride))
        if n and picked[-1] != n - 1:
            picked.append(n - 1)
        out[ser.sha256] = {
            "file_name": ser.file_name,
            "initial_mass_kg": ser.initial_mass_kg,
            "feed_mass_kg": ser.feed_mass_kg,
            **{key: [data[key][i] for i in picked] for key in
               ("time_s", "heat_release_rate_w", "dosed_fraction", "reactor_temperature_k")
               if data.get(key) is not None},
        }
    return out


def _decomposition(basis_by_step: dict[int, dict], record: dict) -> dict:
    """Each step's basis decomposition test with curves: the curves (by the SHA-256 the
    revision froze, where it froze them), the kinetics and the chart points, by step id."""
    _, _, frozen_tests = _in_record(record)
    test_ids = {b.get("decomposition_test") for b in basis_by_step.values()} - {None}
    tests = {t.pk: t for t in DecompositionTest._base_manager.filter(pk__in=test_ids)}
    curves: dict[int, list] = {}
    for c in DecompositionCurve._base_manager.filter(test_id__in=test_ids).order_by("id"):
        curves.setdefault(c.test_id, []).append(c)
    out = {}
    for step_id, basis in basis_by_step.items():
        tid = basis.get("decomposition_test")
        test, frozen = tests.get(tid), frozen_tests.get(tid)
        mine = curves.get(tid, [])
        if frozen is not None:
            shas = [c["sha256"] for c in frozen.get("curves") or []]
            mine = [c for c in mine if c.sha256 in shas]
        if test is None or not mine:
            continue
        kinetics = frozen.get("kinetics") if frozen is not None else test.kinetics
        out[str(step_id)] = evidence(test, mine, kinetics or {}, SERIES_POINTS)
    return out


def _step_snapshots(record: dict) -> list[tuple[int, dict]]:
    """(step id, snapshot-like dict) of every step in a record, whatever produced it."""
    out = []
    for step in record.get("steps", []):
        snap = step.get("snapshot") or step.get("indicators") or {}
        if "id" in step:
            out.append((step["id"], snap))
    return out


def _references(record: dict) -> dict:
    keys = set()
    for _, snap in _step_snapshots(record):
        keys.update(snap.get("references") or [])
    return {key: REFERENCES.get(key, f"(reference '{key}' not in calcs.constants)")
            for key in sorted(keys)}


def _indicator_history(step_ids: list[int], since=None) -> list[dict]:
    rows = IndicatorSnapshot.objects.filter(step_id__in=step_ids).select_related("step")
    if since is not None:
        rows = rows.filter(computed_at__gt=since)
    rows = rows.order_by("computed_at", "id")
    return [{
        "at": _iso(s.computed_at), "what": f"indicators of step {s.step.sequence} recomputed",
        "detail": f"class {s.criticality_class if s.criticality_class else 'not assigned'}; "
                  f"inputs {s.inputs_hash[:12]}",
    } for s in rows]


def _revalidation(process: Process) -> dict | None:
    """Revalidation and open-change state of the process on the day the dossier is issued
    (hazards.oversight), frozen into the context like everything else it shows."""
    return flag_json(process_flag(process))


def dossier_content(process: Process, revision=None) -> dict:
    """The frozen content of a dossier of `revision` (None: the process's current state)."""
    if revision is not None:
        record = revision.content
        revision_info = review_bridge.revision_info(revision)
        signatures = review_bridge.signatures(revision)
        since = review_bridge.last_approved_before(revision)
    else:
        record = review_bridge.live_content(process) or current_state_record(process)
        revision_info, signatures = None, []
        since = review_bridge.last_approved_before_number(process, None)
    snaps = _step_snapshots(record)
    step_ids = [sid for sid, _ in snaps]
    basis = {sid: (snap.get("inputs") or {}).get("basis") or {} for sid, snap in snaps}
    hashes = {(snap.get("inputs") or {}).get("series_sha256") for _, snap in snaps} - {None}
    history = review_bridge.history(process, revision, since)
    history += _indicator_history(step_ids, since.get("created_at_dt") if since else None)
    history.sort(key=lambda h: h["at"] or "")
    record_dates = [snap.get("computed_at") for _, snap in snaps if snap.get("computed_at")]
    if revision_info:
        record_dates.append(revision_info["created_at"])
    record_dates += [s["signed_at"] for s in signatures]
    if not record_dates:
        record_dates = [h["at"] for h in history if h.get("at")]
    context = {
        "schema": SCHEMA,
        "process": {"id": process.pk, "name": process.name, "description": process.description,
                    "site": {"code": process.site.code, "name": process.site.name}},
        "revision": revision_info,
        "approval": review_bridge.approval(process),
        "signatures": signatures,
        "findings": review_bridge.findings(process, revision),
        "last_approved": {k: v for k, v in since.items() if k != "created_at_dt"} if since
        else None,
        "history": history,
        "audit_head_hash": review_bridge.audit_head_hash(),
        "audit_head": review_bridge.audit_head(),
        "revalidation": _revalidation(process),
        "provenance": _provenance(step_ids, basis, record),
        "series": _series(hashes),
        "decomposition": _decomposition(basis, record),
        "references": _references(record),
        "record_date": max(record_dates) if record_dates else "2000-01-01T00:00:00Z",
        "software": library_versions(DOSSIER_LIBRARIES),
    }
    accepted = review_bridge.risk_acceptances(revision)
    if accepted:  # only where there are some: other dossiers keep their context shape
        context["risk_acceptances"] = accepted
    return {"record": record, "context": context}


def content_hashes(content: dict) -> tuple[str, str]:
    """SHA-256 of the attached revision.json and dossier-context.json."""
    return (sha256_hex(canonical_json(content["record"])),
            sha256_hex(canonical_json(content["context"])))
