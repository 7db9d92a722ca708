"""Protective measures of a step's cooling-failure scenario, and each site's policy of which
measures a criticality class requires before endorsement (issue 17).

A measure is an indicator input: its design values enter the step's barrier checks
(`calcs.barrier_checks`), so its table queues the step for recomputation like every input
(hazards.models.triggers). Its status (proposed, in place, proven) and the evidence for
"proven" are what the endorsement rule reads (`hazards.review.services.revisions`).
"""

from __future__ import annotations

from django.conf import settings
from django.core.exceptions import ValidationError
from django.core.validators import MaxLengthValidator
from django.db import models
from django.db.models import F, Q

from hazards.models.base import InputModel, tracked
from hazards.models.process import ReactionStep, Site


class MeasureKind(models.TextChoices):
    FEED_INTERLOCK = "feed_interlock", "Feed interlock on temperature"
    EMERGENCY_COOLING = "emergency_cooling", "Emergency cooling"
    QUENCH = "quench", "Quench"
    DUMP = "dump", "Dump to a catch vessel"
    INHIBITOR_INJECTION = "inhibitor_injection", "Inhibitor injection"
    EMERGENCY_RELIEF = "emergency_relief", "Emergency pressure relief"
    DEPRESSURISATION = "controlled_depressurisation", "Controlled depressurisation"
    ALARM = "alarm_operator_action", "Alarm with operator action"
    REDESIGN = "redesign", "Redesign of the step"
    # Not in the list, but the barrier at MTT of classes 3 and 4 (METHODS.md §13.1):
    # the condenser that takes the vapour the reaction boils off.
    EVAPORATIVE_COOLING = "evaporative_cooling", "Evaporative cooling at MTT (reflux condenser)"


class MeasureStatus(models.TextChoices):
    PROPOSED = "proposed", "Proposed"
    IN_PLACE = "in_place", "In place"
    PROVEN = "proven", "Proven (tested, with evidence)"


#: The order of the statuses: a requirement of "in place" is met by "proven" too.
STATUS_RANK = {MeasureStatus.PROPOSED: 0, MeasureStatus.IN_PLACE: 1, MeasureStatus.PROVEN: 2}


class ReliefSystem(models.TextChoices):
    VAPOUR = "vapour", "Vapour (tempered)"
    GASSY = "gassy", "Gassy"
    HYBRID = "hybrid", "Hybrid"


def _positive_or_null(name: str) -> models.CheckConstraint:
    return models.CheckConstraint(
        condition=Q(**{f"{name}__isnull": True}) | Q(**{f"{name}__gt": 0}),
        name=f"measure_{name}_positive",
        violation_error_message=f"{name} must be above zero.",
    )


# Design values in SI; each is optional and a check that needs a missing one says "unknown"
# naming it. Temperatures absolute, pressures absolute.
POSITIVE_DESIGN_FIELDS = (
    "trip_temperature_k",
    "response_time_s",
    "capacity_w",
    "set_pressure_pa",
    "vent_area_m2",
    "vessel_volume_m3",
    "condenser_ua_w_per_k",
    "coolant_inlet_temperature_k",
    "coolant_outlet_temperature_k",
    "vapour_line_diameter_m",
    "latent_heat_j_per_kg",
    "vapour_molar_mass_kg_per_mol",
    "liquid_density_kg_per_m3",
)


@tracked()
class Measure(InputModel):
    """One protective measure between a cooling failure of the step and harm."""

    step = models.ForeignKey(ReactionStep, on_delete=models.CASCADE, related_name="measures")
    kind = models.CharField(max_length=32, choices=MeasureKind.choices)
    acts_on = models.CharField(
        max_length=300,
        help_text="What the measure acts on (a valve, "
        "the feed pump, the vessel, the vent line ...).",
    )
    description = models.TextField(blank=True, validators=[MaxLengthValidator(4000)])
    status = models.CharField(
        max_length=10, choices=MeasureStatus.choices, default=MeasureStatus.PROPOSED
    )
    owner = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="owned_measures"
    )
    due_date = models.DateField()
    evidence_reference = models.CharField(max_length=300, blank=True)
    test_date = models.DateField(null=True, blank=True)

    trip_temperature_k = models.FloatField(null=True, blank=True)
    response_time_s = models.FloatField(null=True, blank=True)
    capacity_w = models.FloatField(null=True, blank=True)
    set_pressure_pa = models.FloatField(null=True, blank=True)
    vent_area_m2 = models.FloatField(null=True, blank=True)
    discharge_coefficient = models.FloatField(null=True, blank=True)
    relief_system = models.CharField(max_length=8, choices=ReliefSystem.choices, blank=True)
    vessel_volume_m3 = models.FloatField(null=True, blank=True)
    condenser_ua_w_per_k = models.FloatField(null=True, blank=True)
    coolant_inlet_temperature_k = models.FloatField(null=True, blank=True)
    coolant_outlet_temperature_k = models.FloatField(null=True, blank=True)
    vapour_line_diameter_m = models.FloatField(null=True, blank=True)
    latent_heat_j_per_kg = models.FloatField(null=True, blank=True)
    vapour_molar_mass_kg_per_mol = models.FloatField(null=True, blank=True)
    liquid_density_kg_per_m3 = models.FloatField(null=True, blank=True)
    synthesis_activation_energy_j_per_mol = models.FloatField(null=True, blank=True)

    class Meta:
        ordering = ["step_id", "id"]
        indexes = [
            models.Index(fields=["step", "id"], name="measure_step_idx"),
            models.Index(fields=["due_date", "id"], name="measure_due_idx"),
        ]
        constraints = [
            *[_positive_or_null(name) for name in POSITIVE_DESIGN_FIELDS],
            models.CheckConstraint(
                condition=Q(discharge_coefficient__isnull=True)
                | (Q(discharge_coefficient__gt=0) & Q(discharge_coefficient__lte=1)),
                name="measure_discharge_coefficient_range",
                violation_error_message="discharge_coefficient must be above 0 and at most 1.",
            ),
            models.CheckConstraint(
                condition=Q(synthesis_activation_energy_j_per_mol__isnull=True)
                | Q(synthesis_activation_energy_j_per_mol__gte=0),
                name="measure_activation_energy_not_negative",
                violation_error_message="synthesis_activation_energy_j_per_mol must not be "
                "negative.",
            ),
            models.CheckConstraint(
                condition=Q(coolant_inlet_temperature_k__isnull=True)
                | Q(coolant_outlet_temperature_k__isnull=True)
                | Q(coolant_outlet_temperature_k__gte=F("coolant_inlet_temperature_k")),
                name="measure_coolant_warms",
                violation_error_message="The coolant leaves the condenser no colder than it "
                "enters: coolant_outlet_temperature_k must be at least the inlet temperature.",
            ),
            models.CheckConstraint(
                condition=~Q(status=MeasureStatus.PROVEN)
                | (~Q(evidence_reference="") & Q(test_date__isnull=False)),
                name="measure_proven_has_evidence",
                violation_error_message="A proven measure needs its evidence: a document "
                "reference and the test date.",
            ),
            models.CheckConstraint(
                condition=Q(kind__in=MeasureKind.values),
                name="measure_kind_known",
                violation_error_message="Unknown kind of measure.",
            ),
        ]

    def clean(self) -> None:
        super().clean()
        errors = {}
        step = self.step if self.step_id else None
        if (
            step is not None
            and self.trip_temperature_k is not None
            and self.trip_temperature_k <= step.process_temperature_k
        ):
            errors["trip_temperature_k"] = (
                f"{self.trip_temperature_k:g} K is not above the process temperature "
                f"{step.process_temperature_k:g} K: a trip must lie above the normal "
                "operating temperature."
            )
        if (
            step is not None
            and self.set_pressure_pa is not None
            and self.set_pressure_pa <= step.operating_pressure_pa
        ):
            errors["set_pressure_pa"] = (
                f"{self.set_pressure_pa:g} Pa is not above the operating pressure "
                f"{step.operating_pressure_pa:g} Pa (both absolute)."
            )
        if (
            self.kind == MeasureKind.EMERGENCY_RELIEF
            and self.vent_area_m2 is not None
            and not self.relief_system
        ):
            errors["relief_system"] = (
                "An emergency relief with a vent area needs the kind "
                "of system (vapour, gassy or hybrid)."
            )
        if self.status == MeasureStatus.PROVEN:
            if not self.evidence_reference:
                errors["evidence_reference"] = ("A proven measure needs its evidence: a document "
                                                "reference and the test date.")
            if self.test_date is None:
                errors["test_date"] = ("A proven measure needs its evidence: a document "
                                       "reference and the test date.")
        if errors:
            raise ValidationError(errors)

    def __str__(self) -> str:
        return f"{self.get_kind_display()} on {self.acts_on} ({self.get_status_display()})"


#: The default requirements by class, following the measures Stoessel (2008, ch. 3; 1993)
#: discusses for each class (from memory): class 1 and 2 none beyond avoiding long holds;
#: class 3 a technical barrier at MTT (evaporative cooling or pressure relief) able to take
#: the synthesis reaction's heat release; class 4 the same barrier, designed for both
#: reactions and verified; class 5 measures that act before the decomposition (quench, dump,
#: feed interlock, emergency cooling, inhibitor) or a redesign. Beyond the book: the statuses
#: (in place for class 3, proven with evidence for 4 and 5) and the list of measures that
#: count for class 5 are this tool's choice, configurable per site.
DEFAULT_REQUIREMENTS: dict[str, list[dict]] = {
    "1": [],
    "2": [],
    "3": [
        {
            "any_of": [MeasureKind.EVAPORATIVE_COOLING.value, MeasureKind.EMERGENCY_RELIEF.value],
            "status": MeasureStatus.IN_PLACE.value,
        }
    ],
    "4": [
        {
            "any_of": [MeasureKind.EVAPORATIVE_COOLING.value, MeasureKind.EMERGENCY_RELIEF.value],
            "status": MeasureStatus.PROVEN.value,
        }
    ],
    "5": [
        {
            "any_of": [
                MeasureKind.REDESIGN.value,
                MeasureKind.QUENCH.value,
                MeasureKind.DUMP.value,
                MeasureKind.FEED_INTERLOCK.value,
                MeasureKind.EMERGENCY_COOLING.value,
                MeasureKind.INHIBITOR_INJECTION.value,
            ],
            "status": MeasureStatus.PROVEN.value,
        }
    ],
}


def requirements_errors(requirements) -> list[str]:
    """What is wrong with a requirements mapping (empty when it is well formed)."""
    if not isinstance(requirements, dict):
        return ["requirements must be an object keyed by class 1 to 5"]
    errors = []
    for key, groups in requirements.items():
        if key not in DEFAULT_REQUIREMENTS:
            errors.append(f"class {key!r}: the classes are 1 to 5")
            continue
        if not isinstance(groups, list):
            errors.append(f"class {key}: a list of requirements")
            continue
        for i, group in enumerate(groups):
            where = f"class {key}, requirement {i + 1}"
            if not isinstance(group, dict) or set(group) != {"any_of", "status"}:
                errors.append(f"{where}: an object with any_of and status")
                continue
            kinds = group["any_of"]
            if not isinstance(kinds, list) or not kinds:
                errors.append(f"{where}: any_of lists at least one kind of measure")
            else:
                unknown = [k for k in kinds if k not in MeasureKind.values]
                if unknown:
                    errors.append(
                        f"{where}: unknown kind {unknown[0]!r}; one of "
                        f"{', '.join(MeasureKind.values)}"
                    )
            if group["status"] not in MeasureStatus.values:
                errors.append(
                    f"{where}: status {group['status']!r} is one of "
                    f"{', '.join(MeasureStatus.values)}"
                )
    return errors


@tracked()
class MeasurePolicy(models.Model):
    """Which measures each class requires before endorsement, and in which status, at a site.

    A site without a policy row follows `DEFAULT_REQUIREMENTS`."""

    site = models.OneToOneField(Site, on_delete=models.CASCADE, related_name="measure_policy")
    requirements = models.JSONField(default=dict)
    # A required measure whose own barrier check fails (or cannot be computed) does not
    # count as meeting its requirement.
    failed_check_blocks = models.BooleanField(default=True)
    # Owners are reminded of a measure not yet proven this many days before its due date.
    reminder_days = models.PositiveIntegerField(default=14)
    updated_at = models.DateTimeField(auto_now=True)
    version = models.PositiveIntegerField(default=1)

    class Meta:
        ordering = ["site_id"]

    def __str__(self) -> str:
        return f"measure policy of site {self.site_id}"

    def save(self, *args, **kwargs):
        if self.pk is not None and not self._state.adding:
            self.version = (self.version or 0) + 1
        super().save(*args, **kwargs)

    def clean(self) -> None:
        super().clean()
        errors = requirements_errors(self.requirements)
        if errors:
            raise ValidationError({"requirements": errors})

    def requirements_for(self, criticality_class: int | None) -> list[dict]:
        merged = {**DEFAULT_REQUIREMENTS, **(self.requirements or {})}
        return list(merged.get(str(criticality_class), []))
