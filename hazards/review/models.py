"""Roles per process, revisions under review, their signatures, findings and the audit chain.

A revision freezes the canonical content of a process (every input and every current indicator
snapshot) when its author signs it. From then on its content is read-only in the database;
only the state column moves, and only along the transitions listed in `ALLOWED_TRANSITIONS`.
Signatures, transition rows and chain links are append-only.
"""

from __future__ import annotations

import pgtrigger
from django.conf import settings
from django.db import models
from django.db.models import Q
from django.db.models.functions import Now

from hazards.models.base import tracked


class Role(models.TextChoices):
    AUTHOR = "author", "Author (chemist who submits the data)"
    REVIEWER = "reviewer", "Reviewer (process safety)"
    APPROVER = "approver", "Approver (safety committee)"
    AUDITOR = "auditor", "Auditor (read only)"


class ReviewState(models.TextChoices):
    DRAFTING = "drafting", "Being drafted"
    LODGED = "lodged", "Lodged for review (signed by its author)"
    CHECKED = "checked", "Checked by process safety"
    # Wire value "endorsed" (a contract of the API and the records); its words are "approved".
    ENDORSED = "endorsed", "Approved by the safety committee"
    SENT_BACK = "sent_back", "Sent back to the author"
    REPLACED = "replaced", ("Replaced (a later revision was approved, or it changed before "
                            "approval)")


class Meaning(models.TextChoices):
    AUTHORED = "authored", "Authored: I submit these data as correct and complete"
    REVIEWED = "reviewed", "Reviewed: I checked the assessment for process safety"
    APPROVED = "approved", "Approved: the committee accepts the assessment"


# The revision states whose content has been signed (and is therefore frozen).
SIGNED_STATES = (ReviewState.LODGED, ReviewState.CHECKED, ReviewState.ENDORSED)
# States in which a revision is still being worked on; a process has at most one.
OPEN_STATES = (ReviewState.DRAFTING, ReviewState.LODGED, ReviewState.CHECKED)
ALLOWED_TRANSITIONS = (
    (ReviewState.DRAFTING, ReviewState.LODGED),
    (ReviewState.LODGED, ReviewState.CHECKED),
    (ReviewState.CHECKED, ReviewState.ENDORSED),
    # The lighter review path: only with an "approved" and no "reviewed" signature (see
    # `revision_guard_update`), which `signature_in_order` admits only on the light path.
    (ReviewState.LODGED, ReviewState.ENDORSED),
    (ReviewState.LODGED, ReviewState.SENT_BACK),
    (ReviewState.CHECKED, ReviewState.SENT_BACK),
    (ReviewState.LODGED, ReviewState.REPLACED),
    (ReviewState.CHECKED, ReviewState.REPLACED),
    # Only when a later revision of the process carries an approval (see
    # `revision_guard_update`): an endorsed revision stays in force until then.
    (ReviewState.ENDORSED, ReviewState.REPLACED),
    # A draft nobody signed is closed when the process moves on without it.
    (ReviewState.DRAFTING, ReviewState.REPLACED),
)
# The order of signatures on one revision.
SIGNATURE_ORDER = (Meaning.AUTHORED, Meaning.REVIEWED, Meaning.APPROVED)


def _pairs_sql() -> str:
    return ", ".join(f"('{a.value}', '{b.value}')" for a, b in ALLOWED_TRANSITIONS)


def _append_only(name: str):
    return pgtrigger.Protect(name=name, operation=pgtrigger.Update | pgtrigger.Delete)


@tracked(scope=("process",))
class ProcessRole(models.Model):
    """A person's role on one process; the only thing that grants access to it."""

    process = models.ForeignKey("hazards.Process", on_delete=models.CASCADE, related_name="roles")
    # Indexed by `role_of_person_idx` below, whose first column it is.
    user = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="process_roles",
        db_index=False,
    )
    role = models.CharField(max_length=10, choices=Role.choices)
    granted_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, blank=True,
        related_name="+",
    )
    granted_at = models.DateTimeField(db_default=Now())

    class Meta:
        ordering = ["process_id", "role", "user_id"]
        constraints = [
            models.UniqueConstraint(fields=["process", "user", "role"], name="role_once_per_person"),
        ]
        # A person's processes (every visibility check), of one role, or whether they hold
        # a role anywhere: read from this index alone, however many processes the site has.
        indexes = [models.Index(fields=["user", "role", "process"], name="role_of_person_idx")]

    def __str__(self) -> str:
        return f"{self.user} is {self.role} of process {self.process_id}"


class ProcessListState(models.Model):
    """The review state a process list shows and sorts by (the open revision's, else the
    newest revision's; null before the first revision) beside the process's name, kept by
    triggers in the transaction of the revision or name change (migration
    review.0012_process_list_state), so that the list sorted or filtered by state reads one
    index of (state, name, process) instead of working out every process's state and
    sorting them all. Derived data: not in the audit trail (the revisions and the process
    are)."""

    process = models.OneToOneField(
        "hazards.Process", on_delete=models.CASCADE, primary_key=True, related_name="list_state"
    )
    # NULL, not "": no revision yet, as the state the lists filter ("none") and sort first.
    review_state = models.CharField(  # noqa: DJ001
        max_length=10, choices=ReviewState.choices, null=True
    )
    name = models.CharField(max_length=200)

    class Meta:
        indexes = [
            models.Index(
                models.F("review_state").asc(nulls_first=True), "name", "process",
                name="process_state_name_idx",
            )
        ]

    def __str__(self) -> str:
        return f"{self.name}: {self.review_state or 'no revision'}"


@tracked(scope=("process",))
class ProcessRevision(models.Model):
    """One numbered revision of a process: the canonical content that was (or will be) signed."""

    process = models.ForeignKey(
        "hazards.Process", on_delete=models.PROTECT, related_name="revisions"
    )
    number = models.PositiveIntegerField()
    state = models.CharField(
        max_length=10, choices=ReviewState.choices, default=ReviewState.DRAFTING
    )
    content = models.JSONField(default=dict)
    content_sha256 = models.CharField(max_length=64, blank=True)
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, blank=True,
        related_name="+",
    )
    created_at = models.DateTimeField(db_default=Now())

    class Meta:
        ordering = ["process_id", "number"]
        constraints = [
            models.UniqueConstraint(fields=["process", "number"], name="revision_number_unique"),
            models.UniqueConstraint(
                fields=["process"],
                condition=models.Q(state__in=[s.value for s in OPEN_STATES]),
                name="revision_one_open_per_process",
            ),
            models.UniqueConstraint(
                fields=["process"],
                condition=models.Q(state=ReviewState.ENDORSED),
                name="revision_one_endorsed_per_process",
            ),
        ]
        triggers = [
            pgtrigger.Protect(name="revision_never_deleted", operation=pgtrigger.Delete),
            pgtrigger.Trigger(
                name="revision_guard_update",
                when=pgtrigger.Before,
                operation=pgtrigger.Update,
                func=f"""
                    IF NEW.process_id IS DISTINCT FROM OLD.process_id
                       OR NEW.number IS DISTINCT FROM OLD.number
                       OR NEW.created_at IS DISTINCT FROM OLD.created_at
                       OR NEW.created_by_id IS DISTINCT FROM OLD.created_by_id THEN
                        RAISE EXCEPTION 'review: revision % keeps its identity', OLD.id;
                    END IF;
                    IF OLD.state <> 'drafting'
                       AND (NEW.content IS DISTINCT FROM OLD.content
                            OR NEW.content_sha256 IS DISTINCT FROM OLD.content_sha256) THEN
                        RAISE EXCEPTION 'review: revision % is signed; its content is frozen',
                            OLD.id;
                    END IF;
                    IF NEW.state IS DISTINCT FROM OLD.state
                       AND (OLD.state, NEW.state) NOT IN ({_pairs_sql()}) THEN
                        RAISE EXCEPTION 'review: revision % cannot move from % to %',
                            OLD.id, OLD.state, NEW.state;
                    END IF;
                    IF OLD.state = 'lodged' AND NEW.state = 'endorsed' AND (
                        NOT EXISTS (SELECT 1 FROM review_signature
                                     WHERE revision_id = OLD.id AND meaning = 'approved')
                        OR EXISTS (SELECT 1 FROM review_signature
                                    WHERE revision_id = OLD.id AND meaning = 'reviewed')) THEN
                        RAISE EXCEPTION
                            'review: revision % is endorsed from lodged only on the light path',
                            OLD.id;
                    END IF;
                    IF OLD.state = 'endorsed' AND NEW.state = 'replaced' AND NOT EXISTS (
                        SELECT 1 FROM review_processrevision r
                          JOIN review_signature s ON s.revision_id = r.id
                         WHERE r.process_id = OLD.process_id AND r.number > OLD.number
                           AND s.meaning = 'approved') THEN
                        RAISE EXCEPTION
                            'review: revision % stays in force until a later one is endorsed',
                            OLD.id;
                    END IF;
                    RETURN NEW;
                """,
            ),
        ]

    def __str__(self) -> str:
        return f"process {self.process_id} revision {self.number} ({self.state})"


@tracked()
class Signature(models.Model):
    """An electronic signature: who (as printed then), when (database clock), what it means,
    and the SHA-256 of exactly what was signed, sealed with a key kept outside the database."""

    revision = models.ForeignKey(
        ProcessRevision, on_delete=models.PROTECT, related_name="signatures"
    )
    signer = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="review_signatures"
    )
    printed_name = models.CharField(max_length=300)
    meaning = models.CharField(max_length=10, choices=Meaning.choices)
    signed_at = models.DateTimeField()
    content_sha256 = models.CharField(max_length=64)
    seal = models.CharField(max_length=64)

    class Meta:
        ordering = ["revision_id", "signed_at", "id"]
        constraints = [
            models.UniqueConstraint(fields=["revision", "meaning"], name="signature_once_per_meaning"),
            models.UniqueConstraint(fields=["revision", "signer"], name="signature_once_per_person"),
        ]
        triggers = [
            _append_only("signature_append_only"),
            pgtrigger.Trigger(
                name="signature_in_order",
                when=pgtrigger.Before,
                operation=pgtrigger.Insert,
                declare=[("expected", "text"), ("signed", "text")],
                # "approved" straight after "authored" only on the lighter review path: the
                # revision is lodged, its site allows the path, and its process has open
                # change records, all light and none changing the class.
                func="""
                    SELECT CASE count(*) WHEN 0 THEN 'authored' WHEN 1 THEN 'reviewed'
                                         WHEN 2 THEN 'approved' END
                      INTO expected
                      FROM review_signature WHERE revision_id = NEW.revision_id;
                    IF expected = 'reviewed' AND NEW.meaning = 'approved'
                       AND EXISTS (
                           SELECT 1 FROM review_processrevision r
                             JOIN hazards_process p ON p.id = r.process_id
                             JOIN oversight_changepolicy cp ON cp.site_id = p.site_id
                            WHERE r.id = NEW.revision_id AND r.state = 'lodged'
                              AND cp.light_review_allowed)
                       AND EXISTS (
                           SELECT 1 FROM oversight_changerecord c
                             JOIN review_processrevision r ON r.process_id = c.process_id
                            WHERE r.id = NEW.revision_id AND c.state = 'open')
                       AND NOT EXISTS (
                           SELECT 1 FROM oversight_changerecord c
                             JOIN review_processrevision r ON r.process_id = c.process_id
                            WHERE r.id = NEW.revision_id AND c.state = 'open'
                              AND (c.review_path <> 'light' OR c.class_changed)) THEN
                        expected := 'approved';
                    END IF;
                    IF NEW.meaning IS DISTINCT FROM expected THEN
                        RAISE EXCEPTION 'review: revision % expects a signature meaning %',
                            NEW.revision_id, coalesce(expected, 'nothing more');
                    END IF;
                    SELECT content_sha256 INTO signed FROM review_processrevision
                     WHERE id = NEW.revision_id;
                    IF signed IS DISTINCT FROM NEW.content_sha256 THEN
                        RAISE EXCEPTION 'review: a signature must bind the revision content';
                    END IF;
                    RETURN NEW;
                """,
            ),
        ]

    def __str__(self) -> str:
        return f"{self.meaning} by {self.printed_name} at {self.signed_at:%Y-%m-%d %H:%M:%S}Z"


@tracked()
class Transition(models.Model):
    """One move of a revision from one state to another: who, when, why."""

    revision = models.ForeignKey(
        ProcessRevision, on_delete=models.PROTECT, related_name="transitions"
    )
    from_state = models.CharField(max_length=10, choices=ReviewState.choices, blank=True)
    to_state = models.CharField(max_length=10, choices=ReviewState.choices)
    # Null when the application itself moved the revision (its content changed).
    actor = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, null=True, blank=True,
        related_name="+",
    )
    reason = models.TextField(blank=True)
    at = models.DateTimeField()
    signature = models.OneToOneField(
        Signature, on_delete=models.PROTECT, null=True, blank=True, related_name="transition"
    )

    class Meta:
        ordering = ["revision_id", "at", "id"]
        triggers = [_append_only("transition_append_only")]

    def __str__(self) -> str:
        return f"revision {self.revision_id}: {self.from_state or '-'} -> {self.to_state}"


class FindingKind(models.TextChoices):
    BLOCKING = "blocking", "Blocking (no approval while open)"
    ADVISORY = "advisory", "Advisory"


class FindingStatus(models.TextChoices):
    OPEN = "open", "Open"
    READY_FOR_CHECK = "ready_for_check", "Ready for check (the owner reports it done)"
    RESOLVED = "resolved", "Resolved"
    WITHDRAWN = "withdrawn", "Withdrawn"


# A finding in these states is not settled: a blocking one still bars endorsement.
UNSETTLED_FINDING = (FindingStatus.OPEN, FindingStatus.READY_FOR_CHECK)


@tracked(scope=("process",))
class Finding(models.Model):
    """A finding of a reviewer or approver, with an action owner and a due date."""

    process = models.ForeignKey(
        "hazards.Process", on_delete=models.PROTECT, related_name="findings"
    )
    revision = models.ForeignKey(
        ProcessRevision, on_delete=models.PROTECT, null=True, blank=True, related_name="findings"
    )
    title = models.CharField(max_length=200)
    description = models.TextField(blank=True)
    kind = models.CharField(max_length=10, choices=FindingKind.choices)
    owner = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="owned_findings"
    )
    due_date = models.DateField()
    status = models.CharField(
        max_length=20, choices=FindingStatus.choices, default=FindingStatus.OPEN
    )
    raised_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+"
    )
    created_at = models.DateTimeField(db_default=Now())

    class Meta:
        ordering = ["process_id", "due_date", "id"]

    def __str__(self) -> str:
        return f"{self.kind} finding: {self.title}"


@tracked()
class RiskAcceptance(models.Model):
    """An approver's signed acceptance that a revision is endorsed although a required
    measure of one of its steps is missing or not in the required status (issue 17).

    Signed like a signature (password re-entered, database clock, seal over what it binds,
    including the revision's content hash); append-only; printed on the dossier cover."""

    revision = models.ForeignKey(
        ProcessRevision, on_delete=models.PROTECT, related_name="risk_acceptances"
    )
    step = models.ForeignKey(
        "hazards.ReactionStep", on_delete=models.PROTECT, related_name="risk_acceptances"
    )
    # The requirement accepted as unmet, as the rule states it (its key and its words).
    requirement_key = models.CharField(max_length=300)
    requirement = models.CharField(max_length=600)
    reason = models.TextField(max_length=4000)
    signer = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+"
    )
    printed_name = models.CharField(max_length=300)
    signed_at = models.DateTimeField()
    content_sha256 = models.CharField(max_length=64)
    seal = models.CharField(max_length=64)

    class Meta:
        ordering = ["revision_id", "signed_at", "id"]
        constraints = [
            models.UniqueConstraint(fields=["revision", "step", "requirement_key"],
                                    name="risk_acceptance_once_per_requirement"),
            models.CheckConstraint(condition=~Q(reason=""), name="risk_acceptance_has_reason",
                                   violation_error_message="A risk acceptance needs a reason."),
        ]
        triggers = [_append_only("risk_acceptance_append_only")]

    def __str__(self) -> str:
        return f"risk accepted by {self.printed_name}: {self.requirement}"


@tracked()
class FindingNote(models.Model):
    """A progress note on a finding (usually its owner's); the raiser's text stays as raised."""

    finding = models.ForeignKey(Finding, on_delete=models.PROTECT, related_name="notes")
    author = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+"
    )
    text = models.TextField(max_length=4000)
    created_at = models.DateTimeField(db_default=Now())

    class Meta:
        ordering = ["finding_id", "created_at", "id"]
        triggers = [_append_only("finding_note_append_only")]

    def __str__(self) -> str:
        return f"note on finding {self.finding_id}"


class ChainLink(models.Model):
    """One link of the hash chain over every audit event, appended by a database trigger at
    the COMMIT of the event's transaction (`hazards/review/chain_sql.py`).

    hash = sha256(prev_hash || payload_sha256), where payload_sha256 is the SHA-256 of the
    event table's name and the event row's JSON. Appends are serialised by an advisory lock.
    """

    seq = models.BigAutoField(primary_key=True)
    event_table = models.CharField(max_length=120)
    event_id = models.BigIntegerField()
    payload_sha256 = models.CharField(max_length=64)
    prev_hash = models.CharField(max_length=64)
    hash = models.CharField(max_length=64)
    linked_at = models.DateTimeField(db_default=Now())

    class Meta:
        ordering = ["seq"]
        constraints = [
            models.UniqueConstraint(fields=["event_table", "event_id"], name="chain_one_link_per_event"),
        ]
        triggers = [_append_only("chain_append_only")]

    def __str__(self) -> str:
        return f"link {self.seq} {self.hash[:12]}…"


class ChainPending(models.Model):
    """An event of a committing transaction, staged for its link (filled and emptied by the
    chain's commit triggers inside that one transaction; a committed row was never linked)."""

    id = models.BigAutoField(primary_key=True)
    txid = models.BigIntegerField(db_index=True)
    event_table = models.CharField(max_length=120)
    event_id = models.BigIntegerField()
    payload_sha256 = models.CharField(max_length=64)

    def __str__(self) -> str:
        return f"{self.event_table} event {self.event_id} awaiting its link"


@tracked()
class SigningLockout(models.Model):
    """Failed password re-entries at signing, per person; too many lock signing for a while."""

    user = models.OneToOneField(
        settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="signing_lockout"
    )
    failures = models.PositiveIntegerField(default=0)
    last_failure_at = models.DateTimeField(null=True, blank=True)
    locked_until = models.DateTimeField(null=True, blank=True)

    def __str__(self) -> str:
        return f"{self.user}: {self.failures} failures"
