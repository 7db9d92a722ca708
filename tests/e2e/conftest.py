"""End-to-end tests in Debian's Chromium (never `playwright install`) against live_server.

Playwright's sync API runs an event loop in the test thread, so Django's async-safety check
would refuse the ORM calls the tests make to set up data: DJANGO_ALLOW_ASYNC_UNSAFE is set for
these tests only (a fixture, so that it never leaks into the environment of other tests or of
the processes they start, where `check --deploy` rightly refuses it).
"""

from __future__ import annotations

import datetime as dt
import os
from pathlib import Path

import pytest

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--headless=new", "--no-sandbox", "--disable-gpu", "--disable-quic",
                 "--no-first-run", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync"]
ARTIFACTS = Path(__file__).resolve().parents[2] / "test-artifacts"
AXE = Path(__file__).resolve().parent / "vendor" / "axe.min.js"
WIDTHS = {"desktop": 1280, "narrow": 390}


def pytest_collection_modifyitems(config, items):
    if not Path(CHROMIUM).exists():
        skip = pytest.mark.skip(reason=f"{CHROMIUM} is not installed (apt-get install chromium)")
        for item in items:
            if "e2e" in item.keywords:
                item.add_marker(skip)


ASYNC_UNSAFE = "DJANGO_ALLOW_ASYNC_UNSAFE"


@pytest.hookimpl(hookwrapper=True)
def pytest_runtest_setup(item):
    # Runs for the items under tests/e2e only; set before any fixture (even the session ones,
    # such as the test database, that an e2e test may be the first to need).
    os.environ[ASYNC_UNSAFE] = "true"
    yield


@pytest.hookimpl(hookwrapper=True)
def pytest_runtest_teardown(item, nextitem):
    yield
    os.environ.pop(ASYNC_UNSAFE, None)


@pytest.fixture(scope="session")
def browser_type_launch_args(browser_type_launch_args):
    return {**browser_type_launch_args, "executable_path": CHROMIUM, "args": CHROMIUM_ARGS}


@pytest.fixture(scope="session")
def browser_context_args(browser_context_args):
    # axe-core is injected as an inline script; the pages' own CSP would refuse it.
    return {**browser_context_args, "bypass_csp": True, "viewport": {"width": 1280,
                                                                     "height": 900}}


@pytest.fixture
def artifacts():
    ARTIFACTS.mkdir(exist_ok=True)
    return ARTIFACTS


@pytest.fixture
def world(transactional_db):
    """Quillmere's Varnholt works: four people with one role each, a vessel, a solvent and a
    process with one measured step, plus an outsider."""
    from hazards.review.models import ProcessRole
    from tests.conftest import make_user
    from tests.factories import (
        CalorimetryRunFactory,
        DecompositionTestFactory,
        ProcessFactory,
        SiteFactory,
        SolventFactory,
        StepFactory,
        VesselFactory,
    )

    people = {}
    for name, full in (("author", "Ada Chemist"), ("reviewer", "Rui Reviewer"),
                       ("approver", "Pia Approver"), ("auditor", "Aurel Auditor")):
        user = make_user(name)
        user.first_name, user.last_name = full.split()
        user.save()
        people[name] = user
    site = SiteFactory(code="varnholt", name="Varnholt works")
    process = ProcessFactory(name="QX-9 sulfonation route", site=site,
                             description="Invented route of Quillmere Speciality Chemicals.")
    vessel = VesselFactory(tag="R-101", name="Glass-lined reactor, bay 1")
    solvent = SolventFactory(name="Water", cas_number="7732-18-5")
    step = StepFactory(process=process, sequence=1, name="Charge and dissolve",
                       vessel=vessel, solvent=solvent)
    CalorimetryRunFactory(step=step, is_basis=True, run_date=dt.date(2026, 5, 2))
    DecompositionTestFactory(step=step, is_basis=True, test_date=dt.date(2026, 5, 3))
    for role, user in people.items():
        ProcessRole.objects.create(process=process, user=user, role=role)
    return {"people": people, "process": process, "vessel": vessel, "solvent": solvent,
            "step": step}


def sign_in(page, base_url: str, username: str, password: str | None = None) -> None:
    from tests.conftest import PASSWORD

    page.goto(f"{base_url}/signin/")
    page.get_by_label("User name").fill(username)
    page.get_by_label("Password").fill(password or PASSWORD)
    page.get_by_role("button", name="Sign in").click()
    page.wait_for_url(lambda url: "/signin/" not in url)


def axe_violations(page) -> list[dict]:
    """Serious and critical axe-core violations of the page as it is now."""
    page.add_script_tag(path=str(AXE))
    result = page.evaluate("""async () => {
        const r = await axe.run(document, {resultTypes: ['violations']});
        return r.violations.map(v => ({id: v.id, impact: v.impact, help: v.help,
            nodes: v.nodes.slice(0, 5).map(n => n.target.join(' '))}));
    }""")
    return [v for v in result if v["impact"] in ("serious", "critical")]


def shoot(page, artifacts: Path, name: str) -> None:
    """A full-page screenshot at each width into test-artifacts/."""
    for label, width in WIDTHS.items():
        page.set_viewport_size({"width": width, "height": 900})
        page.screenshot(path=str(artifacts / f"{name}-{label}.png"), full_page=True)
    page.set_viewport_size({"width": 1280, "height": 900})
