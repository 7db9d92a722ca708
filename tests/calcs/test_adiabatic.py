"""Adiabatic temperature rise and MTSR follow METHODS.md §1.1."""

import pytest
from hypothesis import given
from hypothesis import strategies as st

from calcs.adiabatic import (
    adiabatic_temperature_rise,
    adiabatic_temperature_rise_concentration,
    adiabatic_temperature_rise_molar,
    adiabatic_temperature_rise_specific,
    mtsr_batch,
    mtsr_semi_batch,
)
from calcs.errors import CalcInputError


def test_rise_from_molar_enthalpy_and_amount_matches_c1_2():
    # METHODS.md C1.2 [COMPUTED]
    assert adiabatic_temperature_rise_molar(120e3, 2.0, 0.80, 1900.0) == pytest.approx(
        157.895, abs=1e-3)


def test_rise_from_molar_enthalpy_and_concentration_matches_c1_3():
    # METHODS.md C1.3 [COMPUTED]
    assert adiabatic_temperature_rise_concentration(85e3, 1200.0, 950.0, 2100.0) == pytest.approx(
        51.128, abs=1e-3)


def test_rise_from_specific_heat_matches_c1_4():
    # METHODS.md C1.4 [COMPUTED]
    assert adiabatic_temperature_rise_specific(400e3, 2000.0) == pytest.approx(200.0)


def test_rise_from_heat_and_thermal_mass():
    # METHODS.md C1.7: Q_tot 60 kJ into 0.5 kg at 2000 J/(kg K) is 60 K [COMPUTED]
    assert adiabatic_temperature_rise(60e3, 0.5, 2000.0) == pytest.approx(60.0)


def test_batch_mtsr_matches_c1_6():
    # METHODS.md C1.6 [COMPUTED]
    assert mtsr_batch(303.15, 60.0) - 273.15 == pytest.approx(90.0)
    assert mtsr_batch(303.15, 60.0, conversion=0.4) - 273.15 == pytest.approx(66.0)


def test_semi_batch_mtsr_from_maximum_accumulation_matches_c1_7_end_of_feed():
    # METHODS.md C1.7 analytic: X_ac(t_d) = 0.166254, MTSR 39.975 °C [COMPUTED]
    assert mtsr_semi_batch(303.15, 60.0, 0.166254) - 273.15 == pytest.approx(39.975, abs=1e-3)


@given(st.floats(0.0, 1e7), st.floats(0.0, 1e7), st.floats(0.1, 1e4), st.floats(100.0, 5000.0))
def test_rise_is_linear_in_heat(q1, q2, m, cp):
    # common practice, no source: ΔT_ad = Q/(m c_p) is linear in Q
    total = adiabatic_temperature_rise(q1 + q2, m, cp)
    parts = adiabatic_temperature_rise(q1, m, cp) + adiabatic_temperature_rise(q2, m, cp)
    assert total == pytest.approx(parts, rel=1e-12, abs=1e-12)


@given(st.floats(0.0, 1.0), st.floats(0.0, 1.0), st.floats(0.0, 500.0))
def test_mtsr_is_monotone_in_accumulation(x1, x2, dt):
    lo, hi = sorted((x1, x2))
    assert mtsr_semi_batch(300.0, dt, lo) <= mtsr_semi_batch(300.0, dt, hi)


def test_bad_inputs_raise_errors_naming_argument_value_and_rule():
    with pytest.raises(CalcInputError) as e:
        mtsr_batch(-5.0, 60.0)
    assert str(e.value) == (
        "process_temperature_k = -5.0: must be an absolute temperature above 0 K")
    assert (e.value.argument, e.value.value) == ("process_temperature_k", -5.0)
    with pytest.raises(CalcInputError, match="conversion = 1.5: must be a fraction"):
        mtsr_batch(300.0, 60.0, 1.5)
    with pytest.raises(CalcInputError, match="max_accumulation = -0.1: must be a fraction"):
        mtsr_semi_batch(300.0, 60.0, -0.1)
    with pytest.raises(CalcInputError, match="heat_j = nan: must be a finite number"):
        adiabatic_temperature_rise(float("nan"), 1.0, 2000.0)
    with pytest.raises(CalcInputError, match="mass_kg = 0.0: must be greater than 0"):
        adiabatic_temperature_rise(1.0, 0.0, 2000.0)
