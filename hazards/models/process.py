"""Sites, processes and their reaction steps."""

from __future__ import annotations

from django.conf import settings
from django.core.validators import MaxLengthValidator
from django.db import models
from django.db.models import Q

from hazards.models.base import InputModel, tracked


@tracked()
class Site(InputModel):
    code = models.SlugField(max_length=40, unique=True)
    name = models.CharField(max_length=200)
    # Revalidation interval of approvals; the default follows OSHA 29 CFR 1910.119(e)(6)
    # (at least every five years). Local rules may be stricter.
    revalidation_interval_months = models.PositiveIntegerField(default=60)

    class Meta:
        ordering = ["code"]
        # Keyset pages of the API orderings (`?ordering=`) and the lists read these.
        indexes = [models.Index(fields=["name", "id"], name="site_name_idx")]

    def __str__(self) -> str:
        return f"{self.code} {self.name}"


@tracked()
class Process(InputModel):
    name = models.CharField(max_length=200)
    description = models.TextField(blank=True, validators=[MaxLengthValidator(10000)])
    site = models.ForeignKey(Site, on_delete=models.PROTECT, related_name="processes")
    owner = models.ForeignKey(
        settings.AUTH_USER_MODEL,
        on_delete=models.PROTECT,
        related_name="owned_processes",
        null=True,
        blank=True,
    )

    class Meta:
        ordering = ["site__code", "name"]
        # Keyset pages of the API orderings (`?ordering=`) and the lists read these.
        indexes = [models.Index(fields=["name", "id"], name="process_name_idx"),
                   models.Index(fields=["updated_at", "id"], name="process_updated_idx")]
        constraints = [
            models.UniqueConstraint(fields=["site", "name"], name="process_name_unique_per_site"),
        ]

    def __str__(self) -> str:
        return self.name


class OperationMode(models.TextChoices):
    BATCH = "batch", "Batch (all reagents charged)"
    SEMI_BATCH = "semi_batch", "Semi-batch (one reagent dosed)"


class SystemKind(models.TextChoices):
    OPEN = "open", "Open (vented, at operating pressure)"
    CLOSED = "closed", "Closed (pressure rises to relief)"


@tracked(scope=("process",))
class ReactionStep(InputModel):
    process = models.ForeignKey(Process, on_delete=models.CASCADE, related_name="steps")
    sequence = models.PositiveIntegerField()
    name = models.CharField(max_length=200)
    operation_mode = models.CharField(max_length=12, choices=OperationMode.choices)
    process_temperature_k = models.FloatField()
    reaction_mass_kg = models.FloatField()
    specific_heat_capacity_j_per_kg_k = models.FloatField()
    system = models.CharField(max_length=8, choices=SystemKind.choices)
    operating_pressure_pa = models.FloatField()
    solvent = models.ForeignKey(
        "hazards.Solvent", on_delete=models.PROTECT, null=True, blank=True, related_name="steps"
    )
    vessel = models.ForeignKey(
        "hazards.Vessel", on_delete=models.PROTECT, null=True, blank=True, related_name="steps"
    )
    dosing_time_s = models.FloatField(null=True, blank=True)
    mtt_override_k = models.FloatField(null=True, blank=True)
    mtt_override_reason = models.TextField(blank=True, validators=[MaxLengthValidator(2000)])
    # m_0/m_final of a semi-batch step: an entered maximum accumulation is then used on the
    # mass present (calcs.semibatch.mass_basis_accumulation)
    initial_mass_fraction = models.FloatField(null=True, blank=True)
    # A closed vessel without solvent vapour-pressure data has no MTT unless this explicit,
    # recorded declaration says the reaction mass is non-volatile (with its basis).
    non_volatile_declared = models.BooleanField(default=False)
    non_volatile_reason = models.TextField(blank=True, validators=[MaxLengthValidator(2000)])
    # Set by the indicator service when the inputs of an approved step change.
    needs_review = models.BooleanField(default=False)
    approved_inputs_hash = models.CharField(max_length=64, blank=True)

    class Meta:
        ordering = ["process_id", "sequence"]
        # Keyset pages of the API orderings (`?ordering=`) and the lists read these.
        indexes = [models.Index(fields=["name", "id"], name="step_name_idx"),
                   models.Index(fields=["updated_at", "id"], name="step_updated_idx"),
                   # The start page's approvals that no longer hold: only flagged steps.
                   models.Index(fields=["process"], condition=Q(needs_review=True),
                                name="step_needs_review_idx")]
        constraints = [
            models.UniqueConstraint(
                fields=["process", "sequence"], name="step_sequence_unique_per_process"
            ),
            models.CheckConstraint(
                condition=Q(process_temperature_k__gt=0), name="step_temperature_absolute"
            ),
            models.CheckConstraint(condition=Q(reaction_mass_kg__gt=0), name="step_mass_positive"),
            models.CheckConstraint(
                condition=Q(specific_heat_capacity_j_per_kg_k__gt=0), name="step_cp_positive"
            ),
            models.CheckConstraint(
                condition=Q(operating_pressure_pa__gt=0), name="step_pressure_absolute"
            ),
            models.CheckConstraint(
                condition=Q(dosing_time_s__isnull=True) | Q(dosing_time_s__gt=0),
                name="step_dosing_time_positive",
            ),
            models.CheckConstraint(
                condition=Q(mtt_override_k__isnull=True)
                | (Q(mtt_override_k__gt=0) & ~Q(mtt_override_reason="")),
                name="step_mtt_override_has_reason",
                violation_error_message="An MTT override needs a reason.",
            ),
            models.CheckConstraint(
                condition=Q(initial_mass_fraction__isnull=True)
                | (Q(initial_mass_fraction__gt=0) & Q(initial_mass_fraction__lte=1)),
                name="step_initial_mass_fraction_range",
                violation_error_message="The initial charge must be a fraction of the final "
                "mass above 0 and at most 1.",
            ),
            models.CheckConstraint(
                condition=Q(non_volatile_declared=False) | ~Q(non_volatile_reason=""),
                name="step_non_volatile_has_reason",
                violation_error_message="A declaration that the mass is non-volatile needs "
                "its basis.",
            ),
            models.CheckConstraint(
                condition=~Q(operation_mode="semi_batch") | Q(dosing_time_s__isnull=False),
                name="step_semi_batch_has_dosing_time",
                violation_error_message="A semi-batch step needs a dosing time.",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.process.name} / {self.sequence}. {self.name}"
