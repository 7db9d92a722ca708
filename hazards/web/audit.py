"""Audit views: the history of each record (who, when, what, why), `verify` for auditors,
and the dossiers of a process (request, status, download, check a PDF)."""

from __future__ import annotations

import datetime as dt

from django import forms
from django.apps import apps
from django.contrib import messages
from django.contrib.auth import get_user_model
from django.contrib.auth.decorators import login_required
from django.core.exceptions import FieldDoesNotExist, PermissionDenied
from django.http import Http404, HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.views.decorators.http import require_POST

from hazards.dossier.models import Dossier, DossierStatus
from hazards.dossier.seal import verify_pdf
from hazards.dossier.services import dossier_request as request_service
from hazards.fieldkinds import LABELS, kinds_for
from hazards.models import Process, ReactionStep
from hazards.review import history
from hazards.review.access import (
    PROCESS_PATHS,
    REFERENCE_MODELS,
    is_administrator,
    processes_of,
    visible,
)
from hazards.review.audit import head_hash, verify_all
from hazards.review.models import ProcessRevision, Role
from hazards.web import display
from hazards.web.common import visible_or_404
from hazards.web.paging import ListPage, link

ONLY_AUDITORS = "Only auditors and administrators run the integrity check."


# Foreign keys to people, shown by name; keys that only repeat the row's own context.
PERSON_FIELDS = {"actor_id", "signer_id", "created_by_id", "user_id", "owner_id", "raised_by_id",
                 "granted_by_id", "revoked_by_id", "requested_by_id", "closed_by_id"}
CONTEXT_FIELDS = {"id", "process_id", "revision_id", "step_id", "run_id", "test_id",
                  "signature_id"}


def _people(rows) -> dict:
    ids = {change[k] for row in rows for f, change in row["changes"].items()
           if f in PERSON_FIELDS for k in ("from", "to") if isinstance(change[k], int)}
    users = get_user_model().objects.filter(pk__in=ids)
    return {u.pk: u.get_full_name() or u.get_username() for u in users}


def _record_labels(rows) -> dict:
    """(model label, object id) -> how the pages name the record: "step 1. Charge",
    "revision 2"; one query per kind of record on the page."""
    wanted: dict[str, set] = {}
    for row in rows:
        wanted.setdefault(row["model"], set()).add(row["object_id"])
    labels = {}
    for pk, seq, name in ReactionStep._base_manager.filter(
            pk__in=wanted.get("hazards.ReactionStep", ())).values_list("pk", "sequence", "name"):
        labels[("hazards.ReactionStep", pk)] = f"step {seq}. {name}"
    for pk, number in ProcessRevision.objects.filter(
            pk__in=wanted.get("review.ProcessRevision", ())).values_list("pk", "number"):
        labels[("review.ProcessRevision", pk)] = f"revision {number}"
    return labels


def content_words(value) -> str:
    """A revision's frozen content in words: its steps by name and what each holds."""
    steps = value.get("steps") or []
    parts = []
    for step in steps:
        runs = len(step.get("calorimetry_runs") or [])
        tests = len(step.get("decomposition_tests") or [])
        parts.append(f"step {step.get('sequence')}. {step.get('name')} ({runs} calorimetry "
                     f"run{'s' if runs != 1 else ''}, {tests} decomposition "
                     f"test{'s' if tests != 1 else ''})")
    return ("the frozen content: " + "; ".join(parts)) if parts else "the frozen content (no step)"


def _words(model, field: str, value, people: dict):
    if value in (None, ""):
        return "—"
    if field in PERSON_FIELDS:
        return people.get(value, "a person no longer on record")
    try:
        choices = dict(model._meta.get_field(field).choices or ())
    except FieldDoesNotExist:
        choices = {}
    if isinstance(value, str | int) and value in choices:
        return str(choices[value])
    if isinstance(value, dict) and "steps" in value:
        return content_words(value)
    if isinstance(value, dict):
        return f"{len(value)} value{'s' if len(value) != 1 else ''}"
    if isinstance(value, list):
        return f"{len(value)} item{'s' if len(value) != 1 else ''}"
    if isinstance(value, dt.datetime):  # the trail's timestamps, to the second, in UTC
        return value.astimezone(dt.UTC).strftime("%Y-%m-%d %H:%M:%S UTC")
    return _plain(value)


def _rows_for_people(rows):
    people, labels = _people(rows), _record_labels(rows)
    out = []
    for row in rows:
        model = apps.get_model(row["model"])
        kinds = kinds_for(model)
        changes = []
        for field, change in row["changes"].items():
            if field in CONTEXT_FIELDS:
                continue
            kind = kinds.get(field.removesuffix("_id"))
            name = field.removesuffix("_id") if field in PERSON_FIELDS else field
            changes.append({
                "field": LABELS.get(field, name.replace("_", " ")),
                "from": display.quantity(change["from"], kind) if kind and isinstance(
                    change["from"], int | float) else _words(model, field, change["from"], people),
                "to": display.quantity(change["to"], kind) if kind and isinstance(
                    change["to"], int | float) else _words(model, field, change["to"], people),
            })
        out.append({**row, "model_name": model._meta.verbose_name, "changes": changes,
                    "record": labels.get((row["model"], row["object_id"]),
                                         model._meta.verbose_name)})
    return out


def _plain(value):
    if value in (None, ""):
        return "—"
    text = str(value)
    return text if len(text) <= 120 else text[:117] + "…"


def _history_page(request, sources) -> ListPage:
    """A page of a history read in SQL, newest first; `?before=` older, `?after=` newer."""
    try:
        page = history.history_page(sources, before=request.GET.get("before") or None,
                                    after=request.GET.get("after") or None)
    except history.BadHistoryKey:  # a stale or foreign link: the newest page
        page = history.history_page(sources)
    return ListPage(page.rows, page.count,
                    link(request, before=page.older) if page.older else None,
                    link(request, after=page.newer) if page.newer else None)


@login_required
def process_history_page(request, pk):
    process = visible_or_404(request.user, Process.objects.select_related("site"), pk=pk)
    page = _history_page(request, history.process_sources(process))
    return render(request, "hazards/history.html", {
        "process": process, "page": page, "rows": _rows_for_people(page.rows),
        "title": f"History of {process.name}",
    })


@login_required
def record_history_page(request, label, pk):
    if label not in PROCESS_PATHS and label not in REFERENCE_MODELS:
        raise Http404
    model = apps.get_model(label)
    obj = get_object_or_404(visible(request.user, model._base_manager.all()), pk=pk)
    page = _history_page(request, history.record_sources(obj))
    return render(request, "hazards/history.html", {
        "page": page, "rows": _rows_for_people(page.rows), "object": obj,
        "title": f"History of {model._meta.verbose_name} {obj}",
    })


def is_auditor(user) -> bool:
    return is_administrator(user) or processes_of(user, (Role.AUDITOR,)).exists()


class VerifyPdfForm(forms.Form):
    file = forms.FileField(label="Dossier PDF to check")


@login_required
def verify_page(request):
    """The integrity check of the review app (`manage.py verify`), and a dossier PDF check."""
    if not is_auditor(request.user):
        raise PermissionDenied(ONLY_AUDITORS)

    context = {"form": VerifyPdfForm(), "checked": None, "problems": None}
    if request.method == "POST" and request.POST.get("action") == "verify":
        context["problems"] = [str(p) for p in verify_all()]
        context["head"] = head_hash()
    elif request.method == "POST":
        form = VerifyPdfForm(request.POST, request.FILES)
        context["form"] = form
        if form.is_valid():
            # A dossier of a process this person cannot see: answered as a foreign PDF.
            context["checked"] = verify_pdf(form.cleaned_data["file"].read(),
                                            dossiers=_dossiers_of(request.user))
    return render(request, "hazards/verify.html", context)


def _dossiers_of(user):
    return Dossier.objects.filter(process__in=visible(user, Process.objects.all()))


@login_required
@require_POST
def dossier_request(request, pk):
    process = visible_or_404(request.user, Process.objects.all(), pk=pk)
    dossier, created = request_service(process=process, requested_by=request.user,
                                       reason=request.POST.get("reason", "")[:200])
    messages.success(request, f"Dossier version {dossier.version} "
                              f"{'requested' if created else 'already exists for this content'}.")
    return redirect(f"/processes/{pk}/#dossiers")


@login_required
def dossier_status(request, pk):
    dossier = get_object_or_404(_dossiers_of(request.user).defer("pdf", "content")
                                .select_related("revision", "requested_by"), pk=pk)
    return render(request, "hazards/_dossier_row.html", {"dossier": dossier})


@login_required
def dossier_pdf(request, pk):
    dossier = get_object_or_404(_dossiers_of(request.user), pk=pk)
    if dossier.status != DossierStatus.DONE:
        messages.error(request, f"Dossier version {dossier.version} is {dossier.status}.")
        return redirect(f"/processes/{dossier.process_id}/#dossiers")
    response = HttpResponse(bytes(dossier.pdf), content_type="application/pdf")
    response["Content-Disposition"] = f'attachment; filename="{dossier.file_name}"'
    response["Cache-Control"] = "private, no-store"
    return response


def not_found_redirect(request):  # pragma: no cover - convenience
    return redirect("/")
