"""One operating point, one answer (issue 21, item 3): the what-if at the step's own point is
the step's recorded indicators, whatever the lab series was dosed over.

The lab run is METHODS.md C1.7 (60 min feed), the plant C2.2 dosing over 180 min; values
[COMPUTED] from the pseudo-first-order model (Stoessel 2008, Thermal Safety of Chemical
Processes, ch. 7, semi-batch reactors; METHODS.md §1.1 note on the mass present).
"""

from __future__ import annotations

import re
from html import unescape

import pytest
from django.test import Client

from hazards.dossier.charts import plant_dosing_curves
from hazards.dossier.view import _step as dossier_view_step
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


def test_the_step_page_shows_the_lab_basis_beside_the_plants_point(plant_step, admin_user):
    client = Client()
    client.force_login(admin_user)
    html = unescape(" ".join(client.get(f"/steps/{plant_step.pk}/").content.decode().split()))
    assert "Lab run and plant differ in dosing time: the indicators are evaluated at the " \
           "plant's point." in html
    # plant 180 min used, lab run 60 min beside it
    row = re.search(r'<th scope="row">Dosing time</th>(.*?)</tr>', html).group(1)
    assert re.findall(r"<td[^>]*>([^<]*)", row) == ["180", "60", "min "], row
    assert "<strong>differs</strong>" in row
    # the MTSR's method names the model, the plant's time and the lab run
    run = plant_step.run.pk
    assert (f"dosing model (series fit) at the plant's 180 min; lab series of calorimetry run "
            f"#{run}") in html


def test_the_dossier_view_words_the_operating_point(plant_step):
    snap = snapshot(plant_step)
    view = dossier_view_step({"id": plant_step.pk, "sequence": 1, "name": "s",
                              "snapshot": {"inputs": snap.inputs, "values": snap.values,
                                           "methods": snap.methods,
                                           "parameters": snap.parameters,
                                           "warnings": snap.warnings}}, {})
    op = view["operating_point"]
    assert op["differs"] == ["dosing time"]
    assert op["mode"] == "dosing model at the plant's dosing time, temperature and fill"
    assert [(r["label"], r["plant"], r["lab"], r["unit"]) for r in op["rows"]][0] == (
        "Dosing time", "180", "60", "min")
    mtsr = next(r for r in view["indicators"] if r["label"] == "MTSR")
    assert mtsr["method"].startswith("semi-batch: dosing model fitted to the lab series, at "
                                     "the plant's dosing time")
    labels = {p["key"]: p for p in view["parameters"]}
    assert labels["lab_dosing_time_s"]["label"] == "Dosing time of the lab run"
    assert labels["operating_point_mode"]["value"] == op["mode"]


def test_the_power_chart_runs_on_the_plants_time_axis(plant_step):
    snap = snapshot(plant_step)
    curves = plant_dosing_curves({"inputs": snap.inputs, "values": snap.values,
                                  "parameters": snap.parameters})
    # the largest heat release is the recorded plant peak, at the end of the 180 min feed
    i = int(curves["heat_release_w"].argmax())
    assert curves["heat_release_w"][i] == pytest.approx(snap.values["plant_peak_heat_release_w"],
                                                        rel=1e-9)
    assert curves["time_s"][i] == pytest.approx(PLANT_TD)
    assert max(curves["mtsr_k"]) == pytest.approx(snap.values["mtsr_k"], abs=0.05)


def test_with_runs_at_two_temperatures_the_step_and_the_what_if_share_the_fitted_ea(
        step, second_run):
    # runs at 30 and 40 °C generated with E_a = 70 kJ/mol (conftest); the plant at 35 °C over
    # 180 min: the step's indicators move k by the same fitted E_a as the what-if does
    record_update(instance=step, data={"dosing_time_s": PLANT_TD,
                                       "process_temperature_k": 308.15})
    snap = snapshot(step)
    assert snap.parameters["operating_point_mode"] == "model"
    assert snap.parameters["dosing_activation_energy_j_per_mol"] == pytest.approx(70e3, rel=1e-3)
    assert snap.parameters["operating_point_differences"] == "dosing time, temperature"
    point = at_own_point(step)
    assert point.mtsr_k == pytest.approx(snap.values["mtsr_k"], abs=1e-9)
    assert point.cooling_margin == pytest.approx(snap.values["cooling_margin"], rel=1e-9)
