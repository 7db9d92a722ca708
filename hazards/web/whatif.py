"""The what-if page of a step, its fragment (refreshed as the sliders move) and the apply form.

The page works without JavaScript (a GET form renders the results server-side);
`static/whatif/whatif.js` replaces the result fragment in place as the inputs change.
"""

from __future__ import annotations

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.http import HttpResponseForbidden
from django.shortcuts import get_object_or_404, redirect, render
from django.urls import reverse
from django.views.decorators.http import require_POST

from hazards.models import ReactionStep
from hazards.quantities import (
    DISPLAY_DIGITS,
    QuantityError,
    format_number,
    format_quantity,
    parse_quantity,
    quantity_text,
)
from hazards.review.access import can_edit_process, visible
from hazards.services.records import StaleRecord
from hazards.whatif import charts, services

C = 273.15


def _step(request, pk):
    return get_object_or_404(
        visible(request.user, ReactionStep.objects.select_related("process")), pk=pk)


def _entered(request, name: str, kind: str, errors: dict):
    """The text input unless left as shown, then the slider (a number in the canonical unit)."""
    text = (request.GET.get(name) or "").strip()
    shown = (request.GET.get(f"{name}_shown") or "").strip()
    slider = (request.GET.get(f"{name}_slider") or "").strip()
    raw = text if text and text != shown else (slider or text)
    if not raw:
        return None
    try:
        return parse_quantity(raw, field=name, kind=kind)
    except QuantityError as exc:
        errors[name] = f"{raw!r}: {exc.rule}"
        return None


def _fmt(value, digits=DISPLAY_DIGITS):
    """A number as every page writes it (`hazards.quantities.format_number`)."""
    return "–" if value is None else format_number(value, digits)


def _q(value, unit, scale=1.0, offset=0.0):
    """A value in SI shown in `unit` (value / scale - offset), '–' when unknown."""
    return "–" if value is None else format_quantity(value / scale - offset, unit)


def _qty(value, kind: str) -> str:
    """A result in the person's display units (`quantity_text`), '–' when unknown."""
    return "–" if value is None else quantity_text(value, kind)


INPUTS = ("dosing_time", "process_temperature", "activation_energy")
INPUT_LABELS = {"dosing_time": "Dosing time", "process_temperature": "Process temperature",
                "activation_energy": "Activation energy"}
NOT_EVALUATED = "Not evaluated: correct the input marked beside its field. No verdict is shown."


def _typed(request, name: str) -> str:
    return (request.GET.get(name) or "").strip()[:100]


def build_context(request, step) -> dict:
    """Everything the page and the fragment show; computes, never saves.

    A point is judged only when every input was read: with an input refused (not a number,
    not finite, out of its physical range, or a temperature the model cannot reach) the page
    names the field and the rule beside it and shows no verdict at all (issue 21 item 4)."""
    errors: dict[str, str] = {}
    td = _entered(request, "dosing_time", "time", errors)
    tp = _entered(request, "process_temperature", "temperature", errors)
    ea = _entered(request, "activation_energy", "molar_energy", errors)
    ctx = {"step": step, "errors": errors, "can_edit": can_edit_process(request.user,
                                                                        step.process_id)}
    try:
        case, rows = services.load(step.pk)
        model = services.build_model(case, rows, activation_energy_j_per_mol=ea)
        ranges = services.default_ranges(case, model)
    except services.WhatIfRefused as exc:
        if exc.field not in INPUTS:
            ctx["refused"] = f"{exc.field}: {exc.rule}" if exc.field else exc.rule
            return ctx
        errors[exc.field] = exc.rule
        model = ranges = None
    tp_fixed = model is None or model.activation_energy_j_per_mol is None
    td_shown = td or step.dosing_time_s or (model.anchor_dosing_time_s if model else None)
    tp_shown = tp or step.process_temperature_k
    ctx.update({
        "td_min": "" if td_shown is None else f"{td_shown / 60:.4g}",
        "tp_c": "" if tp_shown is None else f"{tp_shown - C:.2f}",
        "td_text": _typed(request, "dosing_time") if "dosing_time" in errors else
        ("" if td_shown is None else f"{td_shown / 60:.4g} min"),
        "tp_text": _typed(request, "process_temperature") if "process_temperature" in errors
        else ("" if tp_shown is None else f"{tp_shown - C:.2f} degC"),
        "ea_text": _typed(request, "activation_energy"),
        "tp_fixed": tp_fixed,
        "slider": {"td_lo": "1", "td_hi": "600", "tp_lo": "-20", "tp_hi": "200",
                   "tp_fixed": tp_fixed} if ranges is None else {
            "td_lo": f"{ranges['dosing_time_min_s'] / 60:.0f}",
            "td_hi": f"{ranges['dosing_time_max_s'] / 60:.0f}",
            "tp_lo": f"{ranges['temperature_min_k'] - C - 10:.0f}",
            "tp_hi": f"{ranges['temperature_max_k'] - C + 10:.0f}",
            "tp_fixed": tp_fixed},
    })
    if not errors:
        td, tp = td_shown, tp_shown
        try:
            point = services.evaluate(case, model, dosing_time_s=td, process_temperature_k=tp)
            win = services.window(case, model, **ranges)
        except services.WhatIfRefused as exc:
            if exc.field not in INPUTS:
                ctx["refused"] = f"{exc.field}: {exc.rule}" if exc.field else exc.rule
                return ctx
            errors[exc.field] = exc.rule
    if errors:
        ctx["not_evaluated"] = NOT_EVALUATED
        ctx["error_rows"] = [(name, INPUT_LABELS[name], errors[name])
                             for name in INPUTS if name in errors]
        return ctx
    g = win.grid
    table = []
    for i, temp in enumerate(g.temperatures_k):
        table.append({"temperature": _fmt(temp - C), "cells": [
            {"cls": int(g.criticality_class[i, j]) or "–", "margin": _fmt(g.cooling_margin[i, j],
                                                                         3),
             "ok": bool(g.safe[i, j])} for j in range(g.dosing_times_s.size)]})
    fast_i = int(abs(g.temperatures_k - tp).argmin())
    fast = g.fastest_safe_dosing_time_s[fast_i]
    ctx.update({
        "point": point, "window": win, "model": model,
        "window_img": charts.data_uri(charts.window_svg(win, chosen=point)),
        "profile_img": charts.data_uri(charts.profile_svg(point)),
        "numbers": [
            ("Dosing time", _q(td, "min", 60)),
            ("Process temperature", _qty(tp, "temperature")),
            ("Rate constant k at this temperature", _q(point.rate_constant_per_s, "1/min",
                                                       1 / 60)),
            ("Maximum accumulation a(t_d)", _fmt(point.max_accumulation)),
            ("Accumulation on the mass basis (gives max MTSR)",
             _fmt(point.effective_accumulation)),
            ("MTSR (maximum over time)", "–" if point.mtsr_k is None else
             f"{_qty(point.mtsr_k, 'temperature')} at {_q(point.mtsr_time_s, 'min', 60)}"),
            ("Peak heat release, plant", _qty(point.peak_heat_release_w, "capacity")),
            ("Cooling capacity", _qty(point.cooling_capacity_w, "capacity")),
            ("Cooling margin", f"{_fmt(point.cooling_margin, 3)} (site minimum "
             f"{_fmt(point.minimum_cooling_margin)})"),
            ("TMRad at MTSR", _q(point.tmr_ad_at_mtsr_s, "h", 3600)),
            ("MTT", _qty(point.mtt_k, "temperature")),
            ("TD24", _qty(point.td24_k, "temperature")),
            ("Criticality class", point.criticality_class or "not assigned"),
            ("Fastest acceptable dosing time at this temperature (grid)",
             "none on the grid" if fast != fast else _q(fast, "min", 60)),
        ],
        "table": table, "table_dosing": [f"{t / 60:.0f}" for t in g.dosing_times_s],
        "fit": model.fit,
        "model_line": (
            f"k = {_q(model.rate_constant_per_s, '1/min', 1 / 60)} at "
            f"{_qty(model.reference_temperature_k, 'temperature')}; E_a "
            + ("not known" if model.activation_energy_j_per_mol is None else
               f"{_q(model.activation_energy_j_per_mol, 'kJ/mol', 1000)} "
               f"({model.activation_energy_source})")
            + f"; peak factor {_fmt(model.peak_scale, 3)}"),
        "residual_rms": None if model.fit is None else
        float((model.fit.residuals_w ** 2).mean() ** 0.5),
    })
    return ctx


@login_required
def page(request, pk: int):
    step = _step(request, pk)
    return render(request, "whatif/page.html", build_context(request, step))


@login_required
def fragment(request, pk: int):
    step = _step(request, pk)
    return render(request, "whatif/fragment.html", build_context(request, step))


@login_required
@require_POST
def apply(request, pk: int):
    """Turn the chosen point into a change of the step (the normal edit, never a bypass)."""
    step = _step(request, pk)
    if not can_edit_process(request.user, step.process_id):
        return HttpResponseForbidden("You have no role on this process that allows this change.")
    back = reverse("whatif-page", args=[step.pk])
    try:
        td = parse_quantity(request.POST.get("dosing_time", ""), field="dosing_time", kind="time")
        tp = parse_quantity(request.POST.get("process_temperature", ""),
                            field="process_temperature", kind="temperature")
        version = int(request.POST.get("version", ""))
        services.apply_point(step=step, user=request.user, dosing_time_s=td,
                             process_temperature_k=tp, reason=request.POST.get("reason", ""),
                             expected_version=version)
    except (QuantityError, ValueError) as exc:
        messages.error(request, f"Not changed: {exc}")
        return redirect(back)
    except services.WhatIfRefused as exc:
        messages.error(request, f"Not changed: {exc.rule}")
        return redirect(back)
    except StaleRecord as exc:
        messages.error(request, f"Not changed: {exc}")
        return redirect(back)
    except ValidationError as exc:
        messages.error(request, f"Not changed: {'; '.join(exc.messages)}")
        return redirect(back)
    messages.success(request, services.APPLIED.format(td=td / 60, t=tp - C))
    return redirect(f"{back}?dosing_time={td / 60:.6g}+min&process_temperature={tp - C:.4f}+degC")
