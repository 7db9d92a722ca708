"""Re-authentication at every signature, lockout after repeated failures, and the seal."""

from __future__ import annotations

import datetime as dt
import hashlib
import hmac
import logging

from django.conf import settings
from django.contrib.auth import authenticate
from django.db import connection, transaction

from hazards.models import ApiToken
from hazards.review.access import is_service_account
from hazards.review.errors import (
    PASSWORD_REQUIRED,
    SERVICE_ACCOUNT_CANNOT_SIGN,
    SIGNING_LOCKED,
    TOKEN_CANNOT_SIGN,
    WRONG_PASSWORD,
    Locked,
    NotPermitted,
    SignatureRefused,
)
from hazards.review.models import SigningLockout
from hazards.services.indicators import canonical_json

log = logging.getLogger("hazards.review.signing")

MAX_FAILURES = 5
LOCK_MINUTES = 15


def db_clock() -> dt.datetime:
    """The database's clock, in UTC.

    `clock_timestamp()` rather than `now()`: a signer may have waited for the row lock, and
    the transaction's start time would then date the signature before the one it follows.
    """
    with connection.cursor() as cursor:
        cursor.execute("SELECT clock_timestamp()")
        (now,) = cursor.fetchone()
    return now.astimezone(dt.UTC)


def iso(moment: dt.datetime) -> str:
    return moment.astimezone(dt.UTC).isoformat().replace("+00:00", "Z")


def seal_payload(*, revision, signer, printed_name: str, meaning: str, signed_at,
                 content_sha256: str) -> str:
    return canonical_json({
        "revision": revision.pk,
        "process": revision.process_id,
        "number": revision.number,
        "signer": signer.pk,
        "username": signer.get_username(),
        "printed_name": printed_name,
        "meaning": meaning,
        "signed_at": iso(signed_at),
        "content_sha256": content_sha256,
    })


def compute_seal(payload: str) -> str:
    key = settings.SIGNATURE_SEAL_KEY.encode("utf-8")
    return hmac.new(key, payload.encode("utf-8"), hashlib.sha256).hexdigest()


def seal_of(signature) -> str:
    """The seal a signature row should carry, recomputed from its stored fields."""
    return compute_seal(
        seal_payload(
            revision=signature.revision, signer=signature.signer,
            printed_name=signature.printed_name, meaning=signature.meaning,
            signed_at=signature.signed_at, content_sha256=signature.content_sha256,
        )
    )


def seal_verifies(signature) -> bool:
    return hmac.compare_digest(seal_of(signature), signature.seal)


def acceptance_payload(a) -> str:
    return canonical_json({
        "risk_acceptance_of_revision": a.revision_id,
        "step": a.step_id,
        "requirement_key": a.requirement_key,
        "requirement": a.requirement,
        "reason": a.reason,
        "signer": a.signer_id,
        "printed_name": a.printed_name,
        "signed_at": iso(a.signed_at),
        "content_sha256": a.content_sha256,
    })


def acceptance_seal_verifies(a) -> bool:
    return hmac.compare_digest(compute_seal(acceptance_payload(a)), a.seal)


def printed_name(user) -> str:
    return (user.get_full_name() or "").strip() or user.get_username()


class Reauthentication:
    """Proof that `reauthenticate` accepted this person's password just now (only it makes
    one), so that an API signature can check the password before its transaction opens."""

    __slots__ = ("user_pk",)
    _issuer = object()

    def __init__(self, user_pk: int, issuer: object):
        if issuer is not Reauthentication._issuer:
            raise TypeError("only reauthenticate() issues a Reauthentication")
        self.user_pk = user_pk


def reauthenticate(*, user, password: str | None, request) -> Reauthentication:
    """Refuse anything but the signer's own password, typed now, through a session.

    The lockout is checked and counted under the lockout row's lock, with the password check
    inside: concurrent attempts queue, so no burst of them gets more than MAX_FAILURES
    guesses (the probe raced past the limit when the check ran before the lock). Runs in its
    own transaction before the signing one opens, so a failure stays counted though nothing
    else of the attempt is kept.
    """
    if getattr(request, "auth", None) is not None and isinstance(request.auth, ApiToken):
        raise NotPermitted(TOKEN_CANNOT_SIGN)
    if is_service_account(user):
        raise NotPermitted(SERVICE_ACCOUNT_CANNOT_SIGN)
    if not password:
        raise SignatureRefused(PASSWORD_REQUIRED, status=400)
    http_request = getattr(request, "_request", request)
    with transaction.atomic():
        row, _ = SigningLockout.objects.select_for_update().get_or_create(user=user)
        now = db_clock()
        if row.locked_until and row.locked_until > now:
            raise Locked(SIGNING_LOCKED)
        who = authenticate(request=http_request, username=user.get_username(),
                           password=password)
        accepted = who is not None and who.pk == user.pk
        if not accepted:
            row.failures += 1
            row.last_failure_at = now
            if row.failures >= MAX_FAILURES:
                row.locked_until = now + dt.timedelta(minutes=LOCK_MINUTES)
                row.failures = 0
                log.warning("signing locked for user %s after %d wrong passwords",
                            user.pk, MAX_FAILURES)
            row.save()
        elif row.failures:
            row.failures = 0
            row.save(update_fields=["failures"])
    if not accepted:
        log.warning("wrong password at signing by user %s", user.pk)
        raise SignatureRefused(WRONG_PASSWORD)
    return Reauthentication(user.pk, Reauthentication._issuer)
