"""A person's display units (issue 21): temperatures, powers and pressures converted at the
one formatting path (hazards.quantities.quantity_text), differences as differences."""

from __future__ import annotations

import pytest

from hazards.quantities import (
    STANDARD_UNITS,
    DisplayUnits,
    QuantityError,
    display_units,
    in_display_units,
    quantity_text,
)

FAHRENHEIT = DisplayUnits(temperature="degF")
KELVIN = DisplayUnits(temperature="kelvin")


def test_temperatures_convert_with_their_offsets():
    # 100 °C = 373.15 K = 212 °F (exact definitions of the scales, NIST SP 811 §4.2.1.1, B.8).
    assert in_display_units(373.15, "temperature", FAHRENHEIT) == (pytest.approx(212.0), "°F")
    assert in_display_units(373.15, "temperature", KELVIN) == (pytest.approx(373.15), "K")
    assert quantity_text(373.15, "temperature", STANDARD_UNITS) == "100 °C"
    assert quantity_text(373.15, "temperature", FAHRENHEIT) == "212 °F"
    # -40 is where the Celsius and Fahrenheit scales meet (from the same definitions).
    assert quantity_text(233.15, "temperature", FAHRENHEIT) == "-40 °F"


def test_temperature_differences_convert_as_differences():
    # A difference of 1 K is 1 °C and 1.8 °F, with no 273.15 or 32 offset (NIST SP 811 B.8).
    # A wrong program that converted ΔTad = 50 K as a temperature would print -369.7 °F.
    assert quantity_text(50.0, "temperature_difference", FAHRENHEIT) == "90 °F"
    assert quantity_text(50.0, "temperature_difference", KELVIN) == "50 K"
    assert quantity_text(50.0, "temperature_difference", DisplayUnits(temperature="degC")) == "50 K"
    # A heating rate of 1 K/min is 1.8 °F/min (same rule).
    assert quantity_text(1 / 60, "heating_rate", FAHRENHEIT) == "1.8 °F/min"


def test_pressures_and_powers():
    # 1 bar = 100 kPa = 14.5038 psi (1 psi = 6.894757 kPa, NIST SP 811 B.8).
    psi, unit = in_display_units(1e5, "pressure", DisplayUnits(pressure="psi"))
    assert unit == "psi" and psi == pytest.approx(14.50377, rel=1e-6)
    assert quantity_text(1e5, "pressure", DisplayUnits(pressure="psi")) == "14.5 psi"
    assert quantity_text(1e5, "pressure", DisplayUnits(pressure="kilopascal")) == "100 kPa"
    assert quantity_text(7e5, "pressure", DisplayUnits(pressure="megapascal")) == "0.7 MPa"
    # kW = 1000 W (SI prefix); the site standard writes a cooling capacity in kW.
    assert quantity_text(1500.0, "power", DisplayUnits(power="kilowatt")) == "1.5 kW"
    assert quantity_text(250e3, "capacity", DisplayUnits(power="watt")) == "250000 W"
    assert quantity_text(250e3, "capacity", STANDARD_UNITS) == "250 kW"


def test_the_context_sets_the_units_of_a_block_and_leaves_others_alone():
    assert quantity_text(373.15, "temperature") == "100 °C"
    with display_units(FAHRENHEIT):
        assert quantity_text(373.15, "temperature") == "212 °F"
        assert quantity_text(5.0, "mass") == "5 kg"  # kinds without a choice stay as they are
    assert quantity_text(373.15, "temperature") == "100 °C"


def test_an_unknown_unit_is_refused_by_name():
    with pytest.raises(QuantityError, match="temperature unit.*rankine.*°C, K, °F"):
        DisplayUnits(temperature="rankine")


def test_the_step_pages_assumptions_follow_the_person_and_the_dossier_does_not():
    from types import SimpleNamespace

    from hazards.dossier.view import parameter_row
    from hazards.web.indicators import parameter_rows

    snapshot = SimpleNamespace(parameters={"corrected_onset_k": 373.15,
                                           "td24_extrapolation_k": 10.0,
                                           "ambient_pressure_pa": 101325.0})
    with display_units(DisplayUnits(temperature="degF", pressure="psi")):
        rows = {r["key"]: (r["value"], r["unit"]) for r in parameter_rows(snapshot)}
        dossier = parameter_row("corrected_onset_k", 373.15)
    # 100 °C = 212 °F; a 10 K difference = 18 °F; 1 atm = 14.696 psi (NIST SP 811 B.8).
    assert rows == {"corrected_onset_k": ("212", "°F"), "td24_extrapolation_k": ("18", "°F"),
                    "ambient_pressure_pa": ("14.7", "psi")}
    assert (dossier["value"], dossier["unit"]) == ("100", "°C")  # the site's standard
    standard = {r["key"]: (r["value"], r["unit"]) for r in parameter_rows(snapshot)}
    assert standard["ambient_pressure_pa"] == ("1.013", "bar abs")


def test_a_notice_is_written_in_the_site_standard_whoever_queued_it(monkeypatch):
    from hazards.oversight import notify

    monkeypatch.setattr(notify, "_build", lambda *a: quantity_text(373.15, "temperature"))
    with display_units(FAHRENHEIT):
        assert notify.build("approval_lapsed", "review.processrevision:1", "") == "100 °C"


def test_a_dossier_is_built_in_the_site_standard_whoever_renders_it(monkeypatch):
    from hazards.dossier import render

    monkeypatch.setattr(render, "_build_pages",
                        lambda content, meta: quantity_text(373.15, "temperature"))
    with display_units(FAHRENHEIT):
        assert render.build_pages({}, None) == "100 °C"
