"""Every page names itself in the browser's title bar (issue 21 item 8: empty page titles)."""

from __future__ import annotations

import re

import pytest

from tests.factories import CalorimetryRunFactory, DecompositionTestFactory, StepFactory

pytestmark = pytest.mark.django_db

TITLE = re.compile(r"<title>\s*(.*?)\s*</title>", re.S)


def test_every_page_has_a_title_of_its_own(client, admin_user):
    step = StepFactory()
    run = CalorimetryRunFactory(step=step)
    test = DecompositionTestFactory(step=step)
    process = step.process
    client.force_login(admin_user)
    pages = [
        "/", "/processes/", "/processes/new/", f"/processes/{process.pk}/",
        f"/processes/{process.pk}/edit/", f"/processes/{process.pk}/steps/new/",
        f"/processes/{process.pk}/review/", f"/processes/{process.pk}/history/",
        "/steps/", f"/steps/{step.pk}/", f"/steps/{step.pk}/edit/",
        f"/steps/{step.pk}/calorimetry/new/", f"/steps/{step.pk}/calorimetry/upload/",
        f"/steps/{step.pk}/decomposition/new/", f"/calorimetry/{run.pk}/edit/",
        f"/decomposition/{test.pk}/edit/", "/vessels/", "/vessels/new/", "/solvents/",
        "/solvents/new/", f"/history/hazards.reactionstep/{step.pk}/", "/audit/verify/",
    ]
    titles = {}
    for url in pages:
        response = client.get(url)
        assert response.status_code == 200, url
        titles[url] = TITLE.search(response.content.decode()).group(1)
    empty = {url: t for url, t in titles.items() if not t.split("·")[0].strip()}
    assert not empty
    # Each title says what the page is, before the application's name.
    assert titles[f"/steps/{step.pk}/"].startswith(step.name)
    assert titles["/vessels/"].startswith("Vessels") and titles["/solvents/"].startswith("Solvents")
    assert all(t.endswith("Exoledger") for t in titles.values())
