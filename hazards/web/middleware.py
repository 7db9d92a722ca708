"""Server-side session expiry: idle timeout and absolute lifetime (INTEGRITY.md §2.3)."""

from __future__ import annotations

import time

from django.conf import settings
from django.contrib.auth import logout

from hazards.quantities import DisplayUnits, QuantityError, display_units
from hazards.services.preferences import display_units_of

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


# The person's display units, kept in the session so that a page costs no extra query; the
# preferences page writes them here when it saves (`remember_display_units`).
DISPLAY_UNITS = "exo_display_units"


def remember_display_units(request, units: DisplayUnits) -> None:
    request.session[DISPLAY_UNITS] = [units.temperature, units.power, units.pressure]


def remember_display_units_at_sign_in(sender, request=None, user=None, **kwargs) -> None:
    """`user_logged_in` receiver: the session starts with the person's units, so that no page
    reads them (a page's queries stay the same from the first one on)."""
    if request is not None and hasattr(request, "session") and user is not None:
        remember_display_units(request, display_units_of(user))


class DisplayUnitsMiddleware:
    """Pages write temperatures, powers and pressures in the signed-in person's units
    (hazards.quantities.display_units). The API keeps its canonical units: not under /api/."""

    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        user = getattr(request, "user", None)
        if (user is None or not user.is_authenticated or not hasattr(request, "session")
                or request.path.startswith("/api/")):
            return self.get_response(request)
        saved = request.session.get(DISPLAY_UNITS)
        try:
            units = DisplayUnits(*saved) if saved is not None else None
        except (TypeError, QuantityError):
            units = None
        if units is None:
            units = display_units_of(user)
            remember_display_units(request, units)
        with display_units(units):
            return self.get_response(request)
