"""Tokens of people and other systems: hashed, expiring, revocable; service accounts."""

from __future__ import annotations

import hashlib
from datetime import timedelta
from io import StringIO

import pytest
from django.contrib.auth import get_user_model
from django.core.management import CommandError, call_command
from django.utils import timezone
from rest_framework.test import APIClient

from hazards import models as m
from hazards.api.auth import issue_token
from hazards.review.access import is_service_account
from tests.conftest import make_user
from tests.factories import SiteFactory

pytestmark = pytest.mark.django_db


def _client(raw: str) -> APIClient:
    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Token {raw}")
    return client


def _command(*args) -> str:
    out = StringIO()
    call_command("service_account", *args, stdout=out)
    return out.getvalue()


def test_only_the_sha256_of_a_token_is_stored(admin_user):
    raw = issue_token(user=admin_user, name="t")
    token = m.ApiToken.objects.get()
    assert token.key_hash == hashlib.sha256(raw.encode()).hexdigest()
    stored = " ".join(str(v) for v in m.ApiToken.objects.values_list().get())
    assert raw not in stored and token.prefix == raw[:8]
    assert _client(raw).get("/api/v1/sites/").status_code == 200


def test_expired_and_revoked_tokens_are_refused(admin_user):
    expired = issue_token(user=admin_user, ttl=timedelta(hours=1))
    m.ApiToken.objects.update(expires_at=timezone.now() - timedelta(seconds=1))
    revoked = issue_token(user=admin_user)
    m.ApiToken.objects.filter(key_hash=hashlib.sha256(revoked.encode()).hexdigest()).update(
        revoked_at=timezone.now())
    for raw in (expired, revoked, "made-up"):
        resp = _client(raw).get("/api/v1/sites/")
        assert resp.status_code == 401, raw
        assert resp.json()["code"] == "authentication_failed"


def test_a_token_of_a_deactivated_user_is_refused(admin_user):
    raw = issue_token(user=admin_user)
    get_user_model().objects.filter(pk=admin_user.pk).update(is_active=False)
    assert _client(raw).get("/api/v1/sites/").status_code == 401


def test_the_command_creates_a_service_account_that_reads_writes_and_is_never_a_signer():
    out = _command("create", "lims-bridge", "--description", "Lab data bridge", "--issue",
                   "--name", "prod", "--ttl-hours", "2")
    raw = out.strip().splitlines()[-1]
    user = get_user_model().objects.get(username="lims-bridge")
    assert is_service_account(user) and not user.has_usable_password()
    token = m.ApiToken.objects.get(user=user)
    assert timedelta(hours=1, minutes=59) < token.expires_at - timezone.now() <= timedelta(hours=2)

    client = _client(raw)
    site = SiteFactory(code="north")
    assert client.get("/api/v1/sites/").status_code == 200
    created = client.post("/api/v1/processes/", {"name": "From LIMS", "site": "north"},
                          format="json")
    assert created.status_code == 201, created.json()
    changed = client.patch(f"/api/v1/sites/{site.pk}/", {"name": "North"}, format="json",
                           HTTP_IF_MATCH=f'"site-{site.pk}-v1"')
    assert changed.status_code == 200
    # The password exchange can never issue it a token: it has no password.
    assert APIClient().post("/api/v1/auth/token/", {"username": "lims-bridge", "password": ""},
                            format="json").status_code in (400, 401, 403)


def test_a_read_only_service_account_cannot_write():
    raw = _command("create", "dashboard", "--read-only", "--issue").strip().splitlines()[-1]
    client = _client(raw)
    assert client.get("/api/v1/steps/").status_code == 200
    assert client.post("/api/v1/sites/", {"code": "x", "name": "x"},
                       format="json").status_code == 403


def test_the_command_issues_and_revokes_tokens_and_refuses_people(admin_user):
    _command("create", "bridge")
    first = _command("issue", "bridge").strip().splitlines()[-1]
    second = _command("issue", "bridge", "--name", "spare").strip().splitlines()[-1]
    assert "revoked 1 token" in _command("revoke", "bridge", "--prefix", first[:8])
    assert _client(first).get("/api/v1/sites/").status_code == 401
    assert _client(second).get("/api/v1/sites/").status_code == 200
    assert "revoked 1 token" in _command("revoke", "bridge", "--all")
    assert _client(second).get("/api/v1/sites/").status_code == 401
    listing = _command("list")
    assert "bridge" in listing and listing.count("revoked") == 2
    with pytest.raises(CommandError):
        _command("create", admin_user.username)  # a person's account stays a person's
    with pytest.raises(CommandError):
        _command("issue", "nobody")


def test_admins_list_and_revoke_tokens_and_others_cannot(api, admin_user, outsider):
    _command("create", "bridge")
    raw = _command("issue", "bridge").strip().splitlines()[-1]
    issue_token(user=outsider, name="own")
    listing = api.get("/api/v1/tokens/?service_account=true")
    assert listing.status_code == 200
    rows = listing.json()["results"]
    assert [(r["user"], r["state"], r["service_account"]) for r in rows] == [
        ("bridge", "active", True)]
    assert "key_hash" not in rows[0] and raw not in listing.content.decode()

    revoked = api.post(f"/api/v1/tokens/{rows[0]['id']}/revoke/")
    assert revoked.status_code == 200 and revoked.json()["state"] == "revoked"
    assert _client(raw).get("/api/v1/sites/").status_code == 401
    assert api.get("/api/v1/tokens/?state=revoked").json()["count"] == 1
    assert api.get("/api/v1/tokens/?state=active").json()["count"] == 1

    staff_without_perm = make_user("clerk")
    staff_without_perm.is_staff = True
    staff_without_perm.save()
    for user in (outsider, staff_without_perm):
        client = APIClient()
        client.force_authenticate(user)
        assert client.get("/api/v1/tokens/").status_code == 403
        assert client.post(f"/api/v1/tokens/{rows[0]['id']}/revoke/").status_code == 403
