"""Every snapshot and every dossier names the library releases behind its numbers and pages,
so that a changed number can be traced to a changed library (issue: reproducible installs)."""

from __future__ import annotations

import platform
from importlib import metadata

import pytest

from hazards.models import IndicatorSnapshot
from tests.factories import CalorimetryRunFactory, StepFactory

pytestmark = pytest.mark.django_db


def installed(name: str) -> str:
    # The installed distribution's own metadata is the outside reference here.
    return metadata.version(name)


def test_a_new_snapshot_records_python_and_the_numeric_libraries_that_computed_it():
    step = StepFactory()
    CalorimetryRunFactory(step=step, specific_reaction_heat_j_per_kg=100e3)
    snapshot = IndicatorSnapshot.objects.get(step=step, is_current=True)
    assert snapshot.libraries["python"] == platform.python_version()
    for name in ("numpy", "scipy", "pint", "chemicals"):
        assert snapshot.libraries[name] == installed(name), name


def test_the_api_shows_the_versions_beside_the_calcs_version(api):
    step = StepFactory()
    CalorimetryRunFactory(step=step, specific_reaction_heat_j_per_kg=100e3)
    indicators = api.get(f"/api/v1/steps/{step.pk}/").json()["indicators"]
    assert indicators["libraries"]["numpy"] == installed("numpy")
    assert indicators["libraries"]["calcs"] == indicators["calcs_version"]


def test_the_step_page_names_the_versions(client, admin_user):
    step = StepFactory()
    CalorimetryRunFactory(step=step, specific_reaction_heat_j_per_kg=100e3)
    client.force_login(admin_user)
    page = client.get(f"/steps/{step.pk}/").content.decode()
    assert f"scipy {installed('scipy')}" in page

