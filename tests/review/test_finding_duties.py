"""Segregation of duties on findings (issue 18 item 1): the owner reports progress and marks a
finding ready for check; only the person who raised it, or a reviewer or approver of the process
who does not own it, settles, reopens or reshapes it; the raiser's words are never overwritten
by anyone else, and the history keeps every version.

The rule is the four-eyes principle of EU GMP Annex 11 §12.4 / 21 CFR 11.10(g) (authority
checks: only authorised individuals perform an operation), applied here as common practice, no
source for the split of duties itself."""

from __future__ import annotations

import pytest
from django.db import transaction

from hazards.review import errors as E
from hazards.review.models import Finding, FindingNote
from hazards.review.selectors import record_history
from tests.conftest import PASSWORD, make_user
from tests.review.conftest import client_for
from tests.review.factories import RoleFactory, revision_in

pytestmark = pytest.mark.django_db


@pytest.fixture
def blocking(process, author, reviewer):
    response = client_for(reviewer).post(
        "/api/v1/findings/",
        {
            "process": process.pk,
            "title": "Relief sizing basis not shown",
            "kind": "blocking",
            "description": "Show the two-phase relief calculation.",
            "owner": "author",
            "due_date": "2027-01-31",
        },
        format="json",
    )
    assert response.status_code == 201, response.content
    return Finding.objects.get(pk=response.json()["id"])


def _patch(user, finding, body):
    url = f"/api/v1/findings/{finding.pk}/"
    etag = client_for(user).get(url)["ETag"]  # changes need If-Match (issue 23)
    return client_for(user).patch(url, body, format="json", HTTP_IF_MATCH=etag)


def test_the_owner_can_neither_close_nor_rewrite_a_blocking_finding(blocking, author):
    # The probe's attack: the owner set a reviewer's blocking finding to withdrawn or resolved
    # and rewrote its text, which unblocked endorsement.
    for body in (
        {"status": "resolved", "reason": "done"},
        {"status": "withdrawn", "reason": "not needed"},
        {"title": "Nothing to see", "reason": "reworded"},
        {"description": "", "reason": "cleared"},
        {"kind": "advisory", "reason": "minor"},
        {"due_date": "2099-01-01", "reason": "later"},
        {"owner": "reviewer", "reason": "handover"},
    ):
        response = _patch(author, blocking, body)
        assert response.status_code == 403, (body, response.content)
    blocking.refresh_from_db()
    assert (blocking.status, blocking.kind, blocking.title) == (
        "open",
        "blocking",
        "Relief sizing basis not shown",
    )
    assert blocking.description == "Show the two-phase relief calculation."


def test_the_owner_notes_progress_and_marks_it_ready_which_still_blocks(
    process, blocking, author, reviewer, approver
):
    checked = revision_in(process, "checked", author=author, reviewer=reviewer)
    note = client_for(author).post(
        f"/api/v1/findings/{blocking.pk}/notes/",
        {"text": "Calculation by DIERS method attached."},
        format="json",
    )
    assert note.status_code == 201, note.content
    ready = _patch(author, blocking, {"status": "ready_for_check", "reason": "see note"})
    assert ready.status_code == 200, ready.content
    body = ready.json()
    assert body["status"] == "ready_for_check"
    assert [(n["author"], n["text"]) for n in body["notes"]] == [
        ("author", "Calculation by DIERS method attached."),
        ("author", "see note"),
    ]
    approve = client_for(approver).post(
        f"/api/v1/revisions/{checked.pk}/approve/", {"password": PASSWORD}, format="json"
    )
    assert approve.status_code == 409 and approve.json()["detail"] == E.OPEN_BLOCKING_FINDINGS
    # Not convinced: the raiser reopens it; the owner cannot reopen or resolve it.
    assert _patch(author, blocking, {"status": "open", "reason": "x"}).status_code == 403
    assert (
        _patch(
            reviewer, blocking, {"status": "open", "reason": "the calculation omits the vent line"}
        ).status_code
        == 200
    )
    assert (
        _patch(
            author, blocking, {"status": "ready_for_check", "reason": "vent line added"}
        ).status_code
        == 200
    )
    assert (
        _patch(reviewer, blocking, {"status": "resolved", "reason": "checked"}).status_code == 200
    )
    approve = client_for(approver).post(
        f"/api/v1/revisions/{checked.pk}/approve/", {"password": PASSWORD}, format="json"
    )
    assert approve.status_code == 201, approve.content
    # Settled is settled: no more notes or changes.
    assert (
        client_for(author)
        .post(f"/api/v1/findings/{blocking.pk}/notes/", {"text": "late"}, format="json")
        .status_code
        == 409
    )


def test_an_owner_who_is_also_a_reviewer_cannot_close_it_but_another_reviewer_can(
    process, blocking, author, reviewer
):
    RoleFactory(process=process, user=author, role="reviewer")
    second = make_user("second-reviewer")
    RoleFactory(process=process, user=second, role="reviewer")
    assert _patch(author, blocking, {"status": "resolved", "reason": "mine"}).status_code == 403
    response = _patch(second, blocking, {"status": "withdrawn", "reason": "duplicate of #2"})
    assert response.status_code == 200, response.content
    # ... who cannot rewrite the raiser's words either.
    other = Finding.objects.create(
        process=process,
        title="Jacket flow",
        kind="advisory",
        owner=author,
        due_date="2027-01-01",
        raised_by=reviewer,
    )
    response = _patch(second, other, {"title": "Something else", "reason": "reworded"})
    assert response.status_code == 403 and response.json()["detail"] == E.RAISERS_TEXT


def test_the_raiser_corrects_the_words_and_the_history_keeps_every_version(blocking, reviewer):
    response = _patch(
        reviewer, blocking, {"title": "Relief sizing basis missing", "reason": "typo"}
    )
    assert response.status_code == 200, response.content
    titles = [
        row["changes"]["title"] for row in record_history(blocking) if "title" in row["changes"]
    ]
    assert titles[-1] == {
        "from": "Relief sizing basis not shown",
        "to": "Relief sizing basis missing",
    }


def test_a_full_put_by_the_owner_repeating_the_other_fields_is_judged_by_what_changes(
    blocking, author
):
    read = client_for(author).get(f"/api/v1/findings/{blocking.pk}/")
    current = read.json()
    body = {k: current[k] for k in ("title", "description", "kind", "owner", "due_date")}
    response = client_for(author).put(
        f"/api/v1/findings/{blocking.pk}/",
        {**body, "status": "ready_for_check", "reason": "done"},
        format="json", HTTP_IF_MATCH=read["ETag"],
    )
    assert response.status_code == 200, response.content


def test_notes_are_append_only_in_the_database(blocking, author):
    client_for(author).post(
        f"/api/v1/findings/{blocking.pk}/notes/", {"text": "first"}, format="json"
    )
    with pytest.raises(Exception, match="finding_note_append_only"), transaction.atomic():
        FindingNote.objects.update(text="rewritten")
    assert FindingNote.objects.get().text == "first"


def test_outsiders_and_auditors_add_no_notes(blocking, auditor, outsider):
    for user, expected in ((auditor, 403), (outsider, 404)):
        response = client_for(user).post(
            f"/api/v1/findings/{blocking.pk}/notes/", {"text": "hello"}, format="json"
        )
        assert response.status_code == expected, response.content
