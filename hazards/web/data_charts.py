"""The calorimeter record of a run as the step and run pages show it: one page-width chart
of heat release, reactor temperature, dosing and thermal conversion, drawn once per file
and settings (the key holds the file's SHA-256, the masses and the chart code's digest)
and then read from the chart cache; and the run's own page."""

from __future__ import annotations

import base64
import hashlib
import importlib.util
from pathlib import Path

from django.contrib.auth.decorators import login_required
from django.core.cache import caches
from django.shortcuts import render

from hazards.dossier.series_charts import series_chart
from hazards.models import CalorimetryRun, CalorimetrySeries
from hazards.web import indicators
from hazards.web.common import can_edit, visible_or_404

CODE = hashlib.sha256(
    Path(importlib.util.find_spec("hazards.dossier.series_charts").origin).read_bytes()
).hexdigest()[:16]


def series_key(series) -> str:
    parts = [series.sha256, repr(series.initial_mass_kg), repr(series.feed_mass_kg), CODE]
    return "series-chart:" + hashlib.sha256("|".join(parts).encode()).hexdigest()


def series_image(series, *, run_label: str) -> dict | None:
    """The record of `series` as an image (a data: URI keeps the page's CSP strict)."""
    if series is None or not (series.data or {}).get("time_s"):
        return None
    key = series_key(series)
    found = caches["charts"].get(key)
    if found is None:
        found = {
            size: base64.b64encode(
                series_chart(
                    series.data,
                    initial_mass_kg=series.initial_mass_kg,
                    feed_mass_kg=series.feed_mass_kg,
                    size=size,
                    title=f"Calorimeter record: {series.file_name}",
                ).encode("utf-8")
            ).decode("ascii")
            for size in ("wide", "narrow")
        }
        caches["charts"].set(key, found)
    return {
        "title": f"Calorimeter record of {run_label}: heat release, reactor temperature, "
        "dosed fraction and thermal conversion against time",
        "src": f"data:image/svg+xml;base64,{found['wide']}",
        "narrow": f"data:image/svg+xml;base64,{found['narrow']}",
        "file_name": series.file_name,
    }


@login_required
def run_page(request, pk):
    run = visible_or_404(
        request.user,
        CalorimetryRun.objects.select_related("step", "step__process").defer("raw_file"),
        pk=pk,
    )
    series = CalorimetrySeries.objects.filter(run=run).defer("original").first()
    return render(
        request,
        "hazards/run_detail.html",
        {
            "run": run,
            "step": run.step,
            "process": run.step.process,
            "rows": indicators.input_rows(run),
            "series": series,
            "record": series_image(series, run_label=f"run {run}"),
            "can_edit": can_edit(request.user, run.step),
        },
    )
