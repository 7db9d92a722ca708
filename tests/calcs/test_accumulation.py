"""Thermal accumulation and MTSR(t) reproduce the synthetic record of METHODS.md C1.7."""

import math

import numpy as np
import pytest

from calcs.accumulation import (
    accumulation_after_end_of_feed,
    analyse_accumulation,
    cumulative_heat,
    end_of_reaction_time,
)
from calcs.errors import CalcInputError

# METHODS.md C1.7 [COMPUTED]: the 19 rows 0..180 min (110 and 130-170 min from its notes)
Q_TABLE = [0.0, 10.5353, 14.4111, 15.8369, 16.3614, 16.5544, 16.6254, 6.1161, 2.2500, 0.8277,
           0.3045, 0.1120, 0.0412, 0.0152, 0.0056, 0.0021, 0.0008, 0.0003, 0.0001]
T_MIN = np.arange(0, 190, 10.0)
T_S = T_MIN * 60.0
F_D = np.minimum(T_MIN / 60.0, 1.0)
TP = 303.15


def c17():
    return analyse_accumulation(T_S, Q_TABLE, F_D, 2000.0, 0.40, 0.10, process_temperature_k=TP)


def test_the_19_row_table_integrates_to_60000_joules():
    # METHODS.md C1.7: Q_tot,trap = 60000.03 J [COMPUTED]
    assert c17().total_heat_j == pytest.approx(60000.0, abs=0.1)


def test_trapezoid_heat_matches_the_table_rows():
    # METHODS.md C1.7 Q_trap column [COMPUTED]
    heat = cumulative_heat(T_S, Q_TABLE)
    for minute, expected in [(10, 3160.6), (30, 19718.9), (60, 49207.1), (100, 59802.3)]:
        assert heat[int(minute / 10)] == pytest.approx(expected, abs=0.05)


def test_accumulation_at_end_of_feed_is_0_17988():
    # METHODS.md C1.7 [COMPUTED]
    assert c17().accumulation[6] == pytest.approx(0.17988, abs=1e-4)


def test_maximum_mtsr_on_the_grid_is_41_423_degc_at_30_min_before_end_of_feed():
    # METHODS.md C1.7 [COMPUTED]: the maximum is not at the end of dosing
    a = c17()
    assert a.max_mtsr_k - 273.15 == pytest.approx(41.423, abs=1e-3)
    assert a.max_mtsr_time_s == 30 * 60.0
    assert a.accumulation_at_max_mtsr == pytest.approx(0.17135, abs=1e-4)
    assert a.mtsr_k[6] - 273.15 == pytest.approx(40.793, abs=1e-3)


def test_end_of_reaction_criterion_is_recorded():
    a = c17()
    assert a.end_criterion.startswith("|q| < 1 % of q_max")
    assert a.end_time_s == 110 * 60.0  # first row from which |q| stays below 0.166 W
    assert a.warnings == ()
    assert a.max_heat_release_rate_w_per_kg == pytest.approx(33.25, abs=0.01)  # C1.7 note
    assert a.specific_heat_j_per_kg == pytest.approx(120e3, rel=1e-6)


def exact_record(step_min):
    # METHODS.md C1.7 model: k = 0.1 /min, t_d = 60 min, Q_tot = 60 kJ
    k, td = 0.1, 60.0
    t = np.arange(0.0, 400.0 + step_min / 2, step_min)
    a = np.where(t <= td, -np.expm1(-k * t) / (k * td),
                 -math.expm1(-k * td) / (k * td) * np.exp(-k * (t - td)))
    a[0] = 0.0
    q = 60e3 * (k / 60.0) * a
    return t, q, np.minimum(t / td, 1.0)


def test_true_maximum_mtsr_is_40_584_degc_at_33_44_min_on_a_fine_grid():
    # METHODS.md C1.7 analytic reference [COMPUTED]
    t, q, fd = exact_record(0.01)
    a = analyse_accumulation(t * 60, q, fd, 2000.0, 0.40, 0.10, process_temperature_k=TP)
    assert a.max_mtsr_k - 273.15 == pytest.approx(40.584, abs=2e-3)
    assert a.max_mtsr_time_s / 60 == pytest.approx(33.44, abs=0.02)
    i_td = int(round(60 / 0.01))
    assert a.accumulation[i_td] == pytest.approx((1 - math.exp(-6)) / 6, abs=2e-4)


def test_final_mass_simplification_would_be_non_conservative():
    # METHODS.md C1.7: with m = m_final the maximum would be 39.975 °C at t_d [COMPUTED]
    t, q, fd = exact_record(0.01)
    a = analyse_accumulation(t * 60, q, fd, 2000.0, 0.50, 0.0, process_temperature_k=TP)
    assert a.max_mtsr_k - 273.15 == pytest.approx(39.975, abs=2e-3)


def test_negative_accumulation_is_clipped_and_flagged():
    a = analyse_accumulation([0, 60, 120], [0.0, 10.0, 0.0], [0.0, 0.1, 0.1], 2000.0, 1.0, 0.1,
                             process_temperature_k=TP)
    assert a.negative_accumulation_clipped
    assert a.accumulation.min() >= 0.0
    assert any("negative accumulation (down to -" in w and "% of the feed" in w
               for w in a.warnings)


def test_rounding_noise_below_zero_is_clipped_without_a_warning():
    # Issue 21 item 8: "negative accumulation (down to -0.0000)" was noise, not news.
    # The record ends with the heat a hair above the dosed fraction (X_ac = -1e-6).
    t, q, fd = exact_record(0.01)
    fd = fd * (1 - 1e-6)
    a = analyse_accumulation(t * 60, q, fd, 2000.0, 0.50, 0.0, process_temperature_k=TP)
    assert a.negative_accumulation_clipped and a.accumulation.min() >= 0.0
    assert not any("negative accumulation" in w for w in a.warnings)


def test_over_stoichiometric_feed_is_capped_at_one():
    a = analyse_accumulation([0, 60, 120], [0.0, 1.0, 0.0], [0.0, 1.2, 1.2], 2000.0, 1.0, 0.1,
                             process_temperature_k=TP)
    assert a.dosed_fraction.max() == 1.0


def test_a_record_ending_before_the_criterion_warns():
    a = analyse_accumulation([0, 60, 120], [0.0, 10.0, 5.0], [0.0, 1.0, 1.0], 2000.0, 1.0, 0.1,
                             process_temperature_k=TP)
    assert a.end_time_s is None
    assert any("not back below" in w for w in a.warnings)
    assert end_of_reaction_time([0, 60, 120], [0.0, 10.0, 5.0]) is None


def test_heat_after_end_of_feed_gives_accumulation_at_end_of_feed():
    # METHODS.md §1.2 special case [DERIVED]
    assert accumulation_after_end_of_feed(12e3, 60e3) == pytest.approx(0.2)


def test_bad_series_raise_errors_naming_the_argument():
    with pytest.raises(CalcInputError, match="time_s .*strictly increasing"):
        analyse_accumulation([0, 120, 60], [0, 1, 0], [0, 1, 1], 2000.0, 1.0, 0.1,
                             process_temperature_k=TP)
    with pytest.raises(CalcInputError, match="dosed_fraction .*same length"):
        analyse_accumulation([0, 60, 120], [0, 1, 0], [0, 1], 2000.0, 1.0, 0.1,
                             process_temperature_k=TP)
    with pytest.raises(CalcInputError, match="heat_release_rate_w .*finite"):
        analyse_accumulation([0, 60, 120], [0, float("inf"), 0], [0, 1, 1], 2000.0, 1.0, 0.1,
                             process_temperature_k=TP)
    with pytest.raises(CalcInputError, match="reactor_temperature_k .*above 0 K"):
        analyse_accumulation([0, 60, 120], [0, 1, 0], [0, 1, 1], 2000.0, 1.0, 0.1,
                             reactor_temperature_k=[300.0, -1.0, 300.0])
