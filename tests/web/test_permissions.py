"""Who sees and changes what through the pages: roles on the process decide (hazards.review.access)."""

from __future__ import annotations

import pytest

from tests.factories import VesselFactory

pytestmark = pytest.mark.django_db


def test_someone_without_a_role_does_not_see_the_process_at_all(people, process, step, client_as):
    outsider = client_as(people["outsider"])
    for url in (f"/processes/{process.pk}/", f"/steps/{step.pk}/", f"/steps/{step.pk}/edit/",
                f"/processes/{process.pk}/review/", f"/processes/{process.pk}/history/"):
        assert outsider.get(url).status_code == 404, url
    assert process.name not in outsider.get("/processes/").content.decode()
    assert step.name not in outsider.get("/steps/").content.decode()


@pytest.mark.parametrize("role", ["reviewer", "approver", "auditor"])
def test_reviewers_approvers_and_auditors_read_but_do_not_change_data(role, people, process, step,
                                                                      client_as):
    client = client_as(people[role])
    assert client.get(f"/steps/{step.pk}/").status_code == 200
    assert client.get(f"/steps/{step.pk}/edit/").status_code == 403
    response = client.post(f"/steps/{step.pk}/edit/", {"name": "renamed"})
    assert response.status_code == 403
    step.refresh_from_db()
    assert step.name == "Sulfonation in water"
    assert client.get(f"/processes/{process.pk}/steps/new/").status_code == 403
    assert client.get(f"/steps/{step.pk}/calorimetry/upload/").status_code == 403


def test_the_author_may_change_the_data(people, step, client_as):
    assert client_as(people["author"]).get(f"/steps/{step.pk}/edit/").status_code == 200


def test_reference_data_are_changed_by_administrators_only(people, admin_user, client_as):
    vessel = VesselFactory()
    assert client_as(people["author"]).get(f"/vessels/{vessel.pk}/edit/").status_code == 403
    assert client_as(admin_user).get(f"/vessels/{vessel.pk}/edit/").status_code == 200


def test_only_auditors_and_administrators_run_the_integrity_check(people, process, admin_user,
                                                                  client_as):
    assert client_as(people["author"]).get("/audit/verify/").status_code == 403
    assert client_as(people["auditor"]).get("/audit/verify/").status_code == 200
    assert client_as(admin_user).get("/audit/verify/").status_code == 200


def test_a_new_process_is_opened_by_administrators_only(people, admin_user, client_as):
    assert client_as(people["author"]).get("/processes/new/").status_code == 403
    assert client_as(admin_user).get("/processes/new/").status_code == 200


def test_every_page_that_shows_indicators_carries_the_caution(people, process, step, client_as):
    client = client_as(people["author"])
    for url in ("/", "/processes/", f"/processes/{process.pk}/", f"/steps/{step.pk}/",
                f"/processes/{process.pk}/review/", "/steps/"):
        body = client.get(url).content.decode()
        assert "support and do not replace a qualified" in body, url
        assert "Local codes, company standards and" in body, url


def test_the_step_page_offers_the_what_if_page_for_semi_batch_steps_only(people, step,
                                                                         client_as):
    client = client_as(people["reviewer"])
    link = f'href="/steps/{step.pk}/what-if/"'
    assert step.operation_mode == "batch"
    assert link not in client.get(f"/steps/{step.pk}/").content.decode()
    step.operation_mode, step.dosing_time_s = "semi_batch", 3600.0
    step.save()
    assert link in client.get(f"/steps/{step.pk}/").content.decode()
