"""Forms of every record: validated as you leave a field (htmx) and again on submit; written
through hazards.services.records with the version the form was read at."""

from __future__ import annotations

from django import forms
from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied, ValidationError
from django.db import transaction
from django.http import Http404, HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.template.loader import render_to_string
from django.views.decorators.http import require_POST

from hazards.models import (
    CalorimetryRun,
    DecompositionPeak,
    DecompositionTest,
    Process,
    ReactionStep,
    Solvent,
    Vessel,
)
from hazards.services.records import StaleRecord, record_create, record_delete, record_update
from hazards.web import common, selectors
from hazards.web.diff import indicator_change_text
from hazards.web.forms import FORMS, PEAK_ROWS, PeakForm

STALE_MESSAGE = ("Someone else changed this record while you were editing it (you started from "
                 "version {expected}; it is now at version {current}). Nothing was saved. The "
                 "stored values are shown beside each field that differs; submit again to save "
                 "your values over them.")

PeakFormSet = forms.formset_factory(PeakForm, extra=0, max_num=20)


def live_validation(form, key: str) -> None:
    """Each field asks the server whether it is valid when the person leaves it."""
    for name, field in form.fields.items():
        if isinstance(field.widget, forms.HiddenInput):
            continue
        attrs = field.widget.attrs
        attrs.update({
            # "change" fires when the person leaves a field they altered (or picks an option).
            "hx-post": f"/validate/{key}/", "hx-trigger": "change",
            "hx-target": f"#err-{form.add_prefix(name)}", "hx-swap": "outerHTML",
        })
        described = [f"err-{form.add_prefix(name)}"]
        if field.help_text:
            described.insert(0, f"id_{form.add_prefix(name)}_helptext")
        attrs["aria-describedby"] = " ".join(described)
        if form.is_bound and name in form.errors:
            attrs["aria-invalid"] = "true"


@login_required
@require_POST
def validate_field(request, key):
    """The error (or none) of the one field the person just left."""
    form_class = FORMS.get(key)
    if form_class is None:
        raise Http404
    name = request.headers.get("HX-Trigger-Name") or request.POST.get("_field", "")
    prefix = ""
    if name.startswith("peak-"):
        form_class, prefix = PeakForm, name.rsplit("-", 1)[0]
        field_name = name.rsplit("-", 1)[1]
    else:
        field_name = name
    form = form_class(prefix=prefix or None) if form_class is PeakForm else form_class()
    field = form.fields.get(field_name)
    if field is None:
        raise Http404
    errors = []
    try:
        field.clean(field.widget.value_from_datadict(request.POST, request.FILES, name))
    except ValidationError as exc:
        errors = exc.messages
    html = render_to_string("hazards/_field_error.html", {"id": f"err-{name}", "errors": errors})
    return HttpResponse(html)


def _stale_notes(form, instance) -> dict:
    """field -> the value now stored, for fields where it differs from the submitted one."""
    fresh = type(instance)._base_manager.get(pk=instance.pk)
    notes = {}
    for name, field in form.fields.items():
        if name in ("version", "reason") or name not in form.cleaned_data:
            continue
        stored = getattr(fresh, name)
        if hasattr(stored, "pk"):
            stored_cmp, mine = stored.pk, getattr(form.cleaned_data[name], "pk", None)
        else:
            stored_cmp, mine = stored, form.cleaned_data[name]
        if stored_cmp != mine:
            notes[name] = field.prepare_value(stored) if not hasattr(stored, "pk") else str(stored)
    return notes, fresh.version


def _apply_service_errors(form, exc: ValidationError) -> None:
    if hasattr(exc, "error_dict"):
        for name, errors in exc.message_dict.items():
            form.add_error(name if name in form.fields else None, errors)
    else:
        form.add_error(None, exc.messages)


def _save_peaks(test, formset) -> None:
    existing = {round(p.heating_rate_k_per_s, 12): p for p in test.peaks.all()}
    wanted = {}
    for f in formset.forms:
        rate, peak = f.cleaned_data.get("heating_rate_k_per_s"), f.cleaned_data.get(
            "peak_temperature_k")
        if rate is None and peak is None:
            continue
        wanted[round(rate, 12)] = (rate, peak)
    for key, peak in existing.items():
        if key not in wanted:
            record_delete(instance=peak)
    for key, (rate, temp) in wanted.items():
        if key in existing:
            if existing[key].peak_temperature_k != temp:
                record_update(instance=existing[key], data={"peak_temperature_k": temp})
        else:
            record_create(model=DecompositionPeak, data={
                "test": test, "heating_rate_k_per_s": rate, "peak_temperature_k": temp})


def _peak_formset(request, test):
    initial = []
    if test is not None and test.pk:
        initial = [{"heating_rate_k_per_s": p.heating_rate_k_per_s,
                    "peak_temperature_k": p.peak_temperature_k} for p in test.peaks.all()]
    initial += [{}] * max(PEAK_ROWS - len(initial), 1)
    if request.method == "POST":
        formset = PeakFormSet(request.POST, prefix="peak")
    else:
        formset = PeakFormSet(initial=initial, prefix="peak")
    for f in formset.forms:
        live_validation(f, "decomposition")
    return formset


def _peaks_valid(formset) -> bool:
    if not formset.is_valid():
        return False
    ok = True
    for f in formset.forms:
        rate, peak = f.cleaned_data.get("heating_rate_k_per_s"), f.cleaned_data.get(
            "peak_temperature_k")
        if (rate is None) != (peak is None):
            f.add_error("peak_temperature_k" if peak is None else "heating_rate_k_per_s",
                        "A peak needs both its heating rate and its peak temperature.")
            ok = False
    return ok


def _step_id_of(instance, parent) -> int | None:
    """The step whose indicators a change of this record can move (None: not a step's)."""
    if isinstance(instance, ReactionStep):
        return instance.pk
    step = (parent or {}).get("step") if parent else None
    if step is not None:
        return getattr(step, "pk", step)
    return getattr(instance, "step_id", None)


def _basis_note(saved, step_id, before) -> str:
    """What a basis switch changed (issue 21 item 6), and whether the indicators moved."""
    if step_id is None:
        return ""
    note = ""
    released = getattr(saved, "released_basis", None) or []
    if released:
        what = "run" if isinstance(saved, CalorimetryRun) else "test"
        note = (f" It is now the basis of the step; {what}"
                f"{'s' if len(released) > 1 else ''} {', '.join(map(str, released))} no longer"
                f" {'are' if len(released) > 1 else 'is'}.")
    return note + " " + indicator_change_text(before, selectors.current_indicators(step_id))


def edit_record(request, *, key, instance, parent=None, process=None, title, back_url,
                done_url=None):
    """Create (instance.pk is None) or change one record."""
    form_class = FORMS[key]
    user = request.user
    process_id = process.pk if process is not None else None
    if instance.pk is None:
        common.require_edit(user, type(instance), process_id)
        needs_reason = common.needs_reason(process_id)
    else:
        common.require_edit(user, instance, process_id)
        needs_reason = (common.reference_needs_reason(instance)
                        if process_id is None else common.needs_reason(process_id))
    is_new = instance.pk is None
    form = form_class(request.POST or None, instance=instance, needs_reason=needs_reason)
    peaks = _peak_formset(request, instance) if key == "decomposition" else None
    stale_notes, status = {}, 200
    if request.method == "POST":
        valid = form.is_valid() & (peaks is None or _peaks_valid(peaks))
        if valid:
            data = form.record_data()
            reason = form.cleaned_data.get("reason", "")
            step_id = _step_id_of(instance, parent)
            before = selectors.current_indicators(step_id) if step_id else None
            try:
                with transaction.atomic(), common.audit_reason(reason):
                    if is_new:
                        if parent is not None:
                            data.update(parent)
                        saved = record_create(model=type(instance), data=data)
                    else:
                        expected = form.cleaned_data.get("version")
                        saved = record_update(instance=instance, data=data,
                                              expected_version=expected)
                    if peaks is not None:
                        _save_peaks(saved, peaks)
            except StaleRecord as exc:
                stale_notes, current = _stale_notes(form, instance)
                form.add_error(None, STALE_MESSAGE.format(expected=exc.expected,
                                                          current=exc.current))
                data = form.data.copy()
                data["version"] = current
                form.data = data
                status = 409
            except ValidationError as exc:
                _apply_service_errors(form, exc)
                status = 400
            else:
                messages.success(request, f"{title}: saved." + _basis_note(saved, step_id,
                                                                           before))
                return redirect(done_url(saved) if done_url else back_url)
        else:
            status = 400
    live_validation(form, key)
    return render(request, "hazards/record_form.html", {
        "form": form, "peaks": peaks, "title": title, "back_url": back_url,
        "stale_notes": stale_notes, "needs_reason": needs_reason, "is_new": is_new,
        "process": process, "key": key,
    }, status=status)


def _visible(request, model, pk, *related):
    return common.visible_or_404(request.user, model.objects.select_related(*related), pk=pk)


@login_required
def process_new(request):
    if not common.can_edit(request.user, Process):
        raise PermissionDenied("Only administrators open new processes (and grant its roles).")
    return edit_record(request, key="process", instance=Process(), title="New process",
                       back_url="/processes/", done_url=lambda p: f"/processes/{p.pk}/")


@login_required
def process_edit(request, pk):
    process = _visible(request, Process, pk)
    return edit_record(request, key="process", instance=process, process=process,
                       title=f"Process {process.name}", back_url=f"/processes/{pk}/")


@login_required
def step_new(request, pk):
    process = _visible(request, Process, pk)
    nxt = (ReactionStep.objects.filter(process=process).order_by("-sequence")
           .values_list("sequence", flat=True).first() or 0) + 1
    step = ReactionStep(process=process, sequence=nxt)
    return edit_record(request, key="step", instance=step, parent={"process": process},
                       process=process, title=f"New step of {process.name}",
                       back_url=f"/processes/{pk}/", done_url=lambda s: f"/steps/{s.pk}/")


@login_required
def step_edit(request, pk):
    step = _visible(request, ReactionStep, pk, "process")
    return edit_record(request, key="step", instance=step, process=step.process,
                       title=f"Step {step.sequence}. {step.name}", back_url=f"/steps/{pk}/")


@login_required
def calorimetry_new(request, pk):
    step = _visible(request, ReactionStep, pk, "process")
    return edit_record(request, key="calorimetry", instance=CalorimetryRun(step=step),
                       parent={"step": step}, process=step.process,
                       title=f"New calorimetry run of step {step.sequence}. {step.name}",
                       back_url=f"/steps/{pk}/")


@login_required
def calorimetry_edit(request, pk):
    run = _visible(request, CalorimetryRun, pk, "step", "step__process")
    return edit_record(request, key="calorimetry", instance=run, process=run.step.process,
                       title=f"Calorimetry run {run}", back_url=f"/steps/{run.step_id}/")


@login_required
def decomposition_new(request, pk):
    step = _visible(request, ReactionStep, pk, "process")
    return edit_record(request, key="decomposition", instance=DecompositionTest(step=step),
                       parent={"step": step}, process=step.process,
                       title=f"New decomposition test of step {step.sequence}. {step.name}",
                       back_url=f"/steps/{pk}/")


@login_required
def decomposition_edit(request, pk):
    test = _visible(request, DecompositionTest, pk, "step", "step__process")
    return edit_record(request, key="decomposition", instance=test, process=test.step.process,
                       title=f"Decomposition test {test}", back_url=f"/steps/{test.step_id}/")


@login_required
def vessel_new(request):
    return edit_record(request, key="vessel", instance=Vessel(), title="New vessel",
                       back_url="/vessels/")


@login_required
def vessel_edit(request, pk):
    vessel = get_object_or_404(Vessel, pk=pk)
    return edit_record(request, key="vessel", instance=vessel, title=f"Vessel {vessel}",
                       back_url="/vessels/")


@login_required
def solvent_new(request):
    return edit_record(request, key="solvent", instance=Solvent(), title="New solvent",
                       back_url="/solvents/")


@login_required
def solvent_edit(request, pk):
    solvent = get_object_or_404(Solvent, pk=pk)
    return edit_record(request, key="solvent", instance=solvent, title=f"Solvent {solvent}",
                       back_url="/solvents/")


@login_required
def reference_list(request, kind):
    model = {"vessels": Vessel, "solvents": Solvent}[kind]
    # The template gets the names, not the model class: a template calls a class it is given
    # (an empty instance), so `model.verbose_name_plural` printed nothing.
    return render(request, "hazards/reference_list.html", {
        "kind": kind, "rows": model.objects.all(),
        "plural": str(model._meta.verbose_name_plural), "noun": str(model._meta.verbose_name),
        "can_add": common.can_edit(request.user, model),
    })
