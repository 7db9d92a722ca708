"""The token endpoint: the sign-in lockout, a rate limit, a limit on password spraying,
revocation when a password changes or an account is deactivated, and the client address
behind a trusted proxy (issue 18 item 3; INTEGRITY.md §2.6, OWASP ASVS 5.0 §6.3.1 and
§2.4.1, 21 CFR 11.300(d))."""

from __future__ import annotations

import pytest
from django.contrib.auth import get_user_model
from django.core.cache import cache
from django.test import Client
from rest_framework.test import APIClient

from tests.conftest import PASSWORD, make_user

pytestmark = pytest.mark.django_db

URL = "/api/v1/auth/token/"


@pytest.fixture(autouse=True)
def _fresh_rate_counters():
    cache.clear()
    yield
    cache.clear()


def exchange(username, password, client=None, **extra):
    return (client or APIClient()).post(
        URL, {"username": username, "password": password}, format="json", **extra
    )


def signin_page(username, password, **extra):
    return Client().post("/signin/", {"username": username, "password": password}, **extra)


def token_client(raw):
    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Token {raw}")
    return client


def test_failures_at_the_token_endpoint_lock_it_like_the_sign_in_page(settings):
    make_user("author")
    for _ in range(settings.AXES_FAILURE_LIMIT - 1):
        assert exchange("author", "wrong").status_code == 403
    # The failure that reaches the limit is answered as the lock it starts (as on the page).
    assert exchange("author", "wrong").status_code == 429
    locked = exchange("author", PASSWORD)
    assert locked.status_code == 429, "the right password must not get a token while locked"
    assert int(locked["Retry-After"]) > 0
    assert locked.json()["code"] == "throttled"
    # The sign-in page sees the same lock (common practice, no source: one lockout).
    assert signin_page("author", PASSWORD).status_code == 429


def test_a_lock_earned_on_the_sign_in_page_holds_at_the_token_endpoint(settings):
    make_user("author")
    for _ in range(settings.AXES_FAILURE_LIMIT):
        signin_page("author", "wrong")
    assert exchange("author", PASSWORD).status_code == 429
    # Another person at the same address still gets a token.
    make_user("reviewer")
    assert exchange("reviewer", PASSWORD).status_code == 200


def test_the_token_endpoint_is_rate_limited_with_retry_after(settings):
    settings.EXOLEDGER_TOKEN_RATE = "3/min"
    make_user("author")
    for _ in range(3):
        assert exchange("author", PASSWORD).status_code == 200
    limited = exchange("author", PASSWORD)
    assert limited.status_code == 429
    assert 0 < int(limited["Retry-After"]) <= 60


def test_password_spraying_across_many_names_is_limited(settings):
    settings.EXOLEDGER_SPRAY_LIMIT = 6
    make_user("author")
    # One failure each for many names: no name reaches its own limit of five.
    for n in range(settings.EXOLEDGER_SPRAY_LIMIT - 1):
        assert exchange(f"person{n}", "Winter2026!").status_code == 403
    assert exchange("person9", "Winter2026!").status_code == 429
    assert exchange("author", PASSWORD).status_code == 429
    assert signin_page("author", PASSWORD).status_code == 429
    # Another address is not affected.
    assert exchange("author", PASSWORD, REMOTE_ADDR="192.0.2.7").status_code == 200


def test_a_password_change_revokes_the_tokens_exchanged_for_the_old_password():
    user = make_user("author")
    raw = exchange("author", PASSWORD).json()["token"]
    assert token_client(raw).get("/api/v1/sites/").status_code == 200
    user.set_password("a new and long passphrase 7")
    user.save()
    assert token_client(raw).get("/api/v1/sites/").status_code == 401


def test_deactivation_revokes_exchanged_tokens_for_good():
    user = make_user("author")
    raw = exchange("author", PASSWORD).json()["token"]
    get_user_model().objects.filter(pk=user.pk).update(is_active=False)
    get_user_model().objects.filter(pk=user.pk).update(is_active=True)
    assert token_client(raw).get("/api/v1/sites/").status_code == 401


def test_tokens_issued_to_a_service_account_survive_an_unrelated_change(admin_user):
    from hazards.api.auth import issue_token

    raw = issue_token(user=admin_user, name="nightly export")
    admin_user.first_name = "Renamed"
    admin_user.save()
    assert token_client(raw).get("/api/v1/sites/").status_code == 200


PROXY = "10.0.0.2"


def test_behind_the_trusted_proxy_one_client_cannot_lock_out_everyone(settings):
    settings.EXOLEDGER_CLIENT_IP_HEADER = "X-Forwarded-For"
    settings.EXOLEDGER_SPRAY_LIMIT = 4
    make_user("author")
    attacker = {"REMOTE_ADDR": PROXY, "HTTP_X_FORWARDED_FOR": "198.51.100.9"}
    colleague = {"REMOTE_ADDR": PROXY, "HTTP_X_FORWARDED_FOR": "203.0.113.5"}
    for _ in range(settings.AXES_FAILURE_LIMIT):
        exchange("author", "wrong", **attacker)
    for n in range(4):
        exchange(f"person{n}", "wrong", **attacker)
    assert exchange("author", PASSWORD, **attacker).status_code == 429
    assert exchange("author", PASSWORD, **colleague).status_code == 200
    assert signin_page("author", PASSWORD, **colleague).status_code == 302


def test_the_proxy_header_names_the_address_the_proxy_saw_not_one_the_client_wrote(settings):
    settings.EXOLEDGER_CLIENT_IP_HEADER = "X-Forwarded-For"
    settings.EXOLEDGER_SPRAY_LIMIT = 3
    make_user("author")
    # The client writes its own X-Forwarded-For; the proxy appends the address it saw.
    for n in range(3):
        forged = {"REMOTE_ADDR": PROXY, "HTTP_X_FORWARDED_FOR": f"192.0.2.{n}, 198.51.100.9"}
        exchange(f"person{n}", "wrong", **forged)
    same = {"REMOTE_ADDR": PROXY, "HTTP_X_FORWARDED_FOR": "192.0.2.200, 198.51.100.9"}
    assert exchange("author", PASSWORD, **same).status_code == 429


def test_without_the_setting_the_forwarded_header_is_ignored(settings):
    settings.EXOLEDGER_SPRAY_LIMIT = 3
    make_user("author")
    for n in range(3):
        exchange(f"person{n}", "wrong", HTTP_X_FORWARDED_FOR=f"192.0.2.{n}")
    assert exchange("author", PASSWORD, HTTP_X_FORWARDED_FOR="192.0.2.99").status_code == 429
