"""Review and sign-off pages, built on the review app's services (hazards.review)."""

from __future__ import annotations

import datetime as dt

from django import forms
from django.contrib import messages
from django.contrib.auth import get_user_model
from django.contrib.auth.decorators import login_required
from django.shortcuts import get_object_or_404, redirect, render
from django.views.decorators.debug import sensitive_post_parameters
from django.views.decorators.http import require_POST

from hazards.models import Process
from hazards.review import errors as E
from hazards.review.access import roles_on
from hazards.review.models import (
    OPEN_STATES,
    Finding,
    FindingKind,
    FindingStatus,
    Meaning,
    ProcessRevision,
    ProcessRole,
    ReviewState,
    Role,
    Signature,
)
from hazards.review.policies import light_path
from hazards.review.selectors import (
    approval_status,
    content_diff,
    credentials_changed_at,
    credentials_note,
    record_history,
)
from hazards.review.services import acceptances
from hazards.review.services import findings as finding_services
from hazards.review.services import revisions as rev
from hazards.review.signing import printed_name
from hazards.web.common import visible_or_404
from hazards.web.diff import humanise_diff, record_names
from hazards.web.measures import endorsement_blocks

# The signature the next step of a revision needs: state -> (meaning, role).
NEXT_SIGNATURE = {
    ReviewState.DRAFTING: (Meaning.AUTHORED, Role.AUTHOR),
    ReviewState.LODGED: (Meaning.REVIEWED, Role.REVIEWER),
    ReviewState.CHECKED: (Meaning.APPROVED, Role.APPROVER),
}
SIGN_VERB = {Meaning.AUTHORED: "Submit for review (sign as author)",
             Meaning.REVIEWED: "Sign as reviewer",
             Meaning.APPROVED: "Approve (sign as approver)"}


def on_light_path(revision) -> bool:
    """A lodged revision the approver may endorse without the reviewer's step (now)."""
    return (revision is not None and revision.state == ReviewState.LODGED
            and light_path(revision=revision, content=revision.content)[1] is not None)


def review_actions(user, process, revision, *, light: bool | None = None) -> dict:
    """What this person may do to the process's review now (`light`: `on_light_path`, when
    the caller has it already)."""
    roles = roles_on(user, process.pk)
    actions = {"sign": None, "send_back": False, "open": False, "raise_finding": False}
    if revision is not None and revision.state in NEXT_SIGNATURE:
        meaning, role = NEXT_SIGNATURE[revision.state]
        already = revision.signatures.filter(signer=user).exists()
        if role in roles and not already:
            actions["sign"] = {"meaning": meaning, "label": Meaning(meaning).label,
                               "verb": SIGN_VERB[meaning]}
        elif (revision.state == ReviewState.LODGED and Role.APPROVER in roles and not already
              and (on_light_path(revision) if light is None else light)):
            # The lighter review path: the approver endorses without the reviewer's step
            # (revision_sign re-checks it under lock and records why).
            actions["sign"] = {"meaning": Meaning.APPROVED,
                               "label": Meaning(Meaning.APPROVED).label,
                               "verb": "Approve on the lighter review path (sign as approver)",
                               "light": True}
        if revision.state == ReviewState.LODGED and roles & {Role.REVIEWER, Role.APPROVER}:
            actions["send_back"] = True
        if revision.state == ReviewState.CHECKED and Role.APPROVER in roles:
            actions["send_back"] = True
    open_exists = ProcessRevision.objects.filter(process=process, state__in=OPEN_STATES).exists()
    actions["open"] = Role.AUTHOR in roles and not open_exists
    actions["raise_finding"] = bool(roles & {Role.REVIEWER, Role.APPROVER})
    return actions


class SignForm(forms.Form):
    prefix = "sign"
    meaning = forms.ChoiceField(choices=Meaning.choices, widget=forms.HiddenInput)
    password = forms.CharField(label="Your password", strip=False, widget=forms.PasswordInput(
        attrs={"autocomplete": "current-password", "required": True}))
    reason = forms.CharField(label="Comment (optional)", required=False, max_length=500,
                             widget=forms.Textarea(attrs={"rows": 2}))


class RiskAcceptanceForm(forms.Form):
    prefix = "accept"
    step = forms.IntegerField(widget=forms.HiddenInput)
    requirement_key = forms.CharField(max_length=300, widget=forms.HiddenInput)
    reason = forms.CharField(label="Why the risk is accepted", max_length=4000,
                             widget=forms.Textarea(attrs={"rows": 2, "required": True}))
    password = forms.CharField(label="Your password", strip=False, widget=forms.PasswordInput(
        attrs={"autocomplete": "current-password", "required": True}))


class SendBackForm(forms.Form):
    prefix = "back"
    reason = forms.CharField(label="Why it goes back to the author", max_length=2000,
                             widget=forms.Textarea(attrs={"rows": 3, "required": True}))


class FindingForm(forms.Form):
    prefix = "finding"
    title = forms.CharField(label="Finding", max_length=200)
    description = forms.CharField(label="Details", required=False,
                                  widget=forms.Textarea(attrs={"rows": 3}))
    kind = forms.ChoiceField(label="Kind", choices=FindingKind.choices)
    owner = forms.ModelChoiceField(label="Action owner", queryset=get_user_model().objects.none())
    due_date = forms.DateField(label="Due date", widget=forms.DateInput(attrs={"type": "date"}))

    def __init__(self, *args, process, **kwargs):
        super().__init__(*args, **kwargs)
        ids = ProcessRole.objects.filter(process=process).values("user_id")
        self.fields["owner"].queryset = get_user_model().objects.filter(pk__in=ids).order_by(
            "username")
        self.fields["owner"].label_from_instance = lambda u: f"{printed_name(u)} ({u.username})"
        if not self.is_bound:
            self.initial["due_date"] = dt.date.today() + dt.timedelta(days=28)


class FindingUpdateForm(forms.Form):
    prefix = "status"
    status = forms.ChoiceField(label="New status", choices=FindingStatus.choices)
    reason = forms.CharField(label="Reason (what was done)", max_length=1000,
                             widget=forms.Textarea(attrs={"rows": 2}))

    def __init__(self, *args, choices, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["status"].choices = choices


class FindingNoteForm(forms.Form):
    prefix = "note"
    text = forms.CharField(label="Progress note", max_length=4000,
                           widget=forms.Textarea(attrs={"rows": 3}))


def finding_moves(user, finding) -> list[tuple[str, str]]:
    """The status changes this person may make now (the rule is the service's)."""
    if finding.status in finding_services.SETTLED:
        return []
    if finding_services.is_checker(user, finding):
        targets = [FindingStatus.RESOLVED, FindingStatus.WITHDRAWN]
        targets.insert(0, FindingStatus.OPEN if finding.status == FindingStatus.READY_FOR_CHECK
                       else FindingStatus.READY_FOR_CHECK)
    elif finding.owner_id == user.pk and finding.status == FindingStatus.OPEN:
        targets = [FindingStatus.READY_FOR_CHECK]
    else:
        return []
    return [(t.value, t.label) for t in targets]


def last_approved(process, exclude=None):
    qs = ProcessRevision.objects.filter(process=process, signatures__meaning=Meaning.APPROVED)
    if exclude is not None:
        qs = qs.exclude(pk=exclude.pk)
    return qs.order_by("-number").first()


def approval_blockers(process, sign, blocks) -> dict | None:
    """What refuses the approval the approver is offered, named before any password is typed
    (issue 21 item 5): the blocking findings not yet settled and the required measures that
    are unmet and not covered by a signed risk acceptance. The service refuses the same
    (`revisions._sign_locked`, `refuse_unmet_measures`); None when nothing blocks."""
    if not sign or sign["meaning"] != Meaning.APPROVED:
        return None
    found = list(finding_services.blocking_findings(process).select_related("owner"))
    unmet = [u for u in blocks["unmet"] if not u["accepted"]]
    return {"findings": found, "measures": unmet} if found or unmet else None


def _with_credential_notes(signatures) -> list:
    """Signatures, each with `credentials_note` when its signer's password changed shortly
    before it (issue 18 item 2)."""
    signatures = list(signatures)
    changed = credentials_changed_at(signatures)
    for sig in signatures:
        sig.credentials_note = (credentials_note(sig, changed[sig.pk])
                                if sig.pk in changed else "")
    return signatures


def _review_context(request, process, revision, **extra):
    baseline = last_approved(process, exclude=revision) if revision else None
    diff = None
    if revision is not None and baseline is not None:
        diff = humanise_diff(content_diff(baseline.content, revision.content),
                             record_names(baseline.content, revision.content))
    user = request.user
    light = on_light_path(revision)
    context = {
        "process": process, "revision": revision, "baseline": baseline, "diff": diff,
        "approval": approval_status(process),
        "signatures": _with_credential_notes(
            Signature.objects.filter(revision=revision).select_related("signer"))
        if revision else [],
        "transitions": revision.transitions.select_related("actor").order_by("at", "id")
        if revision else [],
        "findings": Finding.objects.filter(process=process).select_related(
            "owner", "raised_by").order_by("status", "due_date"),
        "actions": review_actions(user, process, revision, light=light),
        "printed_name": printed_name(user),
        "now": dt.datetime.now(dt.UTC),
        "finding_form": FindingForm(process=process),
        "shows_indicators": True,
        "light_path": light,
        "blocks": endorsement_blocks(revision),
        "can_accept_risk": bool(
            revision is not None and revision.state in ("lodged", "checked")
            and Role.APPROVER in roles_on(user, process.pk)),
    }
    context["approval_blockers"] = approval_blockers(
        process, context["actions"]["sign"], context["blocks"])
    if context["actions"]["sign"]:
        context.setdefault("sign_form", SignForm(initial={
            "meaning": context["actions"]["sign"]["meaning"]}))
    context.setdefault("send_back_form", SendBackForm())
    context.update(extra)
    return context


@login_required
def review_page(request, pk):
    process = visible_or_404(request.user, Process.objects.select_related("site"), pk=pk)
    revision = rev.current_revision(process)
    return render(request, "hazards/review.html", _review_context(request, process, revision))


def _revision(request, pk) -> ProcessRevision:
    revision = get_object_or_404(ProcessRevision.objects.select_related("process"), pk=pk)
    visible_or_404(request.user, Process.objects.all(), pk=revision.process_id)
    return revision


@sensitive_post_parameters("password")
@login_required
@require_POST
def sign(request, pk):
    revision = _revision(request, pk)
    process = revision.process
    form = SignForm(request.POST)
    if not form.is_valid():
        return render(request, "hazards/review.html", _review_context(
            request, process, revision, sign_form=form), status=400)
    try:
        rev.revision_sign(revision=revision, user=request.user,
                          password=form.cleaned_data["password"],
                          meaning=form.cleaned_data["meaning"], request=request,
                          reason=form.cleaned_data["reason"])
    except E.ReviewError as exc:
        revision.refresh_from_db()
        if isinstance(exc, E.SignatureRefused | E.Locked):
            form.add_error("password", exc.message)
            extra = {"sign_form": form}
        else:
            extra = {"error": exc.message}
        return render(request, "hazards/review.html", _review_context(
            request, process, revision, **extra), status=exc.status)
    messages.success(request, f"Signed: {Meaning(form.cleaned_data['meaning']).label}.")
    return redirect("web-review", pk=process.pk)


@sensitive_post_parameters("password")
@login_required
@require_POST
def risk_accept(request, pk):
    """The approver's signed acceptance of one unmet required measure of this revision."""
    revision = _revision(request, pk)
    form = RiskAcceptanceForm(request.POST)
    if not form.is_valid():
        return render(request, "hazards/review.html", _review_context(
            request, revision.process, revision, error="A reason and your password are "
            "needed to sign a risk acceptance."), status=400)
    try:
        acceptances.risk_accept(
            revision=revision, step_id=form.cleaned_data["step"],
            requirement_key=form.cleaned_data["requirement_key"],
            reason=form.cleaned_data["reason"], user=request.user,
            password=form.cleaned_data["password"], request=request)
    except E.ReviewError as exc:
        return render(request, "hazards/review.html", _review_context(
            request, revision.process, revision, error=exc.message), status=exc.status)
    messages.success(request, "Risk acceptance signed.")
    return redirect("web-review", pk=revision.process_id)


@login_required
@require_POST
def send_back(request, pk):
    revision = _revision(request, pk)
    form = SendBackForm(request.POST)
    if form.is_valid():
        try:
            rev.revision_send_back(revision=revision, user=request.user,
                                   reason=form.cleaned_data["reason"])
        except E.ReviewError as exc:
            return render(request, "hazards/review.html", _review_context(
                request, revision.process, revision, error=exc.message), status=exc.status)
        else:
            messages.success(request, "Sent back to the author; a new draft is open.")
            return redirect("web-review", pk=revision.process_id)
    return render(request, "hazards/review.html", _review_context(
        request, revision.process, revision, send_back_form=form), status=400)


@login_required
@require_POST
def open_revision(request, pk):
    process = visible_or_404(request.user, Process.objects.all(), pk=pk)
    try:
        rev.revision_open(process=process, user=request.user,
                          reason=request.POST.get("reason", "").strip()[:500])
    except E.ReviewError as exc:
        messages.error(request, exc.message)
    else:
        messages.success(request, "A new draft revision is open.")
    return redirect("web-review", pk=process.pk)


@login_required
@require_POST
def finding_raise(request, pk):
    process = visible_or_404(request.user, Process.objects.all(), pk=pk)
    form = FindingForm(request.POST, process=process)
    revision = rev.current_revision(process)
    if form.is_valid():
        try:
            finding_services.finding_raise(process=process, user=request.user,
                                           revision=revision, **form.cleaned_data)
        except E.ReviewError as exc:
            form.add_error(None, exc.message)
        else:
            messages.success(request, "Finding recorded.")
            return redirect("web-review", pk=process.pk)
    return render(request, "hazards/review.html", _review_context(
        request, process, revision, finding_form=form), status=400)


@login_required
def finding_detail(request, pk):
    finding = get_object_or_404(Finding.objects.select_related("process", "owner", "raised_by"),
                                pk=pk)
    visible_or_404(request.user, Process.objects.all(), pk=finding.process_id)
    moves = finding_moves(request.user, finding)
    posted = request.POST if request.method == "POST" else None
    action = request.POST.get("action") if posted else None
    form = FindingUpdateForm(posted if action == "status" else None, choices=moves)
    note_form = FindingNoteForm(posted if action == "note" else None)
    status = 200
    if request.method == "POST":
        bound = form if action == "status" else note_form
        if bound.is_valid():
            try:
                if action == "status":
                    finding_services.finding_update(finding=finding, user=request.user,
                                                    reason=form.cleaned_data["reason"],
                                                    status=form.cleaned_data["status"])
                else:
                    finding_services.finding_note(finding=finding, user=request.user,
                                                  text=note_form.cleaned_data["text"])
            except E.ReviewError as exc:
                bound.add_error(None, exc.message)
                status = exc.status
            else:
                if action == "status":
                    messages.success(request, "Finding updated.")
                    return redirect("web-review", pk=finding.process_id)
                messages.success(request, "Note added.")
                return redirect("web-finding", pk=finding.pk)
        else:
            status = 400
    return render(request, "hazards/finding.html", {
        "finding": finding, "form": form if moves else None,
        "note_form": note_form if finding_services.may_note(request.user, finding)
        and finding.status not in finding_services.SETTLED else None,
        "notes": finding.notes.select_related("author"), "history": record_history(finding),
        "process": finding.process, "today": dt.date.today(),
    }, status=status)
