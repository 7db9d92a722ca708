"""One operating point, one answer (issue 21, item 3): the what-if at the step's own point is
the step's recorded indicators, whatever the lab series was dosed over.

The lab run is METHODS.md C1.7 (60 min feed), the plant C2.2 dosing over 180 min; values
[COMPUTED] from the pseudo-first-order model (Stoessel 2008, Thermal Safety of Chemical
Processes, ch. 7, semi-batch reactors; METHODS.md §1.1 note on the mass present).
"""

from __future__ import annotations

import pytest

from hazards.models import IndicatorSnapshot
from hazards.services.records import record_update
from hazards.whatif import services

pytestmark = pytest.mark.django_db

PLANT_TD = 10800.0


def snapshot(step):
    return IndicatorSnapshot.objects.get(step=step, is_current=True)


@pytest.fixture
def plant_step(step):
    """The what-if fixture step (C1.7 series dosed over 60 min), dosed over 180 min."""
    record_update(instance=step, data={"dosing_time_s": PLANT_TD})
    step.refresh_from_db()
    return step


def at_own_point(step):
    case, rows = services.load(step.pk)
    model = services.build_model(case, rows)
    return services.evaluate(case, model, dosing_time_s=case.scenario_inputs.dosing_time_s)


def test_the_step_and_the_what_if_at_its_own_point_give_one_answer(plant_step):
    values = snapshot(plant_step).values
    point = at_own_point(plant_step)
    # 33.88 °C at the plant's 180 min, not 40.58 °C of the lab's 60 min (METHODS.md C1.7)
    assert values["mtsr_k"] - 273.15 == pytest.approx(33.879, abs=2e-3)
    assert point.mtsr_k == pytest.approx(values["mtsr_k"], abs=1e-9)
    assert point.peak_heat_release_w == pytest.approx(values["plant_peak_heat_release_w"],
                                                      rel=1e-9)
    assert point.cooling_margin == pytest.approx(values["cooling_margin"], rel=1e-9)
    assert point.criticality_class == values["criticality_class"]
    assert point.tmr_ad_at_mtsr_s == pytest.approx(values["tmr_ad_at_mtsr_s"], rel=1e-9)


def test_at_the_labs_own_point_both_read_the_series_as_measured(step):
    values = snapshot(step).values
    point = at_own_point(step)
    assert snapshot(step).parameters["operating_point_mode"] == "series"
    assert point.mtsr_k == pytest.approx(values["mtsr_k"], abs=1e-9)
    assert point.cooling_margin == pytest.approx(values["cooling_margin"], rel=1e-9)


def test_the_step_warns_that_lab_and_plant_dosing_times_differ(plant_step):
    snap = snapshot(plant_step)
    assert snap.parameters["operating_point_mode"] == "model"
    assert any("lab and plant differ in dosing time (lab 60 min, plant 180 min)" in w
               for w in snap.warnings), snap.warnings
