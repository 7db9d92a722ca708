"""φ-factor corrections reproduce METHODS.md C3.7 ([MEMORY] formulas per METHODS.md)."""

import pytest

from calcs.errors import CalcInputError
from calcs.phi import (
    corrected_final_temperature,
    corrected_onset_temperature,
    corrected_self_heat_rate,
    corrected_temperature_rise,
    corrected_tmr,
    phi_factor,
)
from calcs.tmr import tmr_shift_zero_order


def test_c3_7_phi_and_its_corrections():
    # METHODS.md C3.7 [COMPUTED]; formulas [MEMORY] per METHODS.md (Fisher & Goetz 1991)
    phi = phi_factor(0.005, 2000.0, 0.018, 520.0)
    assert phi == pytest.approx(1.936, abs=1e-3)
    assert corrected_temperature_rise(phi, 150.0) == pytest.approx(290.4, abs=0.05)
    t0 = corrected_onset_temperature(423.15, 100e3, phi)
    assert t0 == pytest.approx(413.538, abs=1e-3)
    assert t0 - 273.15 == pytest.approx(140.39, abs=0.005)
    assert corrected_tmr(phi, 120 * 60.0) / 60 == pytest.approx(61.98, abs=0.005)
    assert tmr_shift_zero_order(corrected_tmr(phi, 7200.0), 423.15, t0, 100e3) / 60 == (
        pytest.approx(114.6, abs=0.05))
    assert corrected_final_temperature(t0, phi, 150.0) - 273.15 == pytest.approx(430.79, abs=0.01)
    assert corrected_self_heat_rate(phi, 1.0) == pytest.approx(phi)


def test_phi_below_one_is_refused():
    with pytest.raises(CalcInputError, match="phi = 0.9: must be at least 1"):
        corrected_tmr(0.9, 100.0)
