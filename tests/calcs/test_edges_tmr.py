"""Edges of the TMR/TD functions (issue 15 items 5 and 8): low activation energies, all-scalar
inputs, and nth-order kinetics whose self-heating never accelerates."""

import math

import numpy as np
import pytest

from calcs.constants import R
from calcs.td_vectorised import td24_vectorised, td_for_time_vectorised
from calcs.tmr import td24, td_for_time, td_refusal, tmr_zero_order_at
from calcs.tmr_numeric import tmr_nth_order

# Low activation energies where the zero-order log form g(T) = ln TMR(T) − ln t is not
# monotone on [150 K, 1500 K]: it falls to its minimum at T = E_a/(2R) and rises again, so
# g can have the same sign at both ends of the bracket while a root lies in between.
LOW_EA_CASES = [
    (8e3, 5.62341325190349),
    (10e3, 3.1622776601683795),
    (15e3, 1.0),
    (20e3, 0.31622776601683794),
]


@pytest.mark.parametrize("e, q", LOW_EA_CASES)
def test_td24_finds_the_lower_root_that_the_closed_form_finds(e, q):
    # [DERIVED] TMR_ad(T) = c_p·R·T²/(E_a·q(T)) (Townsend & Tou 1980, METHODS.md §3.1) falls
    # with T only below T = E_a/(2R); the TD24 is the root on that falling branch, which the
    # Lambert W form u = −2·W₋₁(−½e^{−C/2}) gives (Corless et al. 1996, from memory).
    brent = td24(1800.0, e, 423.15, q)
    vec = float(td24_vectorised([1800.0], e, 423.15, q)[0])
    assert brent is not None, "td24 missed the root"
    assert brent == pytest.approx(vec, rel=1e-10)
    assert brent < e / (2 * R)
    assert tmr_zero_order_at(brent, 1800.0, e, 423.15, q) == pytest.approx(86400.0, rel=1e-9)


def test_td_functions_agree_or_both_refuse_over_low_and_ordinary_activation_energies():
    # common practice, no source: the two implementations of one equation must agree
    rng = np.random.default_rng(15)
    n = 3000
    cp, e = rng.uniform(500, 4000, n), rng.uniform(3e3, 3e5, n)
    tr, q = rng.uniform(300, 900, n), 10 ** rng.uniform(-4, 4, n)
    vec = td24_vectorised(cp, e, tr, q)
    brent = np.array([td24(*p) or np.nan for p in zip(cp, e, tr, q, strict=True)])
    assert np.array_equal(np.isnan(vec), np.isnan(brent))
    ok = ~np.isnan(vec)
    np.testing.assert_allclose(vec[ok], brent[ok], rtol=1e-10)
    for args in list(zip(cp, e, tr, q, strict=True))[:400]:
        if td24(*args) is None:
            assert td_refusal(86400.0, *args)  # a reason, in words
        else:
            assert td_refusal(86400.0, *args) is None


def test_refusal_reasons_name_the_cause():
    # [DERIVED] no TMR on the falling branch reaches 24 h below 1500 K / 150 K already runs
    # away within 24 h / the zero-order TMR never falls to 24 h (minimum at T = E_a/2R)
    assert "1500 K" in td_refusal(86400.0, 1800.0, 100e3, 300.0, 1e-30)
    assert "150 K" in td_refusal(86400.0, 1800.0, 100e3, 300.0, 1e20)
    low = td_refusal(86400.0, 1800.0, 10e3, 423.15, 0.01)
    assert "E_a/(2R)" in low and "never falls to 24 h" in low


def test_vectorised_td_accepts_all_scalar_inputs():
    # METHODS.md C3.2 [COMPUTED]: TD24 = 377.599 K
    t = td24_vectorised(1800.0, 100e3, 453.15, 50.0)
    assert float(t) == pytest.approx(377.599, abs=0.01)
    assert np.ndim(t) == 0
    assert math.isnan(float(td_for_time_vectorised(86400.0, 1800.0, 100e3, 300.0, 1e-30)))
    assert float(
        td_for_time_vectorised(86400.0, 1800.0, 100e3, 453.15, 50.0, method="lambertw")
    ) == pytest.approx(377.599, abs=0.01)


def test_td_for_time_agrees_with_the_closed_form_for_a_short_time_and_low_ea():
    # common practice, no source: same equation, two solvers
    a = td_for_time(3600.0, 1500.0, 12e3, 400.0, 2.0)
    b = float(td_for_time_vectorised(3600.0, 1500.0, 12e3, 400.0, 2.0))
    assert (a is None and math.isnan(b)) or a == pytest.approx(b, rel=1e-10)


def test_nth_order_without_acceleration_has_no_maximum_after_t0():
    # METHODS.md §3.6 [DERIVED]: the maximum of dT/dt lies where E·(ΔT_ad/φ)·(1 − X*)/(R·T*²)
    # = n; for B = E·ΔT_ad/(R·T0²) ≤ n there is no X* > 0: the rate only falls, no runaway.
    # E = 100 kJ/mol, T0 = 80 °C: R·T0²/E = 10.37 K (METHODS.md C6.1), so ΔT_ad = 8 K, n = 1
    r = tmr_nth_order(353.15, 8.0, 100e3, 1e9, 1.0)
    assert r.value is None  # not 0 s, which would read as an instantaneous runaway
    assert r.parameters["no_maximum_after_t0"] is True
    assert any("no maximum after t = 0" in w for w in r.warnings)
    assert r.parameters["b_parameter"] == pytest.approx(100e3 * 8.0 / (R * 353.15**2))
    runs = tmr_nth_order(353.15, 200.0, 100e3, 1e9, 1.0)
    assert runs.parameters["no_maximum_after_t0"] is False and runs.value > 0


def test_b_counts_the_rise_in_the_cell_with_phi():
    # METHODS.md §3.6/§3.7: the cell heats by ΔT_ad/φ, so B = E·(ΔT_ad/φ)/(R·T0²)
    r1 = tmr_nth_order(353.15, 15.0, 100e3, 1e9, 1.0)
    r2 = tmr_nth_order(353.15, 15.0, 100e3, 1e9, 1.0, phi=2.0)
    assert r1.parameters["b_parameter"] == pytest.approx(1.4464, abs=1e-3)
    assert r2.parameters["b_parameter"] == pytest.approx(r1.parameters["b_parameter"] / 2)
    assert r1.value > 0 and r2.value is None  # B/φ = 0.72 < n = 1: no runaway in the cell
    assert r2.parameters["no_maximum_after_t0"] is True


def test_the_step_says_why_td24_is_unknown():
    # [DERIVED] as test_refusal_reasons_name_the_cause, through assess_step
    from calcs.scenario import StepInputs, assess_step

    a = assess_step(
        StepInputs(
            "batch",
            303.15,
            1000.0,
            1800.0,
            "open",
            None,
            None,
            specific_reaction_heat_j_per_kg=100e3,
            mtt_override_k=383.15,
            activation_energy_j_per_mol=10e3,
            reference_temperature_k=423.15,
            heat_release_rate_at_reference_w_per_kg=0.01,
        )
    )
    assert a.td24_k is None and a.criticality_class is None
    assert any(
        w.startswith("TD24 unknown: the zero-order TMRad never falls to 24 h") for w in a.warnings
    )
