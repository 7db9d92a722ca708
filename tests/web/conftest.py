"""Personas of the pages: one person per role on one measured process, and an outsider."""

from __future__ import annotations

import math

import pytest
from django.test import Client, RequestFactory

from hazards.review.models import ProcessRole
from hazards.review.services import revisions
from tests.conftest import PASSWORD, make_user
from tests.factories import (
    CalorimetryRunFactory,
    DecompositionTestFactory,
    ProcessFactory,
    SiteFactory,
    StepFactory,
)


@pytest.fixture
def people(db):
    return {name: make_user(name) for name in ("author", "reviewer", "approver", "auditor",
                                               "outsider")}


@pytest.fixture
def process(people):
    site = SiteFactory(code="varnholt", name="Varnholt works")
    process = ProcessFactory(name="Sulfonation of QX-4", site=site,
                             description="Invented route of Quillmere Speciality Chemicals.")
    step = StepFactory(process=process, sequence=1, name="Sulfonation in water")
    CalorimetryRunFactory(step=step, is_basis=True)
    DecompositionTestFactory(step=step, is_basis=True)
    for role in ("author", "reviewer", "approver", "auditor"):
        ProcessRole.objects.create(process=process, user=people[role], role=role)
    return process


@pytest.fixture
def step(process):
    return process.steps.get()


@pytest.fixture
def client_as():
    def make(user):
        client = Client()
        if user is not None:
            client.force_login(user)
        return client
    return make


def signing_request(user):
    request = RequestFactory().post("/sign/")
    request.user = user
    return request


def sign(revision, user, meaning):
    return revisions.revision_sign(revision=revision, user=user, password=PASSWORD,
                                   meaning=meaning, request=signing_request(user))


@pytest.fixture
def lodged(process, people):
    """The process's first revision, signed by its author (so its data are under review)."""
    revision = revisions.revision_open(process=process, user=people["author"])
    sign(revision, people["author"], "authored")
    revision.refresh_from_db()
    return revision


def series_csv(*, unit_rate: str = "W", bad_cells: dict | None = None,
               reactor_c: float = 30.0) -> bytes:
    """METHODS.md C1.7-like record: 60 min linear feed of 100 g, k = 0.1/min, Q_tot 60 kJ."""
    k, td, q_tot = 0.1, 60.0, 60e3
    lines = [f"time [min],heat_release_rate [{unit_rate}],dosed_mass [g],reactor_temperature [degC]"]
    for i, t in enumerate(range(0, 190, 10)):
        acc = ((1 - math.exp(-k * t)) / (k * td) if t <= td else
               (1 - math.exp(-k * td)) / (k * td) * math.exp(-k * (t - td)))
        rate = q_tot * k / 60 * acc
        row = [f"{t}", f"{rate:.4f}", f"{min(t / td, 1.0) * 100:.3f}", f"{reactor_c:.1f}"]
        for (row_index, col), value in (bad_cells or {}).items():
            if row_index == i:
                row[col] = value
        lines.append(",".join(row))
    return ("\n".join(lines) + "\n").encode()


__all__ = ["PASSWORD", "series_csv", "sign"]
