"""Adiabatic (ARC-type) runs through the curve upload, end to end (issue 16 items 1-2).

The run is simulated from first-order kinetics, E = 100 kJ/mol, A = 1e9 1/s, ΔT_ad = 200 K,
in a cell of φ = 2 (METHODS.md §3.6 kinetics; tests/calcs/test_arc.py), then cooled back
to its start temperature; the pressure is 1 bar plus 2 bar of non-condensable gas at full
conversion plus a vapour term that vanishes on cooling. Written in lab units.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from django.core.files.uploadedfile import SimpleUploadedFile

from calcs.constants import R
from hazards import models as m
from tests.calcs.test_arc import RISE, E, simulated_run
from tests.factories import CalorimetryRunFactory, StepFactory

PHI = 2.0


def arc_file(points=6001):
    t, temp, _ = simulated_run(PHI, points=points)
    t0 = temp[0]
    tail_t = t[-1] + np.linspace(600.0, 12000.0, 20)
    tail_temp = t0 + 0.5 + (temp[-1] - t0 - 0.5) * np.exp(-(tail_t - t[-1]) / 1500.0)
    alpha = np.r_[PHI * (temp - t0) / RISE, np.ones(20)]
    time, temperature = np.r_[t, tail_t], np.r_[temp, tail_temp]
    pressure = 1e5 + 2e5 * alpha + 1e3 * (temperature - t0)
    rows = "".join(
        f"{a / 60:.5f},{b - 273.15:.5f},{c / 1e5:.6f}\n"
        for a, b, c in zip(time, temperature, pressure, strict=True)
    )
    raw = ("time [min],temperature [degC],pressure [bar]\n" + rows).encode()
    return raw, temperature, pressure


def upload(api, test, raw, **fields):
    data = {
        "sample_mass": "5 g",
        **fields,
        "file": SimpleUploadedFile("arc.csv", raw, content_type="text/csv"),
    }
    return api.post(f"/api/v1/decomposition-tests/{test}/curves/", data, format="multipart")


@pytest.mark.django_db
def test_an_adiabatic_run_gives_onset_e_phi_correction_tmr_pressure_gas_and_td24(api):
    step = StepFactory(specific_heat_capacity_j_per_kg_k=2000.0)
    CalorimetryRunFactory(step=step)
    test = api.post(
        "/api/v1/decomposition-tests/", {"step": step.pk, "method": "adiabatic"}, format="json"
    ).json()["id"]
    raw, temperature, pressure = arc_file()
    resp = upload(api, test, raw, phi_factor="2.0", free_volume="10 mL")
    assert resp.status_code == 201, resp.json()
    body = resp.json()
    curve = m.DecompositionCurve.objects.get(pk=body["id"])
    d = curve.derived
    # E of the run, first order (Townsend & Tou 1980): the simulated 100 kJ/mol
    assert d["activation_energy_j_per_mol"] == pytest.approx(E, rel=0.01)
    assert d["methods"]["activation_energy"] == "arc.first_order_activation_energy"
    onset = d["onset_k"]
    # the first row at 0.02 K/min of the simulated run (self-heat rate of the first-order law)
    rate = (
        RISE
        / PHI
        * 1e9
        * np.exp(-E / (R * temperature))
        * (1 - PHI * (temperature - temperature[0]) / RISE)
    )
    assert onset == pytest.approx(temperature[np.argmax(rate >= 0.02 / 60)], abs=0.2)
    # φ correction (METHODS.md §3.7): 1/T₀,ad = 1/T₀,m + (R/E)·ln φ
    corrected = 1 / (1 / onset + R / d["activation_energy_j_per_mol"] * math.log(PHI))
    assert body["corrected_onset_temperature"]["value"] == pytest.approx(
        corrected - 273.15, abs=1e-6
    )
    assert body["corrected_onset_temperature"]["value"] < onset - 273.15 - 5
    assert body["measured_tmr"]["unit"] == "min"
    assert body["tmr_at_corrected_onset"]["value"] < body["measured_tmr"]["value"]
    assert d["corrected"]["final_k"] == pytest.approx(corrected + PHI * d["measured_rise_k"])
    # pressure figures read from the file
    assert body["max_pressure"]["value"] == pytest.approx(pressure.max() / 1e5, rel=1e-5)
    assert body["max_pressure"]["unit"] == "bar"
    assert body["max_pressure_rate"]["value"] > 0
    # non-condensable gas, ideal gas: ΔP after cooling · V / (R·T) per kg of sample
    n = (pressure[-1] - pressure[0]) * 1e-5 / (R * temperature[-1]) / 5e-3
    assert body["non_condensable_gas"]["value"] == pytest.approx(n, rel=1e-4)
    assert body["non_condensable_gas"]["unit"] == "mol/kg"

    # the test's derived values and the scenario
    t = m.DecompositionTest.objects.get(pk=test)
    assert t.onset_temperature_k == pytest.approx(onset)
    assert t.phi_factor == PHI
    assert t.activation_energy_j_per_mol == pytest.approx(E, rel=0.01)
    # c_p of the step × φ × ΔT_meas (sample taken as the reaction mass)
    assert t.decomposition_energy_j_per_kg == pytest.approx(2000.0 * PHI * d["measured_rise_k"])
    assert t.kinetics["activation_energy_source"] == "curve"
    assert t.kinetics["files_sha256"] == [curve.sha256]
    snap = m.IndicatorSnapshot.objects.get(step=step, is_current=True)
    assert snap.methods["td24"] == "td24.adiabatic_phi_corrected"
    assert snap.parameters["corrected_onset_k"] == pytest.approx(corrected, rel=1e-9)
    assert not any("assumed" in w for w in snap.warnings)
    assert snap.values["td24_k"] is not None and snap.values["td24_k"] < corrected
    assert snap.inputs["decomposition_curves_sha256"] == [curve.sha256]


@pytest.mark.django_db
def test_a_typed_activation_energy_is_kept_and_used_for_the_correction(api):
    step = StepFactory(specific_heat_capacity_j_per_kg_k=2000.0)
    test = api.post(
        "/api/v1/decomposition-tests/",
        {"step": step.pk, "method": "adiabatic", "activation_energy": "80 kJ/mol"},
        format="json",
    )
    assert test.status_code == 201, test.json()
    raw, _, _ = arc_file(3001)
    body = upload(api, test.json()["id"], raw, phi_factor="2.0").json()
    d = m.DecompositionCurve.objects.get(pk=body["id"]).derived
    assert d["activation_energy_j_per_mol"] == 80e3
    assert d["methods"]["activation_energy"] == "typed on the test"
    t = m.DecompositionTest.objects.get(pk=test.json()["id"])
    assert t.activation_energy_j_per_mol == 80e3
    # no free volume: the gas is unknown and the pressure rise after cooling is said
    assert body["non_condensable_gas"] is None
    assert any("free volume" in w for w in body["warnings"])


@pytest.mark.django_db
def test_without_phi_the_run_is_stored_uncorrected_and_the_step_says_so(api):
    step = StepFactory(specific_heat_capacity_j_per_kg_k=2000.0)
    test = api.post(
        "/api/v1/decomposition-tests/", {"step": step.pk, "method": "adiabatic"}, format="json"
    ).json()["id"]
    raw, _, _ = arc_file(3001)
    body = upload(api, test, raw).json()
    assert body["corrected_onset_temperature"] is None
    assert any("not φ-corrected" in w for w in body["warnings"])
    snap = m.IndicatorSnapshot.objects.get(step=step, is_current=True)
    assert snap.methods["td24"] == "td24.adiabatic_uncorrected"
