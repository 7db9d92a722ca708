"""A person's own settings for the pages: the units temperatures, powers and pressures are
written in (issue 21). Only the pages follow them; the API and the signed dossier do not."""

from __future__ import annotations

from django.conf import settings
from django.db import models

from hazards.models.base import tracked
from hazards.quantities import DisplayUnits


class TemperatureUnit(models.TextChoices):
    CELSIUS = "degC", "°C (degrees Celsius)"
    KELVIN = "kelvin", "K (kelvin)"
    FAHRENHEIT = "degF", "°F (degrees Fahrenheit)"


class PowerUnit(models.TextChoices):
    STANDARD = "", "Site standard (W; capacities in kW)"
    WATT = "watt", "W (watt)"
    KILOWATT = "kilowatt", "kW (kilowatt)"


class PressureUnit(models.TextChoices):
    BAR = "bar", "bar"
    PSI = "psi", "psi (absolute)"
    KILOPASCAL = "kilopascal", "kPa (kilopascal)"
    MEGAPASCAL = "megapascal", "MPa (megapascal)"


@tracked()
class DisplayPreference(models.Model):
    """The display units of one person; a person without a row reads the site's standard."""

    user = models.OneToOneField(settings.AUTH_USER_MODEL, on_delete=models.CASCADE,
                                related_name="display_preference")
    temperature_unit = models.CharField(max_length=10, choices=TemperatureUnit.choices,
                                        default=TemperatureUnit.CELSIUS)
    power_unit = models.CharField(max_length=10, choices=PowerUnit.choices, blank=True,
                                  default=PowerUnit.STANDARD)
    pressure_unit = models.CharField(max_length=10, choices=PressureUnit.choices,
                                     default=PressureUnit.BAR)
    updated_at = models.DateTimeField(auto_now=True)

    class Meta:
        constraints = [
            models.CheckConstraint(condition=models.Q(temperature_unit__in=TemperatureUnit.values),
                                   name="display_temperature_unit_known"),
            models.CheckConstraint(condition=models.Q(power_unit__in=PowerUnit.values),
                                   name="display_power_unit_known"),
            models.CheckConstraint(condition=models.Q(pressure_unit__in=PressureUnit.values),
                                   name="display_pressure_unit_known"),
        ]

    def __str__(self) -> str:
        return (f"{self.user_id}: {self.temperature_unit}, {self.power_unit or 'standard'}, "
                f"{self.pressure_unit}")

    def units(self) -> DisplayUnits:
        return DisplayUnits(temperature=self.temperature_unit, power=self.power_unit or None,
                            pressure=self.pressure_unit)
