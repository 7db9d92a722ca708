"""Sign-in, sign-out, lockout and session expiry of the pages (INTEGRITY.md §2.3, §2.6)."""

from __future__ import annotations

import time

import pytest
from django.test import Client

from hazards.web import auth
from hazards.web.middleware import LAST_SEEN_AT, SIGNED_IN_AT
from tests.conftest import PASSWORD

pytestmark = pytest.mark.django_db


def signin(client, username, password, next_url=""):
    return client.post("/signin/", {"username": username, "password": password,
                                    "next": next_url})


def test_pages_need_a_signed_in_person_and_send_them_to_our_sign_in_page(people):
    response = Client().get("/processes/")
    assert response.status_code == 302
    assert response["Location"].startswith("/signin/?next=/processes/")


def test_the_admin_login_form_redirects_to_the_sign_in_page():
    response = Client().get("/admin/login/?next=/admin/")
    assert response.status_code == 302
    assert response["Location"] == "/signin/?next=%2Fadmin%2F"


def test_signing_in_goes_to_the_page_asked_for(people):
    client = Client()
    response = signin(client, "author", PASSWORD, "/steps/")
    assert response.status_code == 302 and response["Location"] == "/steps/"
    assert client.get("/").status_code == 200


def test_a_foreign_next_url_is_not_followed(people):
    response = signin(Client(), "author", PASSWORD, "https://elsewhere.example/")
    assert response["Location"] == "/"


def test_a_wrong_password_says_so_beside_the_form(people):
    response = signin(Client(), "author", "wrong")
    assert response.status_code == 200
    assert auth.WRONG_CREDENTIALS in response.content.decode()


def test_five_failures_lock_the_name_even_with_the_right_password(people, settings):
    client = Client()
    for _ in range(settings.AXES_FAILURE_LIMIT - 1):
        assert signin(client, "author", "wrong").status_code == 200
    locked = signin(client, "author", "wrong")
    assert locked.status_code == 429
    assert "sign-in is locked for 15 minutes" in locked.content.decode()
    again = signin(client, "author", PASSWORD)
    assert again.status_code == 429, "a locked name must not get in with the right password"
    # Another person from the same address is not locked.
    assert signin(Client(), "reviewer", PASSWORD).status_code == 302


def test_sign_out_is_a_post_and_ends_the_session(people, client_as):
    client = client_as(people["author"])
    assert client.get("/signout/").status_code == 405
    response = client.post("/signout/")
    assert response["Location"] == "/signin/?signed_out=1"
    assert client.get("/").status_code == 302


def _age_session(client, **seconds_ago):
    session = client.session
    now = time.time()
    session[SIGNED_IN_AT] = now - seconds_ago.get("signed_in", 0)
    session[LAST_SEEN_AT] = now - seconds_ago.get("last_seen", 0)
    session.save()


def test_an_idle_session_expires_on_the_server_and_the_page_says_why(people, settings):
    client = Client()
    signin(client, "author", PASSWORD)
    _age_session(client, signed_in=settings.SESSION_IDLE_SECONDS + 5,
                 last_seen=settings.SESSION_IDLE_SECONDS + 5)
    response = client.get("/processes/")
    assert response.status_code == 302 and response["Location"].startswith("/signin/")
    page = client.get(response["Location"])
    assert auth.SESSION_EXPIRED in page.content.decode()


def test_an_active_session_still_ends_at_its_absolute_lifetime(people, settings):
    client = Client()
    signin(client, "author", PASSWORD)
    _age_session(client, signed_in=settings.SESSION_COOKIE_AGE + 5, last_seen=1)
    assert client.get("/").status_code == 302


def test_a_recently_active_session_stays(people, settings):
    client = Client()
    signin(client, "author", PASSWORD)
    _age_session(client, signed_in=600, last_seen=60)
    assert client.get("/").status_code == 200
