"""Errors of the review workflow; their messages are constants that tests assert on."""

from __future__ import annotations

# Permission
NOT_AN_AUTHOR = "Only an author of this process can do this."
NOT_A_REVIEWER = "Only a reviewer of this process can check a lodged revision."
NOT_AN_APPROVER = "Only an approver of this process can approve a checked revision."
CANNOT_SEND_BACK = "Only a reviewer (lodged) or an approver (lodged or checked) can send a revision back."
CANNOT_RAISE_FINDING = "Only a reviewer or an approver of this process can record findings."
CANNOT_CHANGE_FINDING = "Only a reviewer or approver of the process, or the finding's owner, can change it."
OWNER_HAS_NO_ROLE = "The owner of a finding must hold a role on the process."
ONLY_CHECKER_SETTLES = ("Only the person who raised a finding, or a reviewer or approver of the "
                        "process who does not own it, can resolve, withdraw, reopen or reshape "
                        "it; the owner adds notes and marks it ready for check.")
RAISERS_TEXT = ("The title and description are the words of the person who raised the "
                "finding; only they can correct them (every version stays in the history). "
                "Add a note instead.")
CANNOT_NOTE_FINDING = "Only the finding's owner, its raiser, or a reviewer or approver can add notes."
NOTE_REQUIRED = "A note is required."
ONLY_ADMINISTRATORS = "Only administrators manage roles."
NO_SELF_GRANT = "Administrators cannot grant roles to themselves."
TOKEN_CANNOT_SIGN = "Requests authenticated by an API token can never sign; sign in with a session."
SERVICE_ACCOUNT_CANNOT_SIGN = "Service accounts can never sign."
SAME_PERSON = "The author, reviewer and approver of one revision must be three different people."

# Signing
PASSWORD_REQUIRED = "Re-enter your password to sign."
WRONG_PASSWORD = "The password is not correct; nothing was signed."
SIGNING_LOCKED = "Too many wrong passwords; signing is locked for 15 minutes."
UNKNOWN_MEANING = "The meaning of a signature is authored, reviewed or approved."

# State
NOT_DRAFTING = "Only a revision being drafted can be lodged."
NOT_LODGED = "Only a lodged revision can be checked."
NOT_CHECKED = "Only a checked revision can be approved."
NOT_WITHIN_LIGHT_PATH = ("Only a checked revision can be approved: the lighter review path "
                         "(no reviewer step) needs every open change of the process within "
                         "the site's tolerances and the same criticality class.")
NOT_UNDER_REVIEW = "Only a lodged or checked revision can be sent back."
REVISION_IN_PROGRESS = "The process already has a revision in progress."
NO_STEPS = "A revision needs at least one reaction step with current indicators."
STALE = "The process changed after this revision was lodged; it has been replaced by a new draft."
REQUIRED_MEASURES_MISSING = ("Required protective measures are missing or not in the required "
                             "status; record them, or the approver records a signed risk "
                             "acceptance for each: {items}")
NOT_AN_UNMET_REQUIREMENT = ("Only a requirement this revision does not meet can be accepted as "
                            "a risk.")
NOT_BEFORE_ENDORSEMENT = "A risk acceptance is recorded on a lodged or checked revision."
ALREADY_ACCEPTED = "This requirement of the step is already accepted on this revision."
OPEN_BLOCKING_FINDINGS = "Blocking findings are still open; close them before the approval."
REASON_REQUIRED = "A reason is required."
IN_FORCE_UNTIL_REPLACED = ("An approved revision stays in force until a later revision of its "
                           "process is approved.")
FINDING_FROZEN = "A resolved or withdrawn finding is not changed again."
NOT_OPEN_FINDING = "Only an open finding can be marked ready for check."
NOT_READY_FINDING = "Only a finding marked ready for check can be reopened."


class ReviewError(Exception):
    """A refused workflow step; `status` is the HTTP status the API answers with."""

    status = 409

    def __init__(self, message: str, *, status: int | None = None):
        super().__init__(message)
        self.message = message
        if status is not None:
            self.status = status


class NotPermitted(ReviewError):
    status = 403


class SignatureRefused(ReviewError):
    status = 403


class Locked(ReviewError):
    status = 429


class TransitionRefused(ReviewError):
    status = 409


class Invalid(ReviewError):
    status = 400
