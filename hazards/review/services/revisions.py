"""Every transition of a process revision, in one module.

Each transition takes the revision's row lock (and the rows of the process it covers),
checks permission and state after the lock, writes a `Transition` row and raises a
`ReviewError` whose message is a constant of `hazards.review.errors`.

    drafting --submit (author signs "authored")--> lodged
    lodged   --review (reviewer signs "reviewed")--> checked
    checked  --approve (approver signs "approved")--> endorsed
    lodged   --approve on the lighter review path (approver signs "approved")--> endorsed
    lodged | checked --send back (reviewer / approver, with a reason)--> sent_back
    lodged | checked --content changed--> replaced (never in force; a new draft opens)
    endorsed --a later revision endorsed--> replaced

An endorsed revision stays in force until a later revision of its process is endorsed
(issue 21 item 2): the plant runs on it while changes to the process collect in the next
draft, which opens on the first change. Only the endorsement of a later revision replaces it,
and the database refuses any other way (`revision_guard_update`).

The lighter review path (issue 10 item 2): a lodged revision that replaces an approved one
may be endorsed without the reviewer's step when its site allows it and every open change
record of the process is within the site's tolerances (`hazards.oversight.changes.light_path`, asked
through `hazards.review.policies`);
the transition row says so and why. Author and approver are still two people.

Leaving a revision by sending it back or replacing it, and a change to the content of the
revision in force, open the next draft of the process.
"""

from __future__ import annotations

from django.db import transaction
from django.db.models import Max

from hazards import trail
from hazards.models import CalorimetryRun, DecompositionTest, Measure, Process, ReactionStep
from hazards.review import errors as E
from hazards.review import policies
from hazards.review.access import roles_on
from hazards.review.content import content_sha256
from hazards.review.content import revision_content as _content
from hazards.review.models import (
    OPEN_STATES,
    SIGNED_STATES,
    UNSETTLED_FINDING,
    Finding,
    FindingKind,
    Meaning,
    ProcessRevision,
    ReviewState,
    Role,
    Signature,
    Transition,
)
from hazards.review.requirements import unmet_requirements
from hazards.review.signing import (
    Reauthentication,
    compute_seal,
    db_clock,
    printed_name,
    reauthenticate,
    seal_payload,
)

REPLACED_BECAUSE_CHANGED = "The content of the process changed after the revision was signed."
REPLACED_BY_LATER = "Revision {number} of the process was approved and is now in force."
OPENED_AFTER = "Opened after revision {number} was {state}."
OPENED_FOR_CHANGES = ("Opened for changes to revision {number}, which stays in force until a "
                      "later revision is approved.")


def revision_content(process: Process) -> dict:
    """The canonical content of the process's current state (what a signature binds)."""
    return _content(process)


class _Stale(Exception):
    pass


def _lock_process_tree(process_id: int) -> None:
    """Lock the process and every record its content is built from, so that no edit can
    commit between reading the content and signing it.

    FOR NO KEY UPDATE: it excludes every other writer of these rows just the same, but not
    the KEY SHARE lock that a concurrent edit's deferred foreign-key checks take on the
    process at COMMIT (the per-process class counts reference it); FOR UPDATE made such an
    edit, holding its step row, and this signing, waiting for that row, a deadlock."""
    list(Process._base_manager.select_for_update(no_key=True).filter(pk=process_id).values_list("pk"))
    steps = list(
        ReactionStep._base_manager.select_for_update(no_key=True).filter(process_id=process_id)
        .order_by("pk").values_list("pk", flat=True)
    )
    list(CalorimetryRun._base_manager.select_for_update(no_key=True).filter(step_id__in=steps)
         .order_by("pk").values_list("pk"))
    list(DecompositionTest._base_manager.select_for_update(no_key=True).filter(step_id__in=steps)
         .order_by("pk").values_list("pk"))
    list(Measure._base_manager.select_for_update(no_key=True).filter(step_id__in=steps)
         .order_by("pk").values_list("pk"))


def _move(revision: ProcessRevision, to_state: str, *, actor, reason: str, at=None,
          signature: Signature | None = None, **fields) -> Transition:
    from_state = revision.state
    if (from_state, to_state) == (ReviewState.ENDORSED, ReviewState.REPLACED) and not (
        Signature.objects.filter(revision__process_id=revision.process_id,
                                 revision__number__gt=revision.number,
                                 meaning=Meaning.APPROVED).exists()):
        raise E.TransitionRefused(E.IN_FORCE_UNTIL_REPLACED)
    ProcessRevision.objects.filter(pk=revision.pk).update(state=to_state, **fields)
    revision.state = to_state
    for name, value in fields.items():
        setattr(revision, name, value)
    return Transition.objects.create(
        revision=revision, from_state=from_state, to_state=to_state, actor=actor,
        reason=reason, at=at or db_clock(), signature=signature,
    )


def _open_next(process_id: int, *, actor, reason: str, content: dict | None = None):
    number = (ProcessRevision.objects.filter(process_id=process_id)
              .aggregate(n=Max("number"))["n"] or 0) + 1
    content = content if content is not None else _content(Process(pk=process_id))
    revision = ProcessRevision.objects.create(
        process_id=process_id, number=number, state=ReviewState.DRAFTING, content=content,
        content_sha256=content_sha256(content), created_by=actor,
    )
    Transition.objects.create(
        revision=revision, from_state="", to_state=ReviewState.DRAFTING, actor=actor,
        reason=reason, at=db_clock(),
    )
    return revision


def revision_open(*, process: Process, user, reason: str = "") -> ProcessRevision:
    """Open the next draft revision of a process (an author's step)."""
    if Role.AUTHOR not in roles_on(user, process.pk):
        raise E.NotPermitted(E.NOT_AN_AUTHOR)
    with transaction.atomic(), trail.scope(reason=reason or "revision opened",
                                                 review_action="open"):
        list(Process._base_manager.select_for_update(no_key=True).filter(pk=process.pk).values_list("pk"))
        if Role.AUTHOR not in roles_on(user, process.pk):
            raise E.NotPermitted(E.NOT_AN_AUTHOR)
        if ProcessRevision.objects.filter(process=process, state__in=OPEN_STATES).exists():
            raise E.TransitionRefused(E.REVISION_IN_PROGRESS)
        return _open_next(process.pk, actor=user, reason=reason or "revision opened")


# The signature each transition adds: meaning -> (role needed, state needed, next state,
# error when the role is missing, error when the state is wrong).
_STEPS = {
    Meaning.AUTHORED: (Role.AUTHOR, ReviewState.DRAFTING, ReviewState.LODGED,
                       E.NOT_AN_AUTHOR, E.NOT_DRAFTING),
    Meaning.REVIEWED: (Role.REVIEWER, ReviewState.LODGED, ReviewState.CHECKED,
                       E.NOT_A_REVIEWER, E.NOT_LODGED),
    Meaning.APPROVED: (Role.APPROVER, ReviewState.CHECKED, ReviewState.ENDORSED,
                       E.NOT_AN_APPROVER, E.NOT_CHECKED),
}


def sign_precheck(*, revision: ProcessRevision, user, meaning: str) -> None:
    """The checks before the password: an unknown meaning, or a role the person lacks (a
    first check without the lock, which spares a wrong password count for a pointless
    attempt; the signing transaction checks again under the lock)."""
    if meaning not in _STEPS:
        raise E.Invalid(E.UNKNOWN_MEANING)
    role, _, _, role_error, _ = _STEPS[meaning]
    if role not in roles_on(user, revision.process_id):
        raise E.NotPermitted(role_error)


def revision_sign(*, revision: ProcessRevision, user, password: str | None, meaning: str,
                  request, reason: str = "",
                  reauthenticated: Reauthentication | None = None) -> Signature:
    """Sign a revision with the given meaning; the signature moves it to its next state.

    `reauthenticated`: the proof `reauthenticate` gave for this person just before (the API
    checks the password before the idempotency key's transaction opens); else the password
    is checked here."""
    sign_precheck(revision=revision, user=user, meaning=meaning)
    role, needed, to_state, role_error, state_error = _STEPS[meaning]
    if not (isinstance(reauthenticated, Reauthentication)
            and reauthenticated.user_pk == user.pk):
        reauthenticate(user=user, password=password, request=request)
    try:
        with transaction.atomic(), trail.scope(
            reason=reason or f"signed: {meaning}", review_action=f"sign:{meaning}"
        ):
            return _sign_locked(revision.pk, user, meaning, role, needed, to_state,
                                role_error, state_error, reason)
    except _Stale:
        revisions_reconcile(process=Process(pk=revision.process_id))
        raise E.TransitionRefused(E.STALE) from None


def _sign_locked(revision_id, user, meaning, role, needed, to_state, role_error, state_error,
                 reason) -> Signature:
    revision = ProcessRevision.objects.select_for_update().get(pk=revision_id)
    _lock_process_tree(revision.process_id)
    if role not in roles_on(user, revision.process_id):
        raise E.NotPermitted(role_error)
    light_candidate = meaning == Meaning.APPROVED and revision.state == ReviewState.LODGED
    if revision.state != needed and not light_candidate:
        raise E.TransitionRefused(state_error)
    if light_candidate:
        # Its content is frozen; a stale one is refused below before anything is signed.
        allowed, light_reason = policies.light_path(revision=revision, content=revision.content, lock=True)
        if light_reason is None:
            raise E.TransitionRefused(E.NOT_WITHIN_LIGHT_PATH if allowed else state_error)
        reason = f"{light_reason} {reason}".strip()
    if revision.signatures.filter(signer=user).exists():
        raise E.NotPermitted(E.SAME_PERSON)
    live = _content(Process(pk=revision.process_id))
    live_hash = content_sha256(live)
    fields = {}
    if meaning == Meaning.AUTHORED:
        if not live["steps"] or any(s["indicators"] is None for s in live["steps"]):
            raise E.TransitionRefused(E.NO_STEPS)
        fields = {"content": live, "content_sha256": live_hash}
    elif live_hash != revision.content_sha256:
        raise _Stale()
    if meaning == Meaning.APPROVED and Finding.objects.filter(
        process_id=revision.process_id, kind=FindingKind.BLOCKING, status__in=UNSETTLED_FINDING
    ).exists():
        raise E.TransitionRefused(E.OPEN_BLOCKING_FINDINGS)
    if meaning == Meaning.APPROVED:
        refuse_unmet_measures(revision)

    signed_at = db_clock()
    if fields:
        ProcessRevision.objects.filter(pk=revision.pk).update(**fields)
        revision.content, revision.content_sha256 = live, live_hash
    name = printed_name(user)
    signature = Signature.objects.create(
        revision=revision, signer=user, printed_name=name, meaning=meaning,
        signed_at=signed_at, content_sha256=revision.content_sha256,
        seal=compute_seal(seal_payload(
            revision=revision, signer=user, printed_name=name, meaning=meaning,
            signed_at=signed_at, content_sha256=revision.content_sha256,
        )),
    )
    if meaning == Meaning.APPROVED:
        # After the approval exists (the database admits the replacement only then) and
        # before this revision takes its place (one endorsed revision per process).
        for earlier in ProcessRevision.objects.select_for_update().filter(
            process_id=revision.process_id, state=ReviewState.ENDORSED
        ).exclude(pk=revision.pk):
            _move(earlier, ReviewState.REPLACED, actor=None, at=signed_at,
                  reason=REPLACED_BY_LATER.format(number=revision.number))
    _move(revision, to_state, actor=user, reason=reason, at=signed_at, signature=signature)
    if meaning == Meaning.APPROVED:
        for step in revision.content["steps"]:
            indicators = step["indicators"] or {}
            ReactionStep._base_manager.filter(pk=step["id"]).update(
                approved_inputs_hash=indicators.get("inputs_hash", ""), needs_review=False
            )
    return signature


def refuse_unmet_measures(revision: ProcessRevision) -> None:
    """Refuse an endorsement while a required measure is missing or not in its status,
    unless a risk acceptance signed on this revision covers it."""
    site_id = Process._base_manager.filter(pk=revision.process_id).values_list(
        "site_id", flat=True).get()
    open_items = [u for u in unmet_requirements(content=revision.content, site_id=site_id,
                                                revision_id=revision.pk)
                  if u["accepted"] is None]
    if open_items:
        items = "; ".join(f"step {u['step_name'] or u['step']}: {u['text']} ({u['reason']})"
                          for u in open_items)
        raise E.TransitionRefused(E.REQUIRED_MEASURES_MISSING.format(items=items))


def revision_submit(*, revision, user, password, request, reason: str = "") -> Signature:
    """The author signs the draft ("authored"); its content is frozen and lodged for review."""
    return revision_sign(revision=revision, user=user, password=password,
                         meaning=Meaning.AUTHORED, request=request, reason=reason)


def revision_review(*, revision, user, password, request, reason: str = "") -> Signature:
    """A reviewer signs a lodged revision ("reviewed")."""
    return revision_sign(revision=revision, user=user, password=password,
                         meaning=Meaning.REVIEWED, request=request, reason=reason)


def revision_approve(*, revision, user, password, request, reason: str = "") -> Signature:
    """An approver endorses a checked revision ("approved"); its steps count as approved."""
    return revision_sign(revision=revision, user=user, password=password,
                         meaning=Meaning.APPROVED, request=request, reason=reason)


def revision_send_back(*, revision: ProcessRevision, user, reason: str) -> ProcessRevision:
    """A reviewer or approver returns a revision to its author; returns the new draft."""
    if not (reason or "").strip():
        raise E.Invalid(E.REASON_REQUIRED)
    with transaction.atomic(), trail.scope(reason=reason, review_action="send_back"):
        revision = ProcessRevision.objects.select_for_update().get(pk=revision.pk)
        roles = roles_on(user, revision.process_id)
        allowed = {ReviewState.LODGED: {Role.REVIEWER, Role.APPROVER},
                   ReviewState.CHECKED: {Role.APPROVER}}
        if not roles & {Role.REVIEWER, Role.APPROVER}:
            raise E.NotPermitted(E.CANNOT_SEND_BACK)
        if revision.state not in allowed:
            raise E.TransitionRefused(E.NOT_UNDER_REVIEW)
        if not roles & allowed[revision.state]:
            raise E.NotPermitted(E.CANNOT_SEND_BACK)
        _move(revision, ReviewState.SENT_BACK, actor=user, reason=reason)
        return _open_next(
            revision.process_id, actor=None,
            reason=OPENED_AFTER.format(number=revision.number, state="sent back"),
        )


def revisions_reconcile(*, process: Process, reason: str = "") -> list[ProcessRevision]:
    """Bring the revisions of a process in line with its content: a lodged or checked
    revision whose content no longer matches is replaced (it was never in force); the
    endorsed revision stays in force whatever changes; an open draft takes the new content,
    and a draft opens when the content differs from the signed revisions and none is open.
    Returns the revisions replaced."""
    with transaction.atomic(), trail.scope(
        reason=reason or REPLACED_BECAUSE_CHANGED, review_action="reconcile"
    ):
        revisions = list(
            ProcessRevision.objects.select_for_update()
            .filter(process_id=process.pk,
                    state__in=[*SIGNED_STATES, ReviewState.DRAFTING])
            .order_by("number")
        )
        if not revisions:
            return []
        live = _content(Process(pk=process.pk))
        live_hash = content_sha256(live)
        replaced, in_force, differs = [], None, False
        for revision in revisions:
            if revision.state == ReviewState.ENDORSED:
                in_force = revision
            if revision.content_sha256 == live_hash:
                continue
            if revision.state == ReviewState.DRAFTING:
                ProcessRevision.objects.filter(pk=revision.pk).update(
                    content=live, content_sha256=live_hash
                )
                continue
            if revision.state == ReviewState.ENDORSED:
                differs = True
                continue
            _move(revision, ReviewState.REPLACED, actor=None,
                  reason=reason or REPLACED_BECAUSE_CHANGED)
            replaced.append(revision)
        if (replaced or differs) and not ProcessRevision.objects.filter(
            process_id=process.pk, state__in=OPEN_STATES
        ).exists():
            opened = (OPENED_AFTER.format(number=replaced[-1].number, state="replaced")
                      if replaced else OPENED_FOR_CHANGES.format(number=in_force.number))
            _open_next(process.pk, actor=None, content=live, reason=opened)
        return replaced


def current_revision(process: Process) -> ProcessRevision | None:
    """The open revision of a process, else its endorsed one, after reconciling."""
    revisions_reconcile(process=process)
    return (
        ProcessRevision.objects.filter(process=process, state__in=OPEN_STATES).first()
        or ProcessRevision.objects.filter(process=process, state=ReviewState.ENDORSED).first()
    )
