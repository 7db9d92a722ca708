"""No one signs as someone else, administrators included (issue 18 item 2).

21 CFR 11.300(b) and 11.10(e) (from the eCFR text paraphrased in INTEGRITY.md §1.1): the
identification of a signer is controlled, and changes to it are in a secure audit trail;
EU GMP Annex 11 §12.1 and §12.3 (INTEGRITY.md §1.2): changes to access rights are recorded.
"""

from __future__ import annotations

import re

import pytest
from django.contrib.auth.models import Group, Permission
from django.core import mail
from django.test import Client

from hazards import models as m
from hazards.api.auth import issue_token
from hazards.oversight.models import ChangePolicy
from hazards.review import audit
from hazards.review.models import SigningLockout
from tests.conftest import PASSWORD, make_user
from tests.factories import SiteFactory

pytestmark = pytest.mark.django_db

NEW_PASSWORD = "a brand new and long passphrase 31"


def events(label_or_table: str):
    """Rows of one event table (by its db_table) as dicts, oldest first."""
    from django.db import connection

    with connection.cursor() as cursor:
        cursor.execute(f'SELECT * FROM "{label_or_table}" ORDER BY pgh_id')
        names = [c.name for c in cursor.description]
        return [dict(zip(names, row, strict=True)) for row in cursor.fetchall()]


def test_an_administrator_cannot_set_another_persons_password_in_the_admin(admin_user):
    victim = make_user("author")
    client = Client()
    client.force_login(admin_user)
    url = f"/admin/auth/user/{victim.pk}/password/"
    page = client.get(url)
    posted = client.post(
        url, {"password1": NEW_PASSWORD, "password2": NEW_PASSWORD, "usable_password": "true"}
    )
    assert page.status_code == 403 and posted.status_code == 403
    victim.refresh_from_db()
    assert victim.check_password(PASSWORD) and not victim.check_password(NEW_PASSWORD)


def test_a_new_account_gets_no_password_from_the_administrator(admin_user):
    client = Client()
    client.force_login(admin_user)
    response = client.post(
        "/admin/auth/user/add/",
        {
            "username": "newcomer",
            "email": "newcomer@example.test",
            "password1": NEW_PASSWORD,
            "password2": NEW_PASSWORD,
            "usable_password": "true",
        },
    )
    assert response.status_code == 302, response.content.decode()[:2000]
    newcomer = m.ApiToken._meta.apps.get_model("auth", "User").objects.get(username="newcomer")
    assert not newcomer.has_usable_password()
    assert not newcomer.check_password(NEW_PASSWORD)


def test_a_reset_goes_by_a_one_time_link_only_the_person_receives(admin_user):
    victim = make_user("author")
    client = Client()
    client.force_login(admin_user)
    response = client.post(
        "/admin/auth/user/",
        {"action": "send_password_reset", "_selected_action": [victim.pk]},
        follow=True,
    )
    assert response.status_code == 200
    assert len(mail.outbox) == 1 and mail.outbox[0].to == ["author@example.test"]
    link = re.search(r"https?://[^\s]+/reset/[^\s]+/", mail.outbox[0].body).group(0)
    path = link.split("://", 1)[1].split("/", 1)[1]
    assert path not in response.content.decode(), "the administrator must not see the link"
    # The person completes it (Django's one-time token: it dies with the password it reset).
    person = Client()
    form = person.get("/" + path, follow=True)
    assert form.status_code == 200
    done = person.post(
        form.redirect_chain[-1][0], {"new_password1": NEW_PASSWORD, "new_password2": NEW_PASSWORD}
    )
    assert done.status_code == 302
    victim.refresh_from_db()
    assert victim.check_password(NEW_PASSWORD)
    again = person.get("/" + path, follow=True)
    assert b"invalid" in again.content.lower()


def test_identity_and_privilege_changes_reach_the_trail_and_the_chain(admin_user):
    user = make_user("author")
    group = Group.objects.create(name="Authors")
    permission = Permission.objects.get(codename="change_process")
    group.permissions.add(permission)
    user.groups.add(group)
    user.user_permissions.add(Permission.objects.get(codename="view_site"))
    user.is_staff = True
    user.save()
    user.set_password(NEW_PASSWORD)
    user.save()
    user.is_active = False
    user.save()
    raw = issue_token(user=admin_user, name="export")
    token = m.ApiToken.objects.get(prefix=raw[:8])
    token.revoked_at = token.created_at
    token.save()
    site = SiteFactory()
    ChangePolicy.objects.create(site=site, light_review_allowed=True)
    SigningLockout.objects.create(user=user, failures=1)
    user.groups.remove(group)

    tables = {model._meta.db_table: model for model in audit.event_models()}
    users = events("hazards_userevent")
    mine = [e for e in users if e["id"] == user.pk]
    assert [e["pgh_label"] for e in mine] == ["insert", "update", "update"]
    assert [e["is_staff"] for e in mine] == [False, True, True]
    assert mine[-1]["is_active"] is False
    assert all("password" not in e for e in users), "hashes stay out of the trail"
    assert [e["id"] for e in events("hazards_userpasswordevent")] == [user.pk]
    assert [(e["pgh_label"], e["group_id"]) for e in events("hazards_usergroupevent")] == [
        ("group.add", group.pk),
        ("group.remove", group.pk),
    ]
    assert [e["permission_id"] for e in events("hazards_userpermissionevent")]
    assert [e["permission_id"] for e in events("hazards_grouppermissionevent")] == [permission.pk]
    assert [e["name"] for e in events("hazards_groupevent")] == ["Authors"]
    assert [e["pgh_label"] for e in events("hazards_apitokenevent")] == ["insert", "update"]
    assert events("oversight_changepolicyevent")[0]["light_review_allowed"] is True
    assert events("review_signinglockoutevent")[0]["failures"] == 1
    for table in (
        "hazards_userevent",
        "hazards_userpasswordevent",
        "hazards_usergroupevent",
        "hazards_userpermissionevent",
        "hazards_grouppermissionevent",
        "hazards_groupevent",
        "hazards_apitokenevent",
        "hazards_serviceaccountevent",
        "oversight_changepolicyevent",
        "review_signinglockoutevent",
    ):
        assert table in tables, table
    assert audit.verify_all() == []
    linked = set(
        audit.verify_chain.__globals__["apps"]
        .get_model("review", "ChainLink")
        .objects.values_list("event_table", flat=True)
    )
    assert {"hazards_userevent", "hazards_usergroupevent", "hazards_apitokenevent"} <= linked


def test_using_a_token_does_not_flood_the_trail(admin_user):
    from rest_framework.test import APIClient

    raw = issue_token(user=admin_user, name="export")
    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Token {raw}")
    for _ in range(3):
        assert client.get("/api/v1/sites/").status_code == 200
    assert [e["pgh_label"] for e in events("hazards_apitokenevent")] == ["insert"]
    # Signing in updates last_login, which is no identity change either.
    client = Client()
    client.post("/signin/", {"username": "admin", "password": PASSWORD})
    assert [e["pgh_label"] for e in events("hazards_userevent") if e["id"] == admin_user.pk] == [
        "insert",
        "update",
    ]


def test_a_signature_soon_after_a_password_change_says_so_on_page_api_and_dossier(
    process, author, reviewer, settings
):
    from hazards.dossier.review_bridge import signatures as dossier_signatures
    from tests.review.conftest import client_for
    from tests.review.factories import revision_in, sign

    draft = revision_in(process, "drafting", author=author)
    author.set_password(NEW_PASSWORD)
    author.save()
    sign(draft, author, "authored", password=NEW_PASSWORD)
    sign(draft, reviewer, "reviewed")  # the reviewer's password did not change

    listed = client_for(reviewer).get(f"/api/v1/signatures/?revision={draft.pk}").json()
    rows = listed["results"] if isinstance(listed, dict) else listed
    by_meaning = {row["meaning"]: row for row in rows}
    assert by_meaning["authored"]["credentials_changed_at"] is not None
    assert by_meaning["reviewed"]["credentials_changed_at"] is None

    page = client_for(reviewer).get(f"/processes/{process.pk}/review/").content.decode()
    assert (
        "The signer&#x27;s password was changed" in page
        or "The signer's password was changed" in page
    )
    notes = {s["meaning"]: s["credentials_note"] for s in dossier_signatures(draft)}
    assert notes["authored"].startswith("The signer's password was changed 0.0 h")
    assert notes["reviewed"] == ""
