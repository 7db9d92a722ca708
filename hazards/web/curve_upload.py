"""A decomposition curve as a guided flow: choose, preview (problems, baseline limits), confirm.

Nothing is stored before confirmation: the pending file lives in the person's session
(base64, at most hazards.services.series.MAX_BYTES), is parsed by
`hazards.services.curves.parse_curve` and analysed for every preview (the chart shows the scan
with its baseline between the limits, which the person may move), and is stored on
confirmation by `hazards.services.curves_store.curve_attach`, the service the API uses.
"""

from __future__ import annotations

import base64
import os

import pghistory
from django import forms
from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.db import transaction
from django.shortcuts import redirect, render

from hazards.dossier.decomposition_charts import scans_chart
from hazards.models import BaselineMethod, DecompositionTest
from hazards.services import series as parser
from hazards.services.curves import parse_curve
from hazards.services.curves_store import analyse_dsc, curve_attach, run_summary
from hazards.services.records import StaleRecord
from hazards.services.series_store import SeriesRejected
from hazards.web import common
from hazards.web.quantity_fields import QuantityFormField
from hazards.web.upload import first_rows, header_cells

SESSION_KEY = "exo_pending_curve"
NOTHING_PENDING = "No curve is waiting for confirmation; choose the file again."


class ChooseCurveForm(forms.Form):
    file = forms.FileField(
        label="Curve file (CSV)",
        help_text=(
            "CSV (UTF-8, UTF-16 or Latin-1; comma, semicolon or tab; a decimal comma with "
            "semicolons or tabs) with a header such as: time [min], temperature [degC], "
            "heat_flow [mW] "
            "(an adiabatic run: time, temperature and optionally pressure [bar])."
        ),
    )
    sample_mass = QuantityFormField(kind="mass", label="Sample mass", help_text="e.g. 2.0 mg")
    exotherm_positive = forms.BooleanField(
        label="Exotherms are positive in this file", required=False, initial=True
    )
    phi_factor = forms.FloatField(
        label="φ of the test cell (adiabatic runs)", required=False, min_value=1.0
    )
    free_volume = QuantityFormField(
        kind="volume",
        label="Free gas volume of the cell (adiabatic runs)",
        required=False,
        help_text="e.g. 10 mL; gives the non-condensable gas after cooling",
    )


class LimitsForm(forms.Form):
    baseline = forms.ChoiceField(choices=BaselineMethod.choices, label="Baseline")
    limit_low = QuantityFormField(
        kind="temperature", label="Lower integration limit", required=False
    )
    limit_high = QuantityFormField(
        kind="temperature", label="Upper integration limit", required=False
    )


class ConfirmForm(forms.Form):
    reason = forms.CharField(
        label="Reason for the change",
        max_length=500,
        required=False,
        widget=forms.Textarea(attrs={"rows": 2}),
    )


def _test(request, pk):
    test = common.visible_or_404(
        request.user, DecompositionTest.objects.select_related("step", "step__process"), pk=pk
    )
    common.require_edit(request.user, test.step)
    return test


def _limits(pending):
    low, high = pending.get("limit_low_k"), pending.get("limit_high_k")
    return (low, high) if low and high else None


def _context(test, pending):
    raw = base64.b64decode(pending["raw"])
    parsed = parse_curve(raw, kind=test.method)
    problems, analysis, chart, run = list(parsed.problems), None, None, None
    if parsed.ok:
        try:
            if test.method == "dsc":
                analysis = analyse_dsc(
                    parsed.series.data,
                    sample_mass_kg=pending["sample_mass_kg"],
                    exotherm_positive=pending["exotherm_positive"],
                    baseline=pending["baseline"],
                    limits_k=_limits(pending),
                )
            else:
                typed = (test.kinetics or {}).get("activation_energy_source") != "curve"
                run = run_summary(
                    parsed.series.data,
                    phi=pending.get("phi_factor"),
                    sample_mass_kg=pending["sample_mass_kg"],
                    free_volume_m3=pending.get("free_volume_m3"),
                    typed_activation_energy=test.activation_energy_j_per_mol if typed else None,
                )
        except Exception as exc:  # noqa: BLE001 - a calculation refusal is shown, not raised
            problems.append(
                parser.SeriesProblem(
                    None,
                    getattr(exc, "argument", None),
                    None,
                    getattr(exc, "rule", str(exc)),
                    "calculation",
                )
            )
    if analysis is not None:
        sign = 1.0 if pending["exotherm_positive"] else -1.0
        svg = scans_chart(
            [
                {
                    "heating_rate_k_per_s": analysis.heating_rate_k_per_s,
                    "temperature_k": parsed.series.data["temperature_k"],
                    "heat_flow_w": [sign * x for x in parsed.series.data["heat_flow_w"]],
                    "baseline_w": analysis.baseline_w.tolist(),
                }
            ],
            {"status": "preview"},
        )
        chart = "data:image/svg+xml;base64," + base64.b64encode(svg.encode()).decode("ascii")
    return {
        "test": test,
        "step": test.step,
        "process": test.step.process,
        "pending": pending,
        "cells": header_cells(raw),
        "rows": first_rows(raw),
        "problems": problems,
        "ok": not problems and (analysis is not None or run is not None),
        "analysis": analysis,
        "run": run,
        "chart": chart,
        "parsed": parsed.series,
        "limits_form": LimitsForm(
            initial={
                "baseline": pending["baseline"],
                "limit_low": analysis.limits_k[0] if analysis else None,
                "limit_high": analysis.limits_k[1] if analysis else None,
            }
        ),
        "confirm_form": ConfirmForm(),
        "needs_reason": common.needs_reason(test.step.process_id),
    }


@login_required
def choose(request, pk):
    test = _test(request, pk)
    if request.method == "POST":
        form = ChooseCurveForm(request.POST, request.FILES)
        if form.is_valid():
            f = form.cleaned_data["file"]
            request.session[SESSION_KEY] = {
                "test": test.pk,
                "test_version": test.version,
                "name": os.path.basename(f.name or "curve.csv")[:255],
                "raw": base64.b64encode(f.read(parser.MAX_BYTES + 1)).decode("ascii"),
                "sample_mass_kg": form.cleaned_data["sample_mass"],
                "exotherm_positive": form.cleaned_data["exotherm_positive"],
                "phi_factor": form.cleaned_data["phi_factor"],
                "free_volume_m3": form.cleaned_data.get("free_volume"),
                "baseline": BaselineMethod.SIGMOIDAL,
                "limit_low_k": None,
                "limit_high_k": None,
            }
            return redirect(f"/decomposition/{test.pk}/curves/preview/")
        return render(
            request,
            "hazards/curve_choose.html",
            {"test": test, "step": test.step, "process": test.step.process, "form": form},
            status=400,
        )
    request.session.pop(SESSION_KEY, None)
    return render(
        request,
        "hazards/curve_choose.html",
        {"test": test, "step": test.step, "process": test.step.process, "form": ChooseCurveForm()},
    )


@login_required
def preview(request, pk):
    test = _test(request, pk)
    pending = request.session.get(SESSION_KEY)
    if not pending or pending.get("test") != test.pk:
        messages.error(request, NOTHING_PENDING)
        return redirect(f"/decomposition/{test.pk}/curves/new/")
    action = request.POST.get("action") if request.method == "POST" else None
    if action == "limits":
        form = LimitsForm(request.POST)
        if form.is_valid():
            pending.update(
                baseline=form.cleaned_data["baseline"],
                limit_low_k=form.cleaned_data["limit_low"],
                limit_high_k=form.cleaned_data["limit_high"],
            )
            request.session[SESSION_KEY] = pending
        return redirect(f"/decomposition/{test.pk}/curves/preview/")
    if action == "cancel":
        request.session.pop(SESSION_KEY, None)
        messages.info(request, "The file was discarded; nothing was stored.")
        return redirect(f"/steps/{test.step_id}/")
    return render(request, "hazards/curve_preview.html", _context(test, pending))


@login_required
def confirm(request, pk):
    test = _test(request, pk)
    pending = request.session.get(SESSION_KEY)
    if request.method != "POST" or not pending or pending.get("test") != test.pk:
        messages.error(request, NOTHING_PENDING)
        return redirect(f"/decomposition/{test.pk}/curves/new/")
    context = _context(test, pending)
    form = ConfirmForm(request.POST)
    if context["needs_reason"]:
        form.fields["reason"].required = True
    if not context["ok"] or not form.is_valid():
        context["confirm_form"] = form
        return render(request, "hazards/curve_preview.html", context, status=400)
    reason = form.cleaned_data["reason"] or "decomposition curve uploaded"
    try:
        with transaction.atomic(), pghistory.context(reason=reason[:1000]):
            curve = curve_attach(
                test=test,
                file_name=pending["name"],
                raw=base64.b64decode(pending["raw"]),
                sample_mass_kg=pending["sample_mass_kg"],
                exotherm_positive=pending["exotherm_positive"],
                phi_factor=pending.get("phi_factor"),
                free_volume_m3=pending.get("free_volume_m3"),
                baseline=pending["baseline"],
                limits_k=_limits(pending),
                expected_test_version=pending["test_version"],
            )
    except SeriesRejected as exc:
        context.update(problems=exc.problems, ok=False)
        return render(request, "hazards/curve_preview.html", context, status=400)
    except StaleRecord as exc:
        context.update(stale=str(exc), ok=False)
        return render(request, "hazards/curve_preview.html", context, status=409)
    request.session.pop(SESSION_KEY, None)
    messages.success(
        request,
        f"Curve {curve.file_name} stored ({len(curve.data['time_s'])} rows, "
        f"SHA-256 {curve.sha256[:12]}…); the indicators were recomputed.",
    )
    return redirect(f"/steps/{test.step_id}/")
