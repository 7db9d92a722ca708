"""The calorimeter file as a guided flow: choose, preview, correct units, confirm.

Nothing is stored before confirmation: the pending file lives in the person's session
(base64, at most hazards.services.series.MAX_BYTES), is parsed by
`hazards.services.series.parse_series` for every preview, and is stored on confirmation by
`hazards.services.series_store.series_attach`, the service the API uses.
"""

from __future__ import annotations

import base64
import csv
import datetime as dt
import hashlib
import io
import os
import re

from django import forms
from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.db import transaction
from django.shortcuts import redirect, render

from hazards import trail
from hazards.models import CalorimetryRun, CalorimetrySeries, ReactionStep
from hazards.quantities import size_text
from hazards.services import series as parser
from hazards.services.records import StaleRecord, record_create
from hazards.services.series_store import (
    SeriesExists,
    SeriesRejected,
    analyse_series,
    series_attach,
)
from hazards.services.table import open_table
from hazards.web import common
from hazards.web.diff import indicator_change_text
from hazards.web.display import number
from hazards.web.quantity_fields import QuantityFormField
from hazards.web.selectors import current_indicators

SESSION_KEY = "exo_pending_series"
PREVIEW_ROWS = 8
NOTHING_PENDING = "No file is waiting for confirmation; choose the file again."
_HEADER = re.compile(r"^\s*([^\[\]]*?)\s*(?:\[\s*(.*?)\s*\])?\s*$")


class ChooseForm(forms.Form):
    file = forms.FileField(label="Calorimeter file (CSV)", help_text=(
        "CSV (UTF-8, UTF-16 or Latin-1; comma, semicolon or tab; a decimal comma with "
        "semicolons or tabs) with a header such as: time [min], heat_release_rate [W], "
        "dosed_mass [g] "
        "or dosed_fraction [-], and optionally reactor_temperature [degC]; at most "
        f"{size_text(parser.MAX_BYTES)}."))
    initial_mass = QuantityFormField(kind="mass", label="Lab-scale mass before dosing",
                                     help_text="e.g. 400 g")
    feed_mass = QuantityFormField(kind="mass", label="Lab-scale mass dosed (whole feed)",
                                  help_text="e.g. 100 g: the mass at dosed fraction 1, or all "
                                  "that was dosed for a feed beyond the stoichiometric amount")
    instrument = forms.CharField(label="Instrument", max_length=120, required=False)
    run_date = forms.DateField(label="Run date", required=False,
                               widget=forms.DateInput(attrs={"type": "date"}))


class ConfirmForm(forms.Form):
    reason = forms.CharField(label="Reason for the change", max_length=500, required=False,
                             widget=forms.Textarea(attrs={"rows": 2}))


def _table(raw: bytes):
    """The file's text and separator as the parser reads it (None if it cannot be read)."""
    return open_table(raw, _Ignored())


class _Ignored(list):
    def add(self, *args) -> None:  # the parser reports the problem; the preview only shows
        self.append(args)


def header_cells(raw: bytes) -> list[dict]:
    """The columns of the header as written: name and unit (for the preview)."""
    table = _table(raw)
    if table is None:
        return []
    first = table.text.split("\n", 1)[0].strip("\r")
    cells = []
    for index, cell in enumerate(first.split(table.separator)):
        match = _HEADER.match(cell)
        name, unit = (match.group(1), match.group(2)) if match else (cell, None)
        cells.append({"index": index, "text": cell.strip(), "name": name.strip(),
                      "unit": unit})
    return cells


def with_units(raw: bytes, units: dict[int, str]) -> bytes:
    """The file with the units of some header cells replaced (the person's corrections),
    as UTF-8 text with the file's own separator."""
    table = _table(raw) if units else None
    if table is None:
        return raw
    head, sep, rest = table.text.partition("\n")
    cells = head.rstrip("\r").split(table.separator)
    for index, unit in units.items():
        if 0 <= index < len(cells):
            name = _HEADER.match(cells[index]).group(1).strip() or cells[index].strip()
            cells[index] = f"{name} [{unit}]"
    line = table.separator.join(cells) + ("\r" if head.endswith("\r") else "")
    return (line + sep + rest).encode("utf-8")


def first_rows(raw: bytes, limit: int = PREVIEW_ROWS) -> list[list[str]]:
    table = _table(raw)
    if table is None:
        return []
    rows = []
    for number_, row in enumerate(csv.reader(io.StringIO(table.text[:65536]),
                                             delimiter=table.separator)):
        if number_ == 0:
            continue
        rows.append(row)
        if len(rows) >= limit:
            break
    return rows


def _pending(request, step) -> dict | None:
    pending = request.session.get(SESSION_KEY)
    if not pending or pending.get("step") != step.pk:
        return None
    return pending


def _context(step, pending, run):
    raw = base64.b64decode(pending["raw"])
    units = {int(k): v for k, v in pending.get("units", {}).items()}
    effective = with_units(raw, units)
    parsed = parser.parse_series(effective, feed_mass_kg=pending["feed_mass_kg"])
    analysis = None
    problems = list(parsed.problems)
    if parsed.ok:
        try:
            analysis = analyse_series(parsed.series, step=step,
                                      initial_mass_kg=pending["initial_mass_kg"],
                                      feed_mass_kg=pending["feed_mass_kg"])
        except Exception as exc:  # noqa: BLE001 - a calculation refusal is shown, not raised
            problems.append(parser.SeriesProblem(None, getattr(exc, "argument", None), None,
                                                 getattr(exc, "rule", str(exc)), "calculation"))
    cells = header_cells(effective)
    originals = {c["index"]: c["unit"] for c in header_cells(raw)}
    for cell in cells:
        cell["original_unit"] = originals.get(cell["index"])
        cell["corrected"] = cell["index"] in units
    return {
        "step": step, "process": step.process, "run": run, "pending": pending,
        "cells": cells, "rows": first_rows(effective), "problems": problems,
        "ok": not problems and analysis is not None, "analysis": analysis,
        "parsed": parsed.series, "number": number,
        "confirm_form": ConfirmForm(), "needs_reason": common.needs_reason(step.process_id),
        "corrections": [(c["name"], c["original_unit"], c["unit"]) for c in cells
                        if c["corrected"]],
    }


@login_required
def upload(request, pk):
    """Step 1 (GET/POST file) and step 2 (preview, correct a unit) of the guided flow."""
    step = common.visible_or_404(request.user, ReactionStep.objects.select_related("process"),
                                 pk=pk)
    common.require_edit(request.user, step)
    run = None
    run_id = request.GET.get("run") or request.POST.get("run")
    if run_id:
        run = common.visible_or_404(request.user, CalorimetryRun.objects.filter(step=step),
                                    pk=run_id)
    action = request.POST.get("action", "")
    if request.method == "POST" and action == "choose":
        form = ChooseForm(request.POST, request.FILES)
        if form.is_valid():
            upload_file = form.cleaned_data["file"]
            raw = upload_file.read(parser.MAX_BYTES + 1)
            request.session[SESSION_KEY] = {
                "step": step.pk, "run": run.pk if run else None,
                "run_version": run.version if run else None,
                "name": os.path.basename(upload_file.name or "series.csv")[:255],
                "raw": base64.b64encode(raw).decode("ascii"),
                "initial_mass_kg": form.cleaned_data["initial_mass"],
                "feed_mass_kg": form.cleaned_data["feed_mass"],
                "instrument": form.cleaned_data["instrument"],
                "run_date": form.cleaned_data["run_date"].isoformat()
                if form.cleaned_data["run_date"] else None,
                "units": {},
            }
            return redirect(f"/steps/{step.pk}/calorimetry/upload/preview/")
        return render(request, "hazards/upload_choose.html",
                      {"step": step, "process": step.process, "form": form, "run": run},
                      status=400)
    request.session.pop(SESSION_KEY, None)
    return render(request, "hazards/upload_choose.html", {
        "step": step, "process": step.process, "run": run,
        "form": ChooseForm(initial={"run_date": dt.date.today()}),
    })


@login_required
def preview(request, pk):
    step = common.visible_or_404(request.user, ReactionStep.objects.select_related("process"),
                                 pk=pk)
    common.require_edit(request.user, step)
    pending = _pending(request, step)
    if pending is None:
        messages.error(request, NOTHING_PENDING)
        return redirect(f"/steps/{step.pk}/calorimetry/upload/")
    run = CalorimetryRun.objects.filter(pk=pending.get("run"), step=step).first()
    if request.method == "POST" and request.POST.get("action") == "units":
        raw = base64.b64decode(pending["raw"])
        units = {}
        for cell in header_cells(raw):
            typed = request.POST.get(f"unit-{cell['index']}", "").strip()[:40]
            if typed and typed != (cell["unit"] or ""):
                units[str(cell["index"])] = typed.replace("[", "").replace("]", "")
        pending["units"] = units
        request.session[SESSION_KEY] = pending
        return redirect(f"/steps/{step.pk}/calorimetry/upload/preview/")
    if request.method == "POST" and request.POST.get("action") == "cancel":
        request.session.pop(SESSION_KEY, None)
        messages.info(request, "The file was discarded; nothing was stored.")
        return redirect(f"/steps/{step.pk}/")
    return render(request, "hazards/upload_preview.html", _context(step, pending, run))


@login_required
def confirm(request, pk):
    step = common.visible_or_404(request.user, ReactionStep.objects.select_related("process"),
                                 pk=pk)
    common.require_edit(request.user, step)
    pending = _pending(request, step)
    if request.method != "POST" or pending is None:
        messages.error(request, NOTHING_PENDING)
        return redirect(f"/steps/{step.pk}/calorimetry/upload/")
    run = CalorimetryRun.objects.filter(pk=pending.get("run"), step=step).first()
    context = _context(step, pending, run)
    form = ConfirmForm(request.POST)
    if context["needs_reason"]:
        form.fields["reason"].required = True
    if not context["ok"] or not form.is_valid():
        context["confirm_form"] = form
        return render(request, "hazards/upload_preview.html", context, status=400)
    raw = with_units(base64.b64decode(pending["raw"]),
                     {int(k): v for k, v in pending.get("units", {}).items()})
    reason = form.cleaned_data["reason"] or "calorimeter file uploaded"
    if context["corrections"]:
        reason += "; units corrected at upload: " + ", ".join(
            f"{text}: {old or 'none'} -> {new}" for text, old, new in context["corrections"])
        original = hashlib.sha256(base64.b64decode(pending["raw"])).hexdigest()
        reason += f"; original file SHA-256 {original}"
    analysis = context["analysis"]
    before = current_indicators(step.pk)
    try:
        with transaction.atomic(), trail.scope(reason=reason[:1000]):
            if run is None:
                run = record_create(model=CalorimetryRun, data={
                    "step": step, "instrument": pending.get("instrument") or "",
                    "run_date": dt.date.fromisoformat(pending["run_date"])
                    if pending.get("run_date") else None,
                    "lab_scale_kg": pending["initial_mass_kg"] + pending["feed_mass_kg"],
                    "specific_reaction_heat_j_per_kg": analysis.specific_heat_j_per_kg,
                    "max_accumulation": analysis.max_accumulation,
                    "max_heat_release_rate_w_per_kg": analysis.max_heat_release_rate_w_per_kg,
                    "raw_file_name": pending["name"],
                })
                expected = None
            else:
                expected = pending.get("run_version")
            series_attach(run=run, file_name=pending["name"], raw=raw,
                          initial_mass_kg=pending["initial_mass_kg"],
                          feed_mass_kg=pending["feed_mass_kg"], expected_run_version=expected)
    except SeriesRejected as exc:
        context["problems"] = exc.problems
        context["ok"] = False
        return render(request, "hazards/upload_preview.html", context, status=400)
    except SeriesExists as exc:
        messages.error(request, str(exc))
        return redirect(f"/steps/{step.pk}/")
    except StaleRecord as exc:
        context["stale"] = str(exc)
        context["ok"] = False
        return render(request, "hazards/upload_preview.html", context, status=409)
    request.session.pop(SESSION_KEY, None)
    series = CalorimetrySeries.objects.get(run=run)
    messages.success(request, f"Calorimeter file {series.file_name} stored ({len(series.data['time_s'])} "
                              f"rows, SHA-256 {series.sha256[:12]}…). "
                              + indicator_change_text(before, current_indicators(step.pk)))
    return redirect(f"/steps/{step.pk}/")
