"""Records created through the API with non-canonical units read back in canonical units.

Every conversion factor is checked against NIST SP 811 (2008), Appendix B ("B.8 Factors for
units listed alphabetically"), or the ISO 80000 definition it cites.
"""

from __future__ import annotations

import pytest

from hazards import models as m
from tests.factories import SiteFactory

pytestmark = pytest.mark.django_db

ATM_PA = 101325.0  # ISO 80000-4 / NIST SP 811 B.8: 1 standard atmosphere = 101 325 Pa exactly


@pytest.fixture
def site():
    return SiteFactory(code="north", name="North works")


def test_a_process_step_and_measurements_round_trip_through_non_canonical_units(api, site):
    process = api.post("/api/v1/processes/", {"name": "Unit trial", "site": "north"},
                       format="json")
    assert process.status_code == 201, process.json()

    step = api.post(
        "/api/v1/steps/",
        {
            "process": process.json()["id"],
            "sequence": 1,
            "name": "Charge and heat",
            "operation_mode": "semi_batch",
            # NIST SP 811 B.8: T/K = (t/°F + 459.67)/1.8, so 122 °F = 323.15 K = 50 °C exactly.
            "process_temperature": {"value": 122, "unit": "degF"},
            "reaction_mass": "2.5 t",  # NIST SP 811 B.8: 1 t = 1000 kg
            # NIST SP 811 B.8: 1 cal_th = 4.184 J, so 0.5 cal/(g K) = 2.092 kJ/(kg K)
            "specific_heat_capacity": "0.5 cal/(g*K)",
            "system": "open",
            # Gauge: 2 bar g = 2 bar + 1 atm = 3.01325 bar absolute (ISO 80000-4, 1 atm).
            "operating_pressure": "2 bar g",
            "dosing_time": {"value": 1.5, "unit": "h"},  # NIST SP 811 B.8: 1 h = 3600 s
        },
        format="json",
    )
    assert step.status_code == 201, step.json()
    body = api.get(f"/api/v1/steps/{step.json()['id']}/").json()
    assert body["process_temperature"]["unit"] == "degC"
    assert body["process_temperature"]["value"] == pytest.approx(50.0, abs=1e-12)
    assert body["reaction_mass"] == {"value": pytest.approx(2500.0), "unit": "kg"}
    assert body["specific_heat_capacity"]["value"] == pytest.approx(2.092, rel=1e-12)
    assert body["operating_pressure"]["value"] == pytest.approx(3.01325, rel=1e-12)
    assert body["operating_pressure"]["unit"] == "bar"
    assert body["dosing_time"] == {"value": pytest.approx(90.0), "unit": "min"}
    stored = m.ReactionStep.objects.get()
    assert stored.operating_pressure_pa == pytest.approx(2e5 + ATM_PA, rel=1e-12)
    assert stored.process_temperature_k == pytest.approx(323.15, abs=1e-12)

    run = api.post(
        "/api/v1/calorimetry-runs/",
        {
            "step": stored.pk,
            # NIST SP 811 B.8: 1 kcal_th = 4184 J, so 100 kcal/kg = 418.4 kJ/kg
            "specific_reaction_heat": {"value": 100, "unit": "kcal/kg"},
            "max_accumulation": {"value": 35, "unit": "percent"},
            # 1 mW/g = 1e-3 W / 1e-3 kg = 1 W/kg (SI prefixes, ISO 80000-1)
            "max_heat_release_rate": "12.5 mW/g",
            "gas_release": "0.2 mmol/g",  # = 0.2 mol/kg
        },
        format="json",
    )
    assert run.status_code == 201, run.json()
    body = api.get(f"/api/v1/calorimetry-runs/{run.json()['id']}/").json()
    assert body["specific_reaction_heat"] == {"value": pytest.approx(418.4, rel=1e-12),
                                              "unit": "kJ/kg"}
    assert body["max_accumulation"]["value"] == pytest.approx(0.35, rel=1e-12)
    assert body["max_heat_release_rate"] == {"value": pytest.approx(12.5), "unit": "W/kg"}
    assert body["gas_release"]["value"] == pytest.approx(0.2, rel=1e-12)

    test = api.post(
        "/api/v1/decomposition-tests/",
        {
            "step": stored.pk,
            "method": "dsc",
            # NIST SP 811 B.8: 482 °F = (482 + 459.67)/1.8 K = 523.15 K = 250 °C
            "onset_temperature": "482 °F",
            # 1 J/g = 1 kJ/kg; 150 cal_th/g = 627.6 J/g (NIST SP 811 B.8)
            "decomposition_energy": {"value": 150, "unit": "cal/g"},
            "heating_rate": "4 K/min",
            # 1 kcal_th/mol = 4.184 kJ/mol (NIST SP 811 B.8)
            "activation_energy": {"value": 25, "unit": "kcal/mol"},
            "reference_temperature": "150 degC",
            "heat_release_rate_at_reference": "3 mW/g",
        },
        format="json",
    )
    assert test.status_code == 201, test.json()
    body = api.get(f"/api/v1/decomposition-tests/{test.json()['id']}/").json()
    assert body["onset_temperature"]["value"] == pytest.approx(250.0, abs=1e-9)
    assert body["decomposition_energy"]["value"] == pytest.approx(627.6, rel=1e-12)
    assert body["heating_rate"] == {"value": pytest.approx(4.0), "unit": "K/min"}
    assert body["activation_energy"]["value"] == pytest.approx(104.6, rel=1e-12)
    assert body["heat_release_rate_at_reference"]["value"] == pytest.approx(3.0)


def test_a_psi_gauge_relief_pressure_is_stored_absolute(api):
    # NIST SP 811 B.8: 1 psi = 6.894 757 kPa; 1 atm = 14.695 95 psi (rounded in calcs.units).
    resp = api.post(
        "/api/v1/vessels/",
        {"name": "Pilot", "tag": "P-1", "volume": "250 L", "heat_transfer_area": "1.9 m**2",
         "heat_transfer_coefficient": "300 W/(m**2*K)", "coolant_temperature": "5 degC",
         "design_pressure": "100 psig", "relief_set_pressure": "6 bar g"},
        format="json",
    )
    assert resp.status_code == 201, resp.json()
    vessel = m.Vessel.objects.get(tag="P-1")
    assert vessel.volume_m3 == pytest.approx(0.25, rel=1e-12)  # 1 L = 1e-3 m³ (SP 811 B.8)
    assert vessel.design_pressure_pa == pytest.approx((100 + 14.695949) * 6894.757293168,
                                                      rel=1e-6)
    assert vessel.relief_set_pressure_pa == pytest.approx(6e5 + ATM_PA, rel=1e-12)


def _step_payload(process_id, **overrides):
    payload = {
        "process": process_id, "sequence": 7, "name": "Bad", "operation_mode": "batch",
        "process_temperature": "30 degC", "reaction_mass": "1000 kg",
        "specific_heat_capacity": "2 kJ/(kg*K)", "system": "open",
        "operating_pressure": "1.01325 bar",
    }
    payload.update(overrides)
    return payload


@pytest.mark.parametrize(
    ("field", "value", "says"),
    [
        ("process_temperature", "-300 degC", "absolute zero"),
        ("process_temperature", {"value": -10, "unit": "K"}, "absolute zero"),
        ("process_temperature", "30 kg", "wrong dimension"),
        ("reaction_mass", "-5 kg", "greater than zero"),
        ("reaction_mass", "NaN kg", "finite"),
        ("operating_pressure", "3 parsecs", "wrong dimension"),
        ("specific_heat_capacity", "2 blorps", "not a known unit"),
        ("operating_pressure", {"value": "1e999", "unit": "bar"}, "number"),
    ],
)
def test_a_bad_quantity_gets_a_400_naming_the_field_and_saves_nothing(api, site, field, value,
                                                                      says):
    process = m.Process.objects.create(name="P", site=site)
    before = m.ReactionStep.objects.count()
    resp = api.post("/api/v1/steps/", _step_payload(process.pk, **{field: value}), format="json")
    assert resp.status_code == 400
    errors = resp.json()
    assert field in str(errors), errors
    assert says in str(errors).lower(), errors
    assert m.ReactionStep.objects.count() == before


def test_an_accumulation_above_one_is_refused(api, site):
    process = m.Process.objects.create(name="P", site=site)
    step = api.post("/api/v1/steps/", _step_payload(process.pk), format="json").json()
    resp = api.post("/api/v1/calorimetry-runs/",
                    {"step": step["id"], "specific_reaction_heat": "100 kJ/kg",
                     "max_accumulation": 1.2}, format="json")
    assert resp.status_code == 400
    assert "max_accumulation" in str(resp.json())
    assert "0..1" in str(resp.json())
    assert m.CalorimetryRun.objects.count() == 0


def test_a_molar_heat_needs_and_uses_a_molar_mass(api, site):
    process = m.Process.objects.create(name="P", site=site)
    step = api.post("/api/v1/steps/", _step_payload(process.pk), format="json").json()
    refused = api.post("/api/v1/calorimetry-runs/",
                       {"step": step["id"], "specific_reaction_heat": "120 kJ/mol"}, format="json")
    assert refused.status_code == 400
    assert "molar_mass" in str(refused.json())
    # METHODS.md §10: 120 kJ/mol with M = 150 g/mol is 800 J/g of that reagent.
    ok = api.post("/api/v1/calorimetry-runs/",
                  {"step": step["id"], "specific_reaction_heat":
                   {"value": 120, "unit": "kJ/mol", "molar_mass": "150 g/mol"}}, format="json")
    assert ok.status_code == 201, ok.json()
    assert ok.json()["specific_reaction_heat"]["value"] == pytest.approx(800.0, rel=1e-12)


@pytest.mark.parametrize(
    ("field", "value"),
    [
        ("process_temperature", {"value": 5e-324, "unit": "K"}),  # above 0 K, yet no record
        ("process_temperature", "1e6 degC"),
        ("reaction_mass", "1e308 kg"),
        ("specific_heat_capacity", "2 J/(kg*K)"),  # typed J for kJ: below any liquid's cp
    ],
)
def test_a_finite_but_implausible_value_is_refused_as_a_likely_unit_mistake(api, site, field,
                                                                              value):
    process = m.Process.objects.create(name="P", site=site)
    resp = api.post("/api/v1/steps/", _step_payload(process.pk, **{field: value}), format="json")
    assert resp.status_code == 400
    assert "plausible range" in str(resp.json()) and field in str(resp.json())
    assert not m.ReactionStep.objects.exists()


def test_an_overlong_reason_is_refused(api, site):
    process = m.Process.objects.create(name="P", site=site)
    resp = api.post("/api/v1/steps/", _step_payload(
        process.pk, mtt_override="90 degC", mtt_override_reason="x" * 2001), format="json")
    assert resp.status_code == 400
    assert "mtt_override_reason" in str(resp.json())
    assert not m.ReactionStep.objects.exists()


def test_the_step_api_takes_the_initial_charge_and_the_non_volatile_declaration(api, site):
    # issue 15 items 1 and 2: the declaration needs its basis (database rule, 400 naming it,
    # nothing saved); "80 %" of the final mass is 0.8 (ISO 80000-1)
    process = m.Process.objects.create(name="P", site=site)
    before = m.ReactionStep.objects.count()
    resp = api.post("/api/v1/steps/", _step_payload(process.pk, non_volatile_declared=True),
                    format="json")
    assert resp.status_code == 400 and "needs its basis" in str(resp.json())
    assert m.ReactionStep.objects.count() == before
    resp = api.post("/api/v1/steps/", _step_payload(
        process.pk, non_volatile_declared=True, non_volatile_reason="polymer melt, no solvent",
        initial_mass_fraction="80 %"), format="json")
    assert resp.status_code == 201, resp.json()
    body = resp.json()
    assert body["non_volatile_declared"] is True
    assert body["initial_mass_fraction"]["value"] == pytest.approx(0.8)


@pytest.mark.django_db
@pytest.mark.parametrize(("field", "entered", "shown"), [
    ("specific_heat_capacity", "1.9 kJ/(kg*K)", 1.9),
    ("operating_pressure", "2.2 bar", 2.2),
    ("process_temperature", "86 degF", 30.0),
])
def test_converted_values_come_back_without_float_noise(api, field, entered, shown):
    # Issue 21 item 8: the API answered 1.9000000000000001 and 2.2000000000000006.
    # 86 °F = 30 °C exactly (NIST SP 811: t/°C = (t/°F - 32)/1.8).
    from tests.factories import StepFactory

    step = StepFactory()
    etag = api.get(f"/api/v1/steps/{step.pk}/")["ETag"]
    response = api.patch(f"/api/v1/steps/{step.pk}/", {field: entered}, format="json",
                         HTTP_IF_MATCH=etag)
    assert response.status_code == 200, response.json()
    assert response.json()[field]["value"] == shown
    assert repr(api.get(f"/api/v1/steps/{step.pk}/").json()[field]["value"]) == repr(shown)
