"""Server-side session expiry: idle timeout and absolute lifetime (INTEGRITY.md §2.3)."""

from __future__ import annotations

import time

from django.conf import settings
from django.contrib.auth import logout

SIGNED_IN_AT = "exo_signed_in_at"
LAST_SEEN_AT = "exo_last_seen_at"
EXPIRED_FLAG = "exo_expired"
# Requests that must not count as activity (htmx polling of a dossier's status).
PASSIVE_HEADER = "HTTP_X_EXO_PASSIVE"


class SessionExpiryMiddleware:
    """Sign out a session idle longer than SESSION_IDLE_SECONDS or older than
    SESSION_COOKIE_AGE, whatever the browser's cookie says; the next page says why."""

    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        user = getattr(request, "user", None)
        if user is not None and user.is_authenticated and hasattr(request, "session"):
            now = time.time()
            session = request.session
            signed_in = session.get(SIGNED_IN_AT)
            last_seen = session.get(LAST_SEEN_AT, signed_in)
            if signed_in is None:
                session[SIGNED_IN_AT] = session[LAST_SEEN_AT] = now
            elif (now - float(last_seen) > settings.SESSION_IDLE_SECONDS
                  or now - float(signed_in) > settings.SESSION_COOKIE_AGE):
                logout(request)
                request.session[EXPIRED_FLAG] = True
            elif not request.META.get(PASSIVE_HEADER) and now - float(last_seen) > 15:
                # Written at most every 15 s: enough for an idle clock, few session writes.
                session[LAST_SEEN_AT] = now
        return self.get_response(request)
