"""A semi-batch step built on METHODS.md C1.7 (lab run) and C2.2 (plant vessel)."""

from __future__ import annotations

import hashlib

import numpy as np
import pytest
from rest_framework.test import APIClient

from calcs.constants import R
from calcs.semibatch import accumulated_fraction
from hazards.models import CalorimetrySeries
from hazards.services.records import record_create
from tests.conftest import make_user
from tests.factories import CalorimetryRunFactory, DecompositionTestFactory, StepFactory
from tests.review.factories import RoleFactory

K = 0.1 / 60  # C1.7: 0.1 1/min at 30 °C
TD = 3600.0


def c17_data(temperature_k=303.15, k=K, step_s=60.0):
    t = np.arange(0.0, 180 * 60.0 + 1, step_s)
    q = 60e3 * k * accumulated_fraction(t, k, TD)
    return {"time_s": t.tolist(), "heat_release_rate_w": q.tolist(),
            "dosed_fraction": np.minimum(t / TD, 1.0).tolist(),
            "reactor_temperature_k": [temperature_k] * t.size}


def attach_series(run, data):
    raw = repr(data).encode()
    return record_create(model=CalorimetrySeries, data=dict(
        run=run, file_name="generated.csv", original=raw, sha256=hashlib.sha256(raw).hexdigest(),
        columns={"time": "s"}, data=data, initial_mass_kg=0.4, feed_mass_kg=0.1,
        derived={"method": "generated for the test"}))


@pytest.fixture
def plain_step(db):
    """C2.2 plant (U 350, A 12 m², coolant 10 °C, 5000 kg, c_p 2000) running C1.7 for 60 min;
    TD24 105.8 °C (C3.2 kinetics, c_p 2000), toluene open at 1 atm (MTT 110.6 °C)."""
    step = StepFactory(operation_mode="semi_batch", dosing_time_s=TD)
    run = CalorimetryRunFactory(step=step, specific_reaction_heat_j_per_kg=120e3,
                                max_accumulation=0.166254, max_heat_release_rate_w_per_kg=33.25)
    DecompositionTestFactory(step=step, activation_energy_j_per_mol=100e3,
                             reference_temperature_k=453.15,
                             heat_release_rate_at_reference_w_per_kg=50.0)
    step.run = run
    return step


@pytest.fixture
def step(plain_step):
    attach_series(plain_step.run, c17_data())
    return plain_step


@pytest.fixture
def second_run(step):
    """A run at 40 °C of the same reaction with E_a = 70 kJ/mol."""
    k40 = K * float(np.exp(-70e3 / R * (1 / 313.15 - 1 / 303.15)))
    from hazards.services.records import record_update

    record_update(instance=step.run, data={"is_basis": True})
    run = CalorimetryRunFactory(step=step, specific_reaction_heat_j_per_kg=120e3,
                                run_date="2020-01-01")
    attach_series(run, c17_data(313.15, k40))
    return run


@pytest.fixture
def author(db):
    return make_user("author")


@pytest.fixture
def author_of(step, author):
    RoleFactory(process=step.process, user=author, role="author")
    return author


@pytest.fixture
def client_for():
    def make(user):
        client = APIClient()
        client.force_authenticate(user)
        return client
    return make
