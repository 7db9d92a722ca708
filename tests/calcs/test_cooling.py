"""Cooling capacity, dosing time and scale-up reproduce METHODS.md C2.2 and C2.3."""

import math

import pytest

from calcs.cooling import (
    adiabatic_rise_rate,
    cooling_capacity,
    cooling_margin,
    cooling_time_constant,
    log_mean_temperature_difference,
    plant_peak_heat_release,
    specific_cooling_capacity,
)
from calcs.errors import CalcInputError
from calcs.scale_up import (
    accumulation_end_of_feed_first_order,
    area_to_volume_similar,
    cylinder_h_equals_d,
    minimum_dosing_time,
    minimum_dosing_time_first_order,
)


def test_plant_cooling_matches_c2_2():
    # METHODS.md C2.2 [COMPUTED]
    q = cooling_capacity(350.0, 12.0, 303.15, 283.15)
    assert q == pytest.approx(84.0e3)
    assert specific_cooling_capacity(q, 5000.0) == pytest.approx(16.8)
    assert cooling_time_constant(5000.0, 2000.0, 350.0 * 12.0) == pytest.approx(2381, abs=0.5)


def test_minimum_dosing_time_matches_c2_2():
    # METHODS.md C2.2 [COMPUTED]: 119.05 min both ways; X_ac(t_d) = 0.0840
    exact = minimum_dosing_time_first_order(120e3, 0.1 / 60, 16.8)
    assert exact / 60 == pytest.approx(119.05, abs=0.01)
    assert minimum_dosing_time(600e6, 84e3) == pytest.approx(7143, abs=0.5)
    assert accumulation_end_of_feed_first_order(0.1 / 60, exact) == pytest.approx(0.0840,
                                                                                 abs=1e-4)
    assert 303.15 + 0.0840 * 60 - 273.15 == pytest.approx(35.04)


def test_an_instant_feed_that_can_be_cooled_needs_no_minimum_time():
    assert minimum_dosing_time_first_order(1e3, 1e-3, 16.8) == 0.0


def test_scale_up_of_area_to_volume_matches_c2_3():
    # METHODS.md C2.3 [COMPUTED]
    d_lab, av_lab = cylinder_h_equals_d(0.5e-3)
    d_plant, av_plant = cylinder_h_equals_d(5.0)
    assert d_lab == pytest.approx(0.08603, abs=1e-5) and av_lab == pytest.approx(58.12, abs=0.01)
    assert d_plant == pytest.approx(1.8534, abs=1e-4)
    assert av_plant == pytest.approx(2.698, abs=1e-3)
    assert av_lab / av_plant == pytest.approx(21.544, abs=1e-3)
    assert area_to_volume_similar(av_lab, 0.5e-3, 5.0) == pytest.approx(av_plant, rel=1e-12)


def test_log_mean_difference_and_margin():
    # heat-transfer textbooks (common practice, no source)
    lm = log_mean_temperature_difference(303.15, 278.15, 288.15)
    assert lm == pytest.approx((25 - 15) / math.log(25 / 15))
    assert log_mean_temperature_difference(303.15, 283.15, 283.15) == pytest.approx(20.0)
    peak = plant_peak_heat_release(33.25, 5000.0)
    assert cooling_margin(84e3, peak) == pytest.approx(84e3 / 166250.0)
    assert adiabatic_rise_rate(16.6254, 0.5, 2000.0) * 60 == pytest.approx(0.998, abs=1e-3)


def test_a_temperature_cross_is_refused():
    with pytest.raises(CalcInputError, match="jacket_outlet_k"):
        log_mean_temperature_difference(303.15, 283.15, 310.15)
