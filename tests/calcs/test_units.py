"""The one unit registry converts what practitioners type into SI floats."""

import math

import pytest

from calcs.constants import ATM, KCAL, REFERENCES, T_ZERO_C, R
from calcs.errors import CalcInputError
from calcs.units import KINDS, Q_, from_si, molar_to_specific_energy, parse_quantity, to_si, ureg


def test_degrees_fahrenheit_convert_to_kelvin_by_nist_sp811():
    # NIST SP 811 Appendix B.8: T/K = (t/°F + 459.67)·5/9
    assert to_si(86.0, "degF", "temperature") == pytest.approx((86.0 + 459.67) * 5 / 9, abs=1e-9)
    assert parse_quantity("86 °F", "temperature") == pytest.approx(303.15, abs=1e-9)


def test_psi_converts_to_pascal_by_nist_sp811():
    # NIST SP 811 Appendix B.8: 1 psi = 6.894757E+03 Pa
    assert to_si(1.0, "psi", "pressure") == pytest.approx(6894.757, rel=1e-7)
    assert to_si(1.0, "psia", "pressure") == pytest.approx(6894.757, rel=1e-7)


def test_kilocalorie_is_thermochemical_4184_joules():
    # NIST SP 811 Appendix B.8: 1 cal_th = 4.184 J (exact); METHODS.md C1.5 [COMPUTED]
    assert to_si(1.0, "kcal", "energy") == KCAL == 4184.0
    assert parse_quantity("-30 kcal/mol", "molar_energy") == pytest.approx(-125520.0)


def test_bar_gauge_is_bar_absolute_plus_one_atmosphere():
    # METHODS.md §10: bar(a) = bar(g) + 1.01325 bar; 1 atm = 101325 Pa (NIST SP 811)
    for text in ("2 bar g", "2 barg", "2 bar_g", "2 bar(g)"):
        assert parse_quantity(text, "pressure") == pytest.approx(301325.0)
    assert parse_quantity("2 bara", "pressure") == pytest.approx(2e5)
    assert parse_quantity("2 bar_a", "pressure") == pytest.approx(2e5)
    assert parse_quantity("0 psig", "pressure") == pytest.approx(ATM, rel=1e-7)
    assert parse_quantity("1 kPag", "pressure") == pytest.approx(102325.0)
    assert from_si(301325.0, "barg", "pressure") == pytest.approx(2.0)


def test_practitioner_entries_parse_to_si():
    # common practice, no source: the unit factors follow from their definitions
    assert parse_quantity("30 degC", "temperature") == pytest.approx(303.15)
    assert parse_quantity("30 °C", "temperature") == pytest.approx(303.15)
    assert parse_quantity("5 mW/g", "specific_power") == pytest.approx(5.0)
    assert parse_quantity("120 kcal/kg", "specific_energy") == pytest.approx(502080.0)
    assert parse_quantity("2 J/(g·K)", "specific_heat_capacity") == pytest.approx(2000.0)
    assert parse_quantity("2 kJ/(kg*degC)", "specific_heat_capacity") == pytest.approx(2000.0)
    assert parse_quantity("5 K/min", "rate_of_heating") == pytest.approx(5 / 60)
    assert parse_quantity("5 degC/min", "rate_of_heating") == pytest.approx(5 / 60)
    assert parse_quantity("24 h", "duration_h") == 86400.0
    assert parse_quantity("150 g/mol", "molar_mass") == pytest.approx(0.150)
    assert parse_quantity("5 %", "fraction") == pytest.approx(0.05)
    assert parse_quantity(Q_(30, "degC"), "temperature") == pytest.approx(303.15)


def test_a_bare_number_is_taken_in_the_default_unit():
    assert parse_quantity(30, "temperature", "degC") == pytest.approx(303.15)
    assert parse_quantity("30", "temperature", "degC") == pytest.approx(303.15)
    assert parse_quantity(300, "temperature") == 300.0


@pytest.mark.parametrize(
    "text, kind, rule",
    [
        ("30 m", "temperature", "is not a unit of temperature"),
        ("abc", "temperature", "is not '<number> <unit>'"),
        ("30 furlongs_per_blob", "temperature", "is not a known unit"),
        ("nan K", "temperature", "must be a finite number"),
        ("inf", "pressure", "must be a finite number"),
    ],
)
def test_bad_entries_raise_calc_input_errors_naming_the_rule(text, kind, rule):
    with pytest.raises(CalcInputError, match=rule):
        parse_quantity(text, kind)


def test_non_finite_numbers_are_refused():
    with pytest.raises(CalcInputError, match="must be a finite number"):
        parse_quantity(float("nan"), "temperature")


def test_every_kind_converts_one_display_unit_to_si_and_back():
    for kind, (si, display) in KINDS.items():
        x = to_si(1.5, display, kind)
        assert from_si(x, display, kind) == pytest.approx(1.5), kind
        assert ureg.Quantity(1.0, si).dimensionality == ureg.Quantity(1.0, display).dimensionality


def test_molar_energy_converts_to_specific_energy_of_the_same_species():
    # METHODS.md §10: −120 kJ/mol with M = 150 g/mol is 800 J/g of that reagent [COMPUTED]
    assert molar_to_specific_energy(120e3, 0.150) == pytest.approx(800e3)
    with pytest.raises(CalcInputError, match="molar_mass_kg_per_mol"):
        molar_to_specific_energy(120e3, 0.0)


def test_constants_carry_their_defined_values():
    # CODATA 2018 (exact), SI Brochure, NIST SP 811
    assert R == 8.314462618 and T_ZERO_C == 273.15 and ATM == 101325.0
    assert math.isclose(KCAL, 4184.0)
    for key in ("stoessel2008", "townsend_tou1980", "kissinger1957", "astm_e2890", "astm_e698",
                "keller1997", "fisher_goetz1991", "yoshida1995", "iapws_if97", "nist_sp811",
                "poling2001", "clp_annex1", "un_mtc_app6", "semenov1928",
                "frank_kamenetskii1955", "friedman1964", "astm_e1981", "stoessel1993",
                "ozawa1965", "flynn_wall1966"):
        assert REFERENCES[key]
