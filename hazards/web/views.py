"""Pages of the browser application: the start page, a process, a step."""

from __future__ import annotations

from django.contrib.auth.decorators import login_required
from django.db import connection
from django.db.models import Prefetch
from django.http import JsonResponse
from django.shortcuts import render

from hazards.dossier.models import Dossier
from hazards.models import (
    CalorimetryRun,
    CalorimetrySeries,
    DecompositionTest,
    IndicatorSnapshot,
    Process,
    ReactionStep,
)
from hazards.review.access import is_administrator, roles_on
from hazards.review.models import Finding, ProcessRevision
from hazards.review.selectors import approval_status
from hazards.review.services.revisions import current_revision
from hazards.web import data_charts, indicators, selectors
from hazards.web.common import can_edit, visible_or_404
from hazards.web.measures import overdue_measures, step_measures
from hazards.web.review import review_actions


@login_required
def home(request):
    """What waits for me, steps by class, and approvals that no longer hold."""
    return render(request, "hazards/home.html", {
        "waiting": selectors.waiting_for(request.user),
        "class_counts": selectors.class_counts(request.user),
        "stale": selectors.stale_approvals(request.user)[:50],
        "overdue_measures": overdue_measures(request.user),
        "shows_indicators": True,
    })


def _current(step):
    snaps = getattr(step, "current_snapshots", None)
    return snaps[0] if snaps else None


@login_required
def process_detail(request, pk):
    process = visible_or_404(request.user, Process.objects.select_related("site"), pk=pk)
    revision = current_revision(process)
    steps = list(ReactionStep.objects.filter(process=process).order_by("sequence").prefetch_related(
        Prefetch("snapshots", queryset=IndicatorSnapshot.objects.filter(is_current=True),
                 to_attr="current_snapshots")))
    rows = []
    for step in steps:
        snap = _current(step)
        values = snap.values if snap else {}
        rows.append({"step": step, "snap": snap, "values": values,
                     "warnings": len(snap.warnings) if snap else 0})

    return render(request, "hazards/process_detail.html", {
        "process": process, "rows": rows, "revision": revision,
        "approval": approval_status(process),
        "actions": review_actions(request.user, process, revision),
        "roles": sorted(roles_on(request.user, process.pk)),
        "can_edit": can_edit(request.user, process),
        "findings": Finding.objects.filter(process=process).select_related("owner", "raised_by")
        .order_by("status", "due_date"),
        "dossiers": Dossier.objects.filter(process=process).defer("pdf", "content")
        .select_related("revision", "requested_by").order_by("-version")[:10],
        "revisions": ProcessRevision.objects.filter(process=process).order_by("-number")[:10],
        "shows_indicators": True,
    })


def _record(series, basis_run, runs):
    """The basis run's calorimeter record, else the newest run's that has a file (said)."""
    if series is not None:
        return data_charts.series_image(series, run_label=f"run {basis_run} (the basis)")
    other = (CalorimetrySeries.objects.filter(run__in=runs).defer("original")
             .select_related("run").order_by("-run_id").first())
    if other is None:
        return None
    return data_charts.series_image(other, run_label=f"run {other.run} (not the basis)")


@login_required
def step_detail(request, pk):
    step = visible_or_404(request.user, ReactionStep.objects.select_related(
        "process", "process__site", "vessel", "solvent"), pk=pk)
    snapshot = IndicatorSnapshot.objects.filter(step=step, is_current=True).first()
    basis = (snapshot.inputs.get("basis", {}) if snapshot else {}) or {}
    runs = list(CalorimetryRun.objects.filter(step=step).defer("raw_file"))
    tests = list(DecompositionTest.objects.filter(step=step).prefetch_related("peaks"))
    basis_run = next((r for r in runs if r.pk == basis.get("calorimetry_run")), None)
    basis_test = next((t for t in tests if t.pk == basis.get("decomposition_test")), None)
    series = (CalorimetrySeries.objects.filter(run=basis_run).defer("original").first()
              if basis_run is not None else None)
    groups = [
        ("The step", step, indicators.input_rows(step), f"/steps/{step.pk}/edit/"),
        (f"Calorimetry run {basis_run}" if basis_run else "Calorimetry run (none)",
         basis_run, indicators.input_rows(basis_run),
         f"/calorimetry/{basis_run.pk}/edit/" if basis_run else None),
        (f"Decomposition test {basis_test}" if basis_test else "Decomposition test (none)",
         basis_test, indicators.input_rows(basis_test),
         f"/decomposition/{basis_test.pk}/edit/" if basis_test else None),
        (f"Vessel {step.vessel}" if step.vessel else "Vessel (none)", step.vessel,
         indicators.input_rows(step.vessel),
         f"/vessels/{step.vessel_id}/edit/" if step.vessel_id else None),
        (f"Solvent {step.solvent}" if step.solvent else "Solvent (none)", step.solvent,
         indicators.input_rows(step.solvent),
         f"/solvents/{step.solvent_id}/edit/" if step.solvent_id else None),
    ]
    history = IndicatorSnapshot.objects.filter(step=step).order_by("-computed_at", "-id")[:30]
    return render(request, "hazards/step_detail.html", {
        "step": step, "process": step.process, "snapshot": snapshot,
        "measures": step_measures(step, snapshot),
        "indicator_rows": indicators.indicator_rows(snapshot),
        "parameter_rows": indicators.parameter_rows(snapshot),
        "operating_point": indicators.operating_point(snapshot),
        "groups": groups, "basis": basis, "runs": runs, "tests": tests, "series": series,
        "charts": indicators.chart_images(snapshot, {
            **series.data, "initial_mass_kg": series.initial_mass_kg,
            "feed_mass_kg": series.feed_mass_kg, "file_name": series.file_name,
        } if series else None, series_key=(
            f"{series.pk}:{series.sha256}:{series.initial_mass_kg!r}:{series.feed_mass_kg!r}:"
            f"{series.file_name}" if series else "")) + indicators.decomposition_chart_images(
                basis_test),
        "record": _record(series, basis_run, runs),
        "kinetics": (basis_test.kinetics or {}) if basis_test else {},
        "kinetics_parameters": indicators.kinetics_parameters(basis_test),
        "history": history, "can_edit": can_edit(request.user, step),
        "can_edit_reference": is_administrator(request.user),
        "shows_indicators": True,
    })


def healthz(request):
    with connection.cursor() as cursor:
        cursor.execute("SELECT 1")
    return JsonResponse({"status": "ok"})

