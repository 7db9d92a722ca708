"""What the daily refresh does (the `oversight_refresh` command and the `refresh_daily`
task run the same function; running it twice sends nothing twice)."""

from __future__ import annotations

import datetime as dt

from django.utils import timezone

from hazards.oversight import notify, revalidation
from hazards.oversight.models import Kind, Notification, NotificationPreference

RETRY_UNSENT_DAYS = 7


def retry_unsent(*, now=None) -> int:
    """E-mail rows whose sending failed earlier (never the same row twice)."""
    now = now or timezone.now()
    ids = Notification.objects.filter(
        email_wanted=True, emailed_at__isnull=True,
        created_at__gte=now - dt.timedelta(days=RETRY_UNSENT_DAYS),
    ).exclude(recipient__email="").values_list("pk", flat=True)
    return notify.send_emails(list(ids))


def refresh_and_remind(*, on: dt.date | None = None) -> dict:
    on = on or revalidation.today()
    result = {"on": on.isoformat(), **revalidation.refresh_schedules()}
    result.update(notify.remind(on=on))
    result["retried"] = retry_unsent()
    return result


def preferences_of(user) -> list[dict]:
    """Every kind with this person's choice (both channels on unless turned off)."""
    saved = {p.kind: p for p in NotificationPreference.objects.filter(user=user)}
    return [{"kind": kind.value, "label": kind.label,
             "email": saved[kind].email if kind in saved else True,
             "inbox": saved[kind].inbox if kind in saved else True} for kind in Kind]


def preference_set(*, user, kind: str, email: bool, inbox: bool):
    if kind not in Kind.values:
        raise ValueError(f"unknown notification kind {kind!r}")
    pref, _ = NotificationPreference.objects.update_or_create(
        user=user, kind=kind, defaults={"email": email, "inbox": inbox})
    return pref


def notifications_mark_read(*, user, ids=None) -> int:
    """Mark the person's own notifications read (all unread ones when `ids` is None)."""
    qs = Notification.objects.filter(recipient=user, read_at__isnull=True)
    if ids is not None:
        qs = qs.filter(pk__in=list(ids))
    return qs.update(read_at=timezone.now())


def inbox_of(user):
    return Notification.objects.filter(recipient=user, in_inbox=True)


def notifications_settle(*, kinds, object_keys, using: str = "default") -> int:
    """Mark read every unread notification of `kinds` about `object_keys`: the act they asked
    for is done (a revision signed or sent back, a finding handed over for check or settled,
    a measure proven, a later revision approved), so nobody is left asked to do it.

    Runs in the act's own transaction (the hooks call it from the act's saves), so the
    notification's trail event carries that act's context; only the notifications of these
    keys change, every other one stays as it was."""
    qs = Notification.objects.using(using).filter(
        kind__in=list(kinds), object_key__in=list(object_keys), read_at__isnull=True)
    return qs.update(read_at=timezone.now())
