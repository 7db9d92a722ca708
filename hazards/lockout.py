"""Who may try a password now: the client's address, the sign-in lockout and the spray limit.

One set of rules for the sign-in page and the token endpoint (INTEGRITY.md §2.6):
- django-axes locks a user name at one address after `AXES_FAILURE_LIMIT` failures;
- one address that fails `EXOLEDGER_SPRAY_LIMIT` times within the cool-off, whatever the
  user names, is refused too (password spraying tries one password on many names);
- the client address is REMOTE_ADDR, or, behind the documented proxy, the address that proxy
  wrote last into the header named by `EXOLEDGER_CLIENT_IP_HEADER`. Without that setting a
  forwarded header is ignored: any client can write one.
Both counts live in the database (axes' tables), so every gunicorn worker sees them.
"""

from __future__ import annotations

from datetime import timedelta

from axes.handlers.proxy import AxesProxyHandler
from axes.models import AccessFailureLog
from django.conf import settings
from django.utils import timezone


def client_ip(request) -> str | None:
    """The client's address as the trusted proxy saw it, else the socket's peer."""
    header = getattr(settings, "EXOLEDGER_CLIENT_IP_HEADER", "") or ""
    if header:
        key = "HTTP_" + header.upper().replace("-", "_")
        raw = request.META.get(key, "")
        # A proxy appends the address it saw to whatever the client sent: trust the last.
        candidates = [part.strip() for part in raw.split(",") if part.strip()]
        if candidates:
            return candidates[-1]
    return request.META.get("REMOTE_ADDR")


def cool_off() -> timedelta:
    return timedelta(hours=float(settings.AXES_COOLOFF_TIME))


def spray_failures(ip: str | None, *, now=None) -> int:
    """Failed sign-ins from one address within the cool-off, whatever the user names."""
    if not ip:
        return 0
    since = (now or timezone.now()) - cool_off()
    return AccessFailureLog.objects.filter(ip_address=ip, attempt_time__gte=since).count()


def refusal_seconds(request, username: str) -> int | None:
    """Seconds until this request may try a password again, or None when it may now."""
    if AxesProxyHandler.is_locked(request, {"username": username}):
        return int(cool_off().total_seconds())
    ip = client_ip(request)
    limit = int(getattr(settings, "EXOLEDGER_SPRAY_LIMIT", 20))
    if spray_failures(ip) >= limit:
        oldest = (
            AccessFailureLog.objects.filter(
                ip_address=ip, attempt_time__gte=timezone.now() - cool_off()
            )
            .order_by("attempt_time")
            .values_list("attempt_time", flat=True)
            .first()
        )
        if oldest is None:
            return int(cool_off().total_seconds())
        return max(1, int((oldest + cool_off() - timezone.now()).total_seconds()))
    return None
