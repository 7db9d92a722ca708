"""What the daily refresh does (the `oversight_refresh` command and the `refresh_daily`
task run the same function; running it twice sends nothing twice)."""

from __future__ import annotations

import datetime as dt

from django.utils import timezone

from hazards.oversight import notify, revalidation
from hazards.oversight.models import Notification

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
