"""The dossier's only contact with the review workflow (hazards.review): revisions, their
signatures, findings, history and the audit chain's head, as the plain values a dossier
freezes. A process without a signed revision gets "no revision" (its dossier is rendered
from its current state)."""

from __future__ import annotations

from hazards.review.anchors import current_head
from hazards.review.audit import head_hash
from hazards.review.models import (
    Finding,
    ProcessRevision,
    RiskAcceptance,
    Signature,
    Transition,
)
from hazards.review.selectors import approval_status, credentials_changed_at, credentials_note
from hazards.review.services.revisions import revision_content, revisions_reconcile


def _iso(value) -> str | None:
    return value.isoformat().replace("+00:00", "Z") if value is not None else None


SIGNED = ("lodged", "checked", "endorsed")


def latest_revision(process, *, reconcile: bool = False):
    """The newest revision whose content has been signed and still stands, or None.

    With `reconcile`, review's own service first replaces signed revisions whose content no
    longer matches the process, so a dossier never presents a superseded revision as current.
    """
    if reconcile:
        revisions_reconcile(process=process)
    return (ProcessRevision.objects.filter(process=process, state__in=SIGNED)
            .order_by("-number", "-pk").first())


def live_content(process) -> dict | None:
    """Review's canonical content of the process as it is now."""
    return revision_content(process)


def approval(process) -> dict | None:
    """Which revision is in force and what is pending (review's `approval_status`)."""
    return approval_status(process)


def revision_info(revision) -> dict:
    state = getattr(revision, "state", "")
    display = getattr(revision, "get_state_display", None)
    return {
        "id": revision.pk,
        "number": revision.number,
        "state": state,
        "state_label": display() if callable(display) else str(state),
        "created_at": _iso(revision.created_at),
        "content_sha256": getattr(revision, "content_sha256", ""),
    }


def risk_acceptances(revision) -> list[dict]:
    """The approver's signed risk acceptances of unmet required measures on `revision`."""
    if revision is None:
        return []
    return [{"printed_name": a.printed_name, "signed_at": _iso(a.signed_at),
             "step": a.step_id, "requirement": a.requirement, "reason": a.reason,
             "content_sha256": a.content_sha256, "seal": a.seal}
            for a in RiskAcceptance.objects.filter(revision=revision).order_by("signed_at", "pk")]


def signatures(revision) -> list[dict]:
    out = []
    rows = list(Signature.objects.filter(revision=revision).order_by("signed_at", "pk"))
    changed = credentials_changed_at(rows)
    for sig in rows:
        meaning = getattr(sig, "get_meaning_display", None)
        out.append({
            "printed_name": sig.printed_name,
            "meaning": sig.meaning,
            "meaning_label": meaning() if callable(meaning) else str(sig.meaning),
            "signed_at": _iso(sig.signed_at),
            "content_sha256": getattr(sig, "content_sha256", ""),
            "seal": getattr(sig, "seal", ""),
            # The signer's password changed shortly before (issue 18 item 2); "" if not.
            "credentials_note": credentials_note(sig, changed[sig.pk])
            if sig.pk in changed else "",
        })
    return out


def findings(process, revision) -> list[dict]:
    rows = Finding.objects.filter(process=process)
    out = []
    for f in rows.select_related("owner").order_by("pk"):
        owner = f.owner
        status = getattr(f, "get_status_display", None)
        kind = getattr(f, "get_kind_display", None)
        out.append({
            "id": f.pk,
            "title": f.title,
            "description": getattr(f, "description", ""),
            "kind": kind() if callable(kind) else str(getattr(f, "kind", "")),
            "owner": (owner.get_full_name() or owner.get_username()) if owner else "",
            "due_date": _iso(getattr(f, "due_date", None)),
            "status": status() if callable(status) else str(getattr(f, "status", "")),
        })
    return out


def last_approved_before(revision) -> dict | None:
    """The newest earlier revision the committee approved (signed with meaning "approved")."""
    return last_approved_before_number(revision.process, revision.number)


def last_approved_before_number(process, number) -> dict | None:
    """The newest approved revision of the process (before revision `number` if given)."""
    rows = ProcessRevision.objects.filter(process=process, signatures__meaning="approved")
    if number is not None:
        rows = rows.filter(number__lt=number)
    prev = rows.order_by("-number").first()
    if prev is None:
        return None
    return {"number": prev.number, "created_at": _iso(prev.created_at),
            "created_at_dt": prev.created_at, "content_sha256": prev.content_sha256}


def history(process, revision, since) -> list[dict]:
    """Every state change of the revisions after the last approved one, up to `revision`."""
    rows = Transition.objects.filter(revision__process=process)
    if revision is not None:
        rows = rows.filter(revision__number__lte=revision.number)
    if since:
        rows = rows.filter(revision__number__gt=since["number"])
    out = []
    for t in rows.select_related("revision", "actor").order_by("at", "pk"):
        who = (t.actor.get_full_name() or t.actor.get_username()) if t.actor else "the system"
        out.append({"at": _iso(t.at),
                    # The states in words (their labels), never the wire values.
                    "what": f"revision {t.revision.number}: "
                            f"{t.get_from_state_display() if t.from_state else 'new'} → "
                            f"{t.get_to_state_display()}",
                    "detail": f"by {who}" + (f": {t.reason}" if t.reason else "")})
    return out


def audit_head_hash() -> str | None:
    return head_hash()


def audit_head() -> dict | None:
    """The chain's keyed head {"seq", "hash", "mac"}: `verify` checks the chain against it."""
    return current_head()
