"""Writes of a person's own display preferences (issue 21)."""

from __future__ import annotations

from django.db import transaction

from hazards.models import DisplayPreference
from hazards.quantities import STANDARD_UNITS, DisplayUnits
from hazards.trail import scope

PREFERENCE_REASON = "Display units changed by the person"


def display_units_of(user) -> DisplayUnits:
    """The units a person reads on the pages (the site's standard without a saved choice)."""
    if not getattr(user, "is_authenticated", False):
        return STANDARD_UNITS
    pref = DisplayPreference.objects.filter(user_id=user.pk).first()
    return pref.units() if pref is not None else STANDARD_UNITS


def display_preference_set(*, user, temperature_unit: str, power_unit: str,
                           pressure_unit: str) -> DisplayPreference:
    """Save a person's display units; a bad unit raises ValidationError naming the field and
    nothing is saved."""
    with transaction.atomic(), scope(reason=PREFERENCE_REASON):
        pref = (DisplayPreference.objects.select_for_update().filter(user_id=user.pk).first()
                or DisplayPreference(user=user))
        pref.temperature_unit = temperature_unit
        pref.power_unit = power_unit
        pref.pressure_unit = pressure_unit
        pref.full_clean()
        pref.save()
    return pref
