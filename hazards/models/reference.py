"""Reference data shared by many steps: solvents and plant vessels."""

from __future__ import annotations

from django.core.exceptions import ValidationError
from django.db import models
from django.db.models import Q

from hazards.models.base import InputModel, tracked


def validate_cas_number(value: str) -> None:
    """A CAS registry number: digits-digits-check digit, with a valid check digit."""
    parts = value.split("-")
    if len(parts) != 3 or not all(p.isdigit() for p in parts) or len(parts[2]) != 1:
        raise ValidationError(
            "cas_number = %(value)r: must look like 7732-18-5 (digits-digits-check digit).",
            params={"value": value},
            code="cas_format",
        )
    if not (2 <= len(parts[0]) <= 7 and len(parts[1]) == 2):
        raise ValidationError(
            "cas_number = %(value)r: the first group has 2 to 7 digits, the second 2.",
            params={"value": value},
            code="cas_format",
        )
    digits = (parts[0] + parts[1])[::-1]
    check = sum((i + 1) * int(d) for i, d in enumerate(digits)) % 10
    if check != int(parts[2]):
        raise ValidationError(
            "cas_number = %(value)r: the check digit should be %(check)d.",
            params={"value": value, "check": check},
            code="cas_check_digit",
        )


class VapourPressureSource(models.TextChoices):
    LIBRARY = "library", "Correlation of the chemicals library, by CAS number"
    ANTOINE = "antoine", "Entered Antoine set"


class AntoineLogBase(models.TextChoices):
    LOG10 = "10", "log10"
    LN = "e", "ln"


class AntoinePressureUnit(models.TextChoices):
    PA = "Pa", "Pa"
    KPA = "kPa", "kPa"
    BAR = "bar", "bar"
    MMHG = "mmHg", "mmHg"


class AntoineTemperatureUnit(models.TextChoices):
    K = "K", "K"
    DEGC = "degC", "°C"


@tracked()
class Solvent(InputModel):
    name = models.CharField(max_length=120, unique=True)
    cas_number = models.CharField(max_length=12, unique=True, validators=[validate_cas_number])
    vapour_pressure_source = models.CharField(
        max_length=10, choices=VapourPressureSource.choices, default=VapourPressureSource.LIBRARY
    )
    antoine_a = models.FloatField(null=True, blank=True)
    antoine_b = models.FloatField(null=True, blank=True)
    antoine_c = models.FloatField(null=True, blank=True)
    antoine_log_base = models.CharField(
        max_length=2, choices=AntoineLogBase.choices, default=AntoineLogBase.LOG10
    )
    antoine_pressure_unit = models.CharField(
        max_length=6, choices=AntoinePressureUnit.choices, default=AntoinePressureUnit.PA
    )
    antoine_temperature_unit = models.CharField(
        max_length=6, choices=AntoineTemperatureUnit.choices, default=AntoineTemperatureUnit.K
    )
    antoine_t_min_k = models.FloatField(null=True, blank=True)
    antoine_t_max_k = models.FloatField(null=True, blank=True)
    antoine_source = models.CharField(max_length=300, blank=True)

    class Meta:
        ordering = ["name"]
        # Keyset pages of the API orderings (`?ordering=`) and the lists read these.
        indexes = [models.Index(fields=["name", "id"], name="solvent_name_idx")]
        constraints = [
            models.CheckConstraint(
                condition=~Q(vapour_pressure_source="antoine")
                | (
                    Q(antoine_a__isnull=False)
                    & Q(antoine_b__isnull=False)
                    & Q(antoine_c__isnull=False)
                ),
                name="solvent_antoine_set_complete",
                violation_error_message="An entered Antoine set needs A, B and C.",
            ),
            models.CheckConstraint(
                condition=Q(antoine_t_min_k__isnull=True) | Q(antoine_t_min_k__gt=0),
                name="solvent_antoine_tmin_absolute",
            ),
            models.CheckConstraint(
                condition=Q(antoine_t_max_k__isnull=True)
                | Q(antoine_t_min_k__isnull=True)
                | Q(antoine_t_max_k__gt=models.F("antoine_t_min_k")),
                name="solvent_antoine_range_ordered",
                violation_error_message="The upper end of the Antoine range must exceed the lower.",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.name} ({self.cas_number})"


@tracked()
class Vessel(InputModel):
    name = models.CharField(max_length=120)
    tag = models.CharField(max_length=40, unique=True)
    volume_m3 = models.FloatField()
    heat_transfer_area_m2 = models.FloatField()
    heat_transfer_coefficient_w_per_m2_k = models.FloatField()
    coolant_temperature_k = models.FloatField()
    design_pressure_pa = models.FloatField()
    relief_set_pressure_pa = models.FloatField()
    headspace_volume_m3 = models.FloatField(null=True, blank=True)

    class Meta:
        ordering = ["tag"]
        # Keyset pages of the API orderings (`?ordering=`) and the lists read these.
        indexes = [models.Index(fields=["name", "id"], name="vessel_name_idx")]
        constraints = [
            models.CheckConstraint(condition=Q(volume_m3__gt=0), name="vessel_volume_positive"),
            models.CheckConstraint(
                condition=Q(heat_transfer_area_m2__gt=0), name="vessel_area_positive"
            ),
            models.CheckConstraint(
                condition=Q(heat_transfer_coefficient_w_per_m2_k__gt=0), name="vessel_u_positive"
            ),
            models.CheckConstraint(
                condition=Q(coolant_temperature_k__gt=0), name="vessel_coolant_absolute"
            ),
            models.CheckConstraint(
                condition=Q(design_pressure_pa__gt=0), name="vessel_design_pressure_absolute"
            ),
            models.CheckConstraint(
                condition=Q(relief_set_pressure_pa__gt=0), name="vessel_relief_pressure_absolute"
            ),
            models.CheckConstraint(
                condition=Q(headspace_volume_m3__isnull=True)
                | (Q(headspace_volume_m3__gt=0) & Q(headspace_volume_m3__lte=models.F("volume_m3"))),
                name="vessel_headspace_within_volume",
                violation_error_message="The headspace must be positive and at most the volume.",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.tag} {self.name}"
