"""Sign-in and sign-out pages of the application (the admin's login redirects here)."""

from __future__ import annotations

import time
from urllib.parse import urlencode

from django import forms
from django.conf import settings
from django.contrib.auth import authenticate, login, logout
from django.shortcuts import redirect, render
from django.utils.http import url_has_allowed_host_and_scheme
from django.views.decorators.cache import never_cache
from django.views.decorators.csrf import csrf_protect
from django.views.decorators.debug import sensitive_post_parameters
from django.views.decorators.http import require_POST

from hazards.lockout import refusal_seconds
from hazards.web.middleware import EXPIRED_FLAG, LAST_SEEN_AT, SIGNED_IN_AT

WRONG_CREDENTIALS = "The user name or the password is not correct."
LOCKED_OUT = ("Too many failed sign-ins for this user name or from this address: sign-in is "
              "locked for {minutes} minutes. An administrator can lift the lock earlier.")
INACTIVE = "This account is not active; ask an administrator."
SESSION_EXPIRED = "Your session expired; sign in again to continue."
SIGNED_OUT = "You are signed out."


class SignInForm(forms.Form):
    username = forms.CharField(label="User name", max_length=150,
                               widget=forms.TextInput(attrs={"autocomplete": "username",
                                                             "autofocus": True}))
    password = forms.CharField(label="Password", strip=False,
                               widget=forms.PasswordInput(attrs={"autocomplete":
                                                                 "current-password"}))


def _next_url(request) -> str:
    target = request.POST.get("next") or request.GET.get("next") or ""
    if target and url_has_allowed_host_and_scheme(target, {request.get_host()},
                                                  require_https=request.is_secure()):
        return target
    return settings.LOGIN_REDIRECT_URL


def lock_minutes() -> int:
    return round(float(settings.AXES_COOLOFF_TIME) * 60)


@sensitive_post_parameters("password")
@csrf_protect
@never_cache
def signin(request):
    notice = None
    if request.session.pop(EXPIRED_FLAG, False):
        notice = SESSION_EXPIRED
    elif request.GET.get("signed_out"):
        notice = SIGNED_OUT
    form = SignInForm(request.POST or None)
    error, status, wait = None, 200, None
    if request.method == "POST" and form.is_valid():
        username = form.cleaned_data["username"]
        wait = refusal_seconds(request, username)
        if wait is None:
            user = authenticate(request, username=username,
                                password=form.cleaned_data["password"])
            if user is not None and user.is_active:
                login(request, user)  # cycles the session key
                request.session[SIGNED_IN_AT] = request.session[LAST_SEEN_AT] = time.time()
                return redirect(_next_url(request))
            wait = refusal_seconds(request, username)
        if wait is not None:
            error, status = LOCKED_OUT.format(minutes=lock_minutes()), 429
        else:
            error, status = WRONG_CREDENTIALS, 200
    elif request.method == "POST":
        status = 200
    response = render(request, "hazards/signin.html", {
        "form": form, "error": error, "notice": notice, "next": _next_url(request),
        "idle_minutes": settings.SESSION_IDLE_SECONDS // 60,
        "absolute_hours": round(settings.SESSION_COOKIE_AGE / 3600, 1),
    }, status=status)
    if wait is not None:
        response["Retry-After"] = str(wait)
    return response


@require_POST
@csrf_protect
def signout(request):
    logout(request)
    return redirect(f"{settings.LOGIN_URL}?signed_out=1")


def admin_login(request):
    """The admin's own login form is not used: one place to sign in, with the lockout."""
    target = request.GET.get("next", "/admin/")
    return redirect(f"{settings.LOGIN_URL}?{urlencode({'next': target})}")
