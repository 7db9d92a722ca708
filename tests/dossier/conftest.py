"""A small signed process for the dossier tests: two steps, three signatures, one finding."""

from __future__ import annotations

import datetime as dt
import hashlib
import math

import pytest

from tests.conftest import PASSWORD, make_user
from tests.factories import (
    CalorimetryRunFactory,
    DecompositionTestFactory,
    ProcessFactory,
    SiteFactory,
    StepFactory,
)


def c17_series() -> dict:
    """METHODS.md C1.7: 60 min linear feed, k = 0.1/min, Q_tot 60 kJ, 10-min grid to 180 min."""
    k, td, q_tot = 0.1, 60.0, 60e3
    times = list(range(0, 190, 10))

    def acc(t):
        return (1 - math.exp(-k * t)) / (k * td) if t <= td else \
            (1 - math.exp(-k * td)) / (k * td) * math.exp(-k * (t - td))

    return {
        "time_s": [t * 60.0 for t in times],
        "heat_release_rate_w": [round(q_tot * k / 60 * acc(t), 4) for t in times],
        "dosed_fraction": [min(t / td, 1.0) for t in times],
        "reactor_temperature_k": [303.15 for _ in times],
    }


def build_process(*, steps: int = 2, name: str = "Dossier test route"):
    from hazards.models import CalorimetrySeries

    site = SiteFactory(code="varnholt", name="Varnholt works")
    process = ProcessFactory(name=name, site=site,
                             description="Invented route of Quillmere Speciality Chemicals.")
    for i in range(steps):
        semi = i % 2 == 1
        step = StepFactory(process=process, sequence=i + 1, name=f"Step {i + 1} of {name}",
                           operation_mode="semi_batch" if semi else "batch",
                           dosing_time_s=3600.0 if semi else None)
        run = CalorimetryRunFactory(step=step, instrument="RC-2 heat-flow calorimeter",
                                    run_date=dt.date(2026, 3, 2), raw_file_name="run-17.csv",
                                    max_accumulation=0.18 if semi else None, is_basis=True)
        if semi:
            raw = b"time [min],heat_release_rate [W]\n"
            CalorimetrySeries.objects.create(
                run=run, file_name="run-17.csv", original=raw,
                sha256=hashlib.sha256(raw).hexdigest(), columns={}, data=c17_series(),
                initial_mass_kg=0.40, feed_mass_kg=0.10)
        DecompositionTestFactory(step=step, instrument="DSC 3", test_date=dt.date(2026, 2, 20),
                                 onset_temperature_k=523.15 - 20 * i, is_basis=True)
    return process


@pytest.fixture
def people(db):
    return {role: make_user(role) for role in ("author", "reviewer", "approver")}


def sign_all(process, people, *, finding: bool = True):
    from hazards.review.services import revisions as rv
    from hazards.review.services.findings import finding_raise
    from hazards.review.services.roles import role_grant

    for role, user in people.items():
        role_grant(process=process, user=user, role=role, granted_by=None, reason="test set-up")
    revision = rv.revision_open(process=process, user=people["author"], reason="first issue")
    rv.revision_submit(revision=revision, user=people["author"], password=PASSWORD, request=None)
    revision.refresh_from_db()
    rv.revision_review(revision=revision, user=people["reviewer"], password=PASSWORD,
                       request=None)
    if finding:
        finding_raise(process=process, user=people["reviewer"], title="Confirm the relief sizing",
                      kind="advisory", owner=people["author"], due_date=dt.date(2026, 6, 30),
                      description="Check the vent line for two-phase flow.")
    revision.refresh_from_db()
    rv.revision_approve(revision=revision, user=people["approver"], password=PASSWORD,
                        request=None)
    revision.refresh_from_db()
    return revision


@pytest.fixture
def signed_process(people):
    process = build_process()
    sign_all(process, people)
    return process


@pytest.fixture
def issued(signed_process):
    """A done dossier of the signed process, rendered in-process (fast)."""
    from hazards.dossier.services import dossier_render, dossier_request

    dossier, _ = dossier_request(process=signed_process, enqueue=False)
    dossier = dossier_render(dossier_id=dossier.pk, sandbox=False)
    assert dossier.status == "done", dossier.error
    return dossier


_RENDERED: dict = {}


@pytest.fixture
def issued_data(db):
    """One dossier rendered once per test session, read back by many tests as plain data.

    The rows go with the first test's transaction; later tests get the same bytes and values.
    """
    if not _RENDERED:
        from hazards.dossier.services import dossier_render, dossier_request
        from hazards.review.models import Signature

        people = {role: make_user(role) for role in ("author", "reviewer", "approver")}
        process = build_process()
        revision = sign_all(process, people)
        dossier, _ = dossier_request(process=process, enqueue=False)
        dossier = dossier_render(dossier_id=dossier.pk, sandbox=False)
        assert dossier.status == "done", dossier.error
        _RENDERED.update({
            "pdf": bytes(dossier.pdf),
            "dossier": dossier,
            "content": dossier.content,
            "process": {"name": process.name, "site": process.site.name},
            "revision": {"number": revision.number, "state": revision.get_state_display(),
                         "content": revision.content,
                         "content_sha256": revision.content_sha256},
            "signatures": [
                {"printed_name": s.printed_name, "signed_at": s.signed_at,
                 "meaning": s.get_meaning_display()}
                for s in Signature.objects.filter(revision=revision)
            ],
        })
    return _RENDERED
