"""The MTT method table (calcs.mtt_methods) is the scenario's choice: the first method of
mtt_methods is the one assess_step names, and mtt(..., method=...) gives the MTT it reports."""

from __future__ import annotations

import dataclasses

import pytest

from calcs import mtt_methods as mm
from calcs.scenario import StepInputs, assess_step
from calcs.vapour import AntoineInputs, antoine_vapour_pressure

CP = 2000.0
# toluene, the entered Antoine set of tests/calcs/test_scenario.py (Pa, K; 286-410 K)
TOLUENE = AntoineInputs(9.05043, 1327.62, -55.525, "10", "Pa", "K", 286.44, 409.61)
COMMON = dict(specific_reaction_heat_j_per_kg=100e3, onset_temperature_k=473.15,
              decomposition_method="dsc", solvent_antoine=TOLUENE)


def test_open_vessel_boiling_point_and_override():
    s = StepInputs("batch", 303.15, 1000.0, CP, "open", 101325.0, None, **COMMON)
    a = assess_step(s)
    assert mm.mtt_methods(system="open", vapour_data=True) == [mm.BOILING_POINT]
    assert a.methods["mtt"] == "mtt.boiling_point.antoine"
    assert mm.mtt(antoine=TOLUENE, operating_pressure_pa=101325.0) == a.mtt_k
    over = assess_step(dataclasses.replace(s, mtt_override_k=390.0))
    assert over.methods["mtt"] == mm.OVERRIDE and over.mtt_k == 390.0


@pytest.mark.parametrize("relief, design, method", [(4e5, 6e5, mm.CLOSED_VESSEL_RELIEF),
                                                    (None, 6e5, mm.CLOSED_VESSEL_DESIGN)])
def test_closed_vessel_at_its_relief_or_design_pressure(relief, design, method):
    s = StepInputs("batch", 303.15, 1000.0, CP, "closed", 101325.0, None, **COMMON,
                   vessel_relief_set_pressure_pa=relief, vessel_design_pressure_pa=design)
    a = assess_step(s)
    first = mm.mtt_methods(system="closed", vapour_data=True, relief_set_pressure_pa=relief,
                           design_pressure_pa=design)[0]
    assert first == method == a.methods["mtt"]
    pad = 101325.0 - antoine_vapour_pressure(303.15, TOLUENE)
    by_table = mm.mtt(system="closed", antoine=TOLUENE, relief_set_pressure_pa=relief,
                      design_pressure_pa=design, pad_pressure_pa=pad,
                      process_temperature_k=303.15)
    assert by_table == pytest.approx(a.mtt_k, rel=1e-12)


def test_closed_vessel_without_vapour_data_is_unknown_not_low():
    s = StepInputs("batch", 303.15, 1000.0, CP, "closed", 101325.0, None,
                   **{**COMMON, "solvent_antoine": None}, vessel_relief_set_pressure_pa=4e5)
    assert assess_step(s).mtt_k is None
    assert mm.mtt(system="closed", relief_set_pressure_pa=4e5,
                  method=mm.CLOSED_VESSEL_RELIEF, process_temperature_k=303.15) is None
    with pytest.raises(ValueError, match="mtt.guess.*known: mtt.override"):
        mm.mtt(method="mtt.guess")
