"""Measurements of a step: reaction calorimetry runs and decomposition tests."""

from __future__ import annotations

from django.core.validators import MaxLengthValidator
from django.db import models
from django.db.models import Q

from hazards.models.base import InputModel, tracked


@tracked(scope=("step",))
class CalorimetryRun(InputModel):
    step = models.ForeignKey(
        "hazards.ReactionStep", on_delete=models.CASCADE, related_name="calorimetry_runs"
    )
    instrument = models.CharField(max_length=120, blank=True)
    run_date = models.DateField(null=True, blank=True)
    lab_scale_kg = models.FloatField(null=True, blank=True)
    # Null until a calorimeter series derives it (a run may be created before its series).
    specific_reaction_heat_j_per_kg = models.FloatField(null=True, blank=True)
    max_accumulation = models.FloatField(null=True, blank=True)
    max_heat_release_rate_w_per_kg = models.FloatField(null=True, blank=True)
    gas_release_mol_per_kg = models.FloatField(null=True, blank=True)
    raw_file_name = models.CharField(max_length=255, blank=True)
    raw_file = models.BinaryField(null=True, blank=True, editable=False)
    raw_file_sha256 = models.CharField(max_length=64, blank=True, editable=False)
    # The run the assessment rests on; when none is marked, the most recent is used.
    is_basis = models.BooleanField(default=False)
    notes = models.TextField(blank=True, validators=[MaxLengthValidator(10000)])

    class Meta:
        ordering = ["step_id", "-run_date", "-id"]
        # Keyset pages of the API orderings (`?ordering=`) and the lists read these.
        indexes = [models.Index(fields=["run_date", "id"], name="run_date_idx")]
        constraints = [
            models.CheckConstraint(
                condition=Q(specific_reaction_heat_j_per_kg__isnull=True)
                | Q(specific_reaction_heat_j_per_kg__gte=0),
                name="calorimetry_heat_released_positive",
                violation_error_message="Store the heat released as a positive number.",
            ),
            models.CheckConstraint(
                condition=Q(max_accumulation__isnull=True)
                | (Q(max_accumulation__gte=0) & Q(max_accumulation__lte=1)),
                name="calorimetry_accumulation_fraction",
            ),
            models.CheckConstraint(
                condition=Q(max_heat_release_rate_w_per_kg__isnull=True)
                | Q(max_heat_release_rate_w_per_kg__gte=0),
                name="calorimetry_rate_non_negative",
            ),
            models.CheckConstraint(
                condition=Q(gas_release_mol_per_kg__isnull=True) | Q(gas_release_mol_per_kg__gte=0),
                name="calorimetry_gas_non_negative",
            ),
            models.CheckConstraint(
                condition=Q(lab_scale_kg__isnull=True) | Q(lab_scale_kg__gt=0),
                name="calorimetry_lab_mass_positive",
            ),
            models.UniqueConstraint(
                fields=["step"], condition=Q(is_basis=True), name="calorimetry_one_basis_per_step"
            ),
        ]

    def __str__(self) -> str:
        return f"Calorimetry {self.instrument or ''} {self.run_date or ''}".strip()


class DecompositionMethod(models.TextChoices):
    DSC = "dsc", "DSC (dynamic scan)"
    ADIABATIC = "adiabatic", "Adiabatic calorimetry"


@tracked(scope=("step",))
class DecompositionTest(InputModel):
    step = models.ForeignKey(
        "hazards.ReactionStep", on_delete=models.CASCADE, related_name="decomposition_tests"
    )
    method = models.CharField(max_length=10, choices=DecompositionMethod.choices)
    test_date = models.DateField(null=True, blank=True)
    instrument = models.CharField(max_length=120, blank=True)
    sample_mass_kg = models.FloatField(null=True, blank=True)
    heating_rate_k_per_s = models.FloatField(null=True, blank=True)
    crucible = models.CharField(max_length=120, blank=True)
    # Typed, or derived from the test's curves; null until a curve arrives.
    onset_temperature_k = models.FloatField(null=True, blank=True)
    decomposition_energy_j_per_kg = models.FloatField(null=True, blank=True)
    activation_energy_j_per_mol = models.FloatField(null=True, blank=True)
    reference_temperature_k = models.FloatField(null=True, blank=True)
    heat_release_rate_at_reference_w_per_kg = models.FloatField(null=True, blank=True)
    phi_factor = models.FloatField(null=True, blank=True)
    is_basis = models.BooleanField(default=False)
    notes = models.TextField(blank=True, validators=[MaxLengthValidator(10000)])
    # Derived from the curves (hazards.services.curves_store): the fitted models, the chosen
    # one, E(α) and the autocatalysis screen; empty without curves.
    kinetics = models.JSONField(default=dict, blank=True)

    class Meta:
        ordering = ["step_id", "-test_date", "-id"]
        # Keyset pages of the API orderings (`?ordering=`) and the lists read these.
        indexes = [models.Index(fields=["test_date", "id"], name="test_date_idx")]
        constraints = [
            models.CheckConstraint(
                condition=Q(onset_temperature_k__isnull=True) | Q(onset_temperature_k__gt=0),
                name="decomposition_onset_absolute",
            ),
            models.CheckConstraint(
                condition=Q(decomposition_energy_j_per_kg__isnull=True)
                | Q(decomposition_energy_j_per_kg__gte=0),
                name="decomposition_energy_released_positive",
            ),
            models.CheckConstraint(
                condition=Q(sample_mass_kg__isnull=True) | Q(sample_mass_kg__gt=0),
                name="decomposition_sample_mass_positive",
            ),
            models.CheckConstraint(
                condition=Q(heating_rate_k_per_s__isnull=True) | Q(heating_rate_k_per_s__gt=0),
                name="decomposition_heating_rate_positive",
            ),
            models.CheckConstraint(
                condition=Q(activation_energy_j_per_mol__isnull=True)
                | Q(activation_energy_j_per_mol__gt=0),
                name="decomposition_ea_positive",
            ),
            models.CheckConstraint(
                condition=Q(reference_temperature_k__isnull=True) | Q(reference_temperature_k__gt=0),
                name="decomposition_reference_absolute",
            ),
            models.CheckConstraint(
                condition=Q(heat_release_rate_at_reference_w_per_kg__isnull=True)
                | Q(heat_release_rate_at_reference_w_per_kg__gt=0),
                name="decomposition_reference_rate_positive",
            ),
            models.CheckConstraint(
                condition=Q(phi_factor__isnull=True) | Q(phi_factor__gte=1),
                name="decomposition_phi_at_least_one",
                violation_error_message="The phi factor is at least 1.",
            ),
            models.UniqueConstraint(
                fields=["step"], condition=Q(is_basis=True), name="decomposition_one_basis_per_step"
            ),
        ]

    def __str__(self) -> str:
        return f"{self.get_method_display()} {self.test_date or ''}".strip()


@tracked()
class DecompositionPeak(InputModel):
    """A DSC peak temperature at one heating rate, for Kissinger / E698 kinetics."""

    test = models.ForeignKey(DecompositionTest, on_delete=models.CASCADE, related_name="peaks")
    heating_rate_k_per_s = models.FloatField()
    peak_temperature_k = models.FloatField()

    class Meta:
        ordering = ["test_id", "heating_rate_k_per_s"]
        constraints = [
            models.CheckConstraint(
                condition=Q(heating_rate_k_per_s__gt=0), name="peak_heating_rate_positive"
            ),
            models.CheckConstraint(
                condition=Q(peak_temperature_k__gt=0), name="peak_temperature_absolute"
            ),
            models.UniqueConstraint(
                fields=["test", "heating_rate_k_per_s"], name="peak_one_per_heating_rate"
            ),
        ]


class BaselineMethod(models.TextChoices):
    SIGMOIDAL = "sigmoidal", "Sigmoidal"
    LINEAR = "linear", "Linear"


@tracked(exclude=["original"])
class DecompositionCurve(InputModel):
    """One measured curve of a decomposition test: a DSC scan or an adiabatic run."""

    test = models.ForeignKey(DecompositionTest, on_delete=models.CASCADE, related_name="curves")
    file_name = models.CharField(max_length=255)
    original = models.BinaryField()
    sha256 = models.CharField(max_length=64)
    columns = models.JSONField(default=dict)  # column name -> unit as written in the file
    data = models.JSONField()  # time_s, temperature_k, heat_flow_w | pressure_pa
    sample_mass_kg = models.FloatField()
    exotherm_positive = models.BooleanField(default=True)
    phi_factor = models.FloatField(null=True, blank=True)
    # Gas volume of an adiabatic cell, for the non-condensable gas after cooling.
    free_volume_m3 = models.FloatField(null=True, blank=True)
    baseline = models.CharField(max_length=10, choices=BaselineMethod.choices,
                                default=BaselineMethod.SIGMOIDAL)
    limit_low_k = models.FloatField(null=True, blank=True)
    limit_high_k = models.FloatField(null=True, blank=True)
    derived = models.JSONField(default=dict)

    class Meta:
        ordering = ["test_id", "id"]
        constraints = [
            models.CheckConstraint(condition=Q(sample_mass_kg__gt=0), name="curve_sample_mass_positive"),
            models.CheckConstraint(condition=Q(phi_factor__isnull=True) | Q(phi_factor__gte=1),
                                   name="curve_phi_at_least_one"),
            models.CheckConstraint(
                condition=Q(free_volume_m3__isnull=True) | Q(free_volume_m3__gt=0),
                name="curve_free_volume_positive"),
            models.CheckConstraint(
                condition=Q(limit_low_k__isnull=True) | Q(limit_high_k__isnull=True)
                | Q(limit_low_k__lt=models.F("limit_high_k")),
                name="curve_limits_ordered"),
        ]

    def __str__(self) -> str:
        return self.file_name


@tracked(exclude=["original"])
class CalorimetrySeries(InputModel):
    """A calorimeter's time series of one run: the original file and its parsed SI columns."""

    run = models.OneToOneField(CalorimetryRun, on_delete=models.CASCADE, related_name="series")
    file_name = models.CharField(max_length=255)
    original = models.BinaryField()
    sha256 = models.CharField(max_length=64)
    columns = models.JSONField(default=dict)  # column name -> unit as written in the file
    data = models.JSONField()  # time_s, heat_release_rate_w, dosed_fraction, reactor_temperature_k
    initial_mass_kg = models.FloatField()
    feed_mass_kg = models.FloatField()
    derived = models.JSONField(default=dict)

    class Meta:
        constraints = [
            models.CheckConstraint(condition=Q(initial_mass_kg__gt=0), name="series_initial_mass_positive"),
            models.CheckConstraint(condition=Q(feed_mass_kg__gt=0), name="series_feed_mass_positive"),
        ]
