"""Review and sign-off pages on the review app's services: meaning before password, wrong
passwords refused, send back with a finding, the start page of each person."""

from __future__ import annotations

import datetime as dt

import pytest
from django.utils.html import escape

from hazards.review import errors as E
from hazards.review.models import Finding, ProcessRevision, ReviewState, Signature
from hazards.review.services import findings
from tests.conftest import PASSWORD
from tests.web.conftest import sign

pytestmark = pytest.mark.django_db


def test_the_meaning_and_the_printed_name_are_shown_before_the_password(people, process, lodged,
                                                                          client_as):
    html = client_as(people["reviewer"]).get(f"/processes/{process.pk}/review/").content.decode()
    meaning_at = html.index("Reviewed: I checked the assessment for process safety")
    assert html.index("Reviewer Persona") < html.index('type="password"')
    assert meaning_at < html.index('type="password"')


def test_a_wrong_password_signs_nothing_and_says_so(people, process, lodged, client_as):
    client = client_as(people["reviewer"])
    response = client.post(f"/revisions/{lodged.pk}/sign/",
                           {"sign-meaning": "reviewed", "sign-password": "not it"})
    assert response.status_code == 403
    assert escape(E.WRONG_PASSWORD) in response.content.decode()
    assert not Signature.objects.filter(signer=people["reviewer"]).exists()


def test_the_reviewer_signs_with_the_password(people, process, lodged, client_as):
    response = client_as(people["reviewer"]).post(
        f"/revisions/{lodged.pk}/sign/", {"sign-meaning": "reviewed", "sign-password": PASSWORD})
    assert response.status_code == 302
    lodged.refresh_from_db()
    assert lodged.state == ReviewState.CHECKED


def test_an_author_cannot_sign_as_reviewer(people, process, lodged, client_as):
    response = client_as(people["author"]).post(
        f"/revisions/{lodged.pk}/sign/", {"sign-meaning": "reviewed", "sign-password": PASSWORD})
    assert response.status_code == 403
    assert escape(E.NOT_A_REVIEWER) in response.content.decode()


def test_sending_back_needs_a_reason_and_opens_a_new_draft(people, process, lodged, client_as):
    client = client_as(people["reviewer"])
    assert client.post(f"/revisions/{lodged.pk}/send-back/", {"back-reason": ""}).status_code == 400
    assert client.post(f"/revisions/{lodged.pk}/send-back/",
                       {"back-reason": "accumulation not checked"}).status_code == 302
    lodged.refresh_from_db()
    assert lodged.state == ReviewState.SENT_BACK
    assert ProcessRevision.objects.filter(process=process, state=ReviewState.DRAFTING).exists()


def test_a_finding_is_raised_and_waits_on_its_owners_start_page(people, process, lodged,
                                                                 client_as):
    due = dt.date.today() + dt.timedelta(days=10)
    response = client_as(people["reviewer"]).post(f"/processes/{process.pk}/findings/new/", {
        "finding-title": "Check the dosing interlock", "finding-kind": "blocking",
        "finding-owner": people["author"].pk, "finding-due_date": due.isoformat(),
        "finding-description": ""})
    assert response.status_code == 302
    finding = Finding.objects.get()
    start = client_as(people["author"]).get("/").content.decode()
    assert "Check the dosing interlock" in start and "Blocking" in start
    # The owner cannot resolve it (issue 18 item 1): the page offers only "ready for check".
    page = client_as(people["author"]).get(f"/findings/{finding.pk}/").content.decode()
    assert 'value="ready_for_check"' in page and 'value="resolved"' not in page
    refused = client_as(people["author"]).post(f"/findings/{finding.pk}/", {
        "action": "status", "status-status": "resolved",
        "status-reason": "interlock test record attached"})
    assert refused.status_code == 400
    noted = client_as(people["author"]).post(f"/findings/{finding.pk}/", {
        "action": "note", "note-text": "Interlock test booked for Tuesday."})
    assert noted.status_code == 302
    done = client_as(people["author"]).post(f"/findings/{finding.pk}/", {
        "action": "status", "status-status": "ready_for_check",
        "status-reason": "interlock test record attached"})
    assert done.status_code == 302
    finding.refresh_from_db()
    assert finding.status == "ready_for_check"
    assert [n.text for n in finding.notes.order_by("id")] == [
        "Interlock test booked for Tuesday.", "interlock test record attached"]
    # The reviewer who raised it finds it on the start page, checks and resolves it.
    start = client_as(people["reviewer"]).get("/").content.decode()
    assert "Findings ready for your check" in start and "Check the dosing interlock" in start
    page = client_as(people["reviewer"]).get(f"/findings/{finding.pk}/").content.decode()
    assert "Interlock test booked for Tuesday." in page and 'value="resolved"' in page
    checked = client_as(people["reviewer"]).post(f"/findings/{finding.pk}/", {
        "action": "status", "status-status": "resolved", "status-reason": "record seen"})
    assert checked.status_code == 302
    finding.refresh_from_db()
    assert finding.status == "resolved"


def test_the_start_page_shows_what_waits_for_each_person(people, process, lodged, client_as):
    reviewer_start = client_as(people["reviewer"]).get("/").content.decode()
    assert f"{process.name}, revision {lodged.number}" in reviewer_start
    approver_start = client_as(people["approver"]).get("/").content.decode()
    assert f"{process.name}, revision {lodged.number}" not in approver_start


def test_the_difference_from_the_last_approved_revision_is_shown(people, process, step, lodged,
                                                                  client_as):
    from tests.web.conftest import sign

    sign(lodged, people["reviewer"], "reviewed")
    sign(lodged, people["approver"], "approved")
    client = client_as(people["author"])
    client.post(f"/processes/{process.pk}/revisions/open/", {"reason": "revalidation"})
    form = {
        "sequence": 1, "name": step.name, "operation_mode": "batch",
        "process_temperature_k": "40 °C", "reaction_mass_kg": "5000 kg",
        "specific_heat_capacity_j_per_kg_k": "2 kJ/(kg·K)", "system": "open",
        "operating_pressure_pa": "1.01325 bar", "solvent": step.solvent_id,
        "vessel": step.vessel_id, "version": step.version,
        "reason": "process temperature raised by 10 K",
    }
    assert client.post(f"/steps/{step.pk}/edit/", form).status_code == 302
    html = client.get(f"/processes/{process.pk}/review/").content.decode()
    assert "Compared with revision 1 (approved)" in html
    assert "Process temperature Tp" in html and "30 °C" in html and "40 °C" in html
    step.refresh_from_db()
    assert step.needs_review
    assert "Approvals that no longer hold <span class=\"count\">1</span>" in client.get(
        "/").content.decode()


def test_the_approver_sees_the_open_blocking_finding_before_any_password(people, process,
                                                                         lodged, client_as):
    sign(lodged, people["reviewer"], "reviewed")
    finding = findings.finding_raise(
        process=process, user=people["reviewer"], title="Relief line sizing record missing",
        kind="blocking", owner=people["author"], due_date=dt.date(2030, 1, 31))
    client = client_as(people["approver"])
    html = client.get(f"/processes/{process.pk}/review/").content.decode()
    notice = html[html.index('id="approval-blocked"'):]
    notice = notice[:notice.index("</div>")]
    assert "cannot be approved yet" in notice
    assert f'href="/findings/{finding.pk}/">Relief line sizing record missing</a>' in notice
    # No signing password to type while the approval would be refused; the notice comes first.
    assert 'name="sign-password"' not in html
    # A hand-made POST is still refused by the service, and nothing is signed.
    response = client.post(f"/revisions/{lodged.pk}/sign/",
                           {"sign-meaning": "approved", "sign-password": PASSWORD})
    assert response.status_code == 409
    assert escape(E.OPEN_BLOCKING_FINDINGS) in response.content.decode()
    assert not Signature.objects.filter(signer=people["approver"]).exists()
    # Once the raiser resolves it, the password is asked for.
    findings.finding_update(finding=finding, user=people["reviewer"], status="resolved",
                            reason="Record attached and checked.")
    html = client.get(f"/processes/{process.pk}/review/").content.decode()
    assert 'id="approval-blocked"' not in html and 'name="sign-password"' in html


def test_the_reviewer_is_not_told_of_an_approval_block(people, process, lodged, client_as):
    findings.finding_raise(
        process=process, user=people["approver"], title="Relief line sizing record missing",
        kind="blocking", owner=people["author"], due_date=dt.date(2030, 1, 31))
    html = client_as(people["reviewer"]).get(f"/processes/{process.pk}/review/").content.decode()
    # The review signature is not refused by an open finding: the reviewer signs as before.
    assert 'id="approval-blocked"' not in html and 'name="sign-password"' in html
