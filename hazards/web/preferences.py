"""The person's preferences page: the units the pages write temperatures, powers and
pressures in (issue 21); notification choices have their own page."""

from __future__ import annotations

from django import forms
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.shortcuts import render

from hazards.models.preferences import PowerUnit, PressureUnit, TemperatureUnit
from hazards.quantities import quantity_text
from hazards.services.preferences import display_preference_set, display_units_of
from hazards.web.middleware import remember_display_units

UNKNOWN_UNIT = "“%(value)s” is not one of the units offered here (%(allowed)s)."


def _choice(label: str, choices, help_text: str) -> forms.ChoiceField:
    allowed = ", ".join(str(text).split(" (")[0] for value, text in choices)
    return forms.ChoiceField(
        label=label, choices=choices, required=False, help_text=help_text,
        error_messages={"invalid_choice": UNKNOWN_UNIT.replace("%(allowed)s", allowed)})


class DisplayUnitsForm(forms.Form):
    temperature_unit = _choice(
        "Temperature unit", TemperatureUnit.choices,
        "Temperatures (MTSR, MTT, TD24, onsets) and temperature differences (ΔTad): a "
        "difference of 1 K is 1 °C and 1.8 °F.")
    power_unit = _choice("Power unit", PowerUnit.choices,
                         "Heat-release rates at plant scale and cooling capacities.")
    pressure_unit = _choice("Pressure unit", PressureUnit.choices,
                            "Absolute pressures: design and relief set pressures, end pressures.")

    def clean(self):
        data = super().clean()
        # Left empty (a hand-made request): the site's standard of that kind.
        data["temperature_unit"] = data.get("temperature_unit") or TemperatureUnit.CELSIUS
        data["pressure_unit"] = data.get("pressure_unit") or PressureUnit.BAR
        return data


def _examples(units) -> list[tuple[str, str]]:
    """Values every reader knows, written in the chosen units (a check of the choice)."""
    return [
        ("Water boils at 1 atm", quantity_text(373.15, "temperature", units)),
        ("A temperature rise ΔTad of 50 K", quantity_text(50.0, "temperature_difference", units)),
        ("A cooling capacity of 250 kW", quantity_text(250e3, "capacity", units)),
        ("A peak heat release of 1500 W", quantity_text(1500.0, "power", units)),
        ("A pressure of 1 atm", quantity_text(101325.0, "pressure", units)),
    ]


@login_required
def page(request):
    saved = False
    units = display_units_of(request.user)
    if request.method == "POST":
        form = DisplayUnitsForm(request.POST)
        if form.is_valid():
            try:
                pref = display_preference_set(user=request.user, **form.cleaned_data)
            except ValidationError as exc:
                for field, messages in exc.message_dict.items():
                    for message in messages:
                        form.add_error(field if field in form.fields else None, message)
            else:
                units = pref.units()
                remember_display_units(request, units)
                saved = True
    else:
        form = DisplayUnitsForm(initial={"temperature_unit": units.temperature or "degC",
                                         "power_unit": units.power or "",
                                         "pressure_unit": units.pressure or "bar"})
    return render(request, "hazards/preferences.html", {
        "form": form, "saved": saved, "examples": _examples(units)}, status=200 if (
            request.method != "POST" or saved) else 400)
