"""Serializers of the published resources (names fixed by the API contract: add, never rename)."""

from __future__ import annotations

from django.core.exceptions import ValidationError as DjangoValidationError
from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from hazards.api.fields import QuantityField, canonical
from hazards.models import (
    CalorimetryRun,
    DecompositionTest,
    IndicatorSnapshot,
    Process,
    ReactionStep,
    Site,
    Solvent,
    Vessel,
)
from hazards.presenting import KINDS as INDICATOR_KINDS
from hazards.quantities import display_unit
from hazards.services.records import record_create, record_update


class RecordSerializer(serializers.ModelSerializer):
    """Writes through the record services; model validation errors come back per API field."""

    def _api_name(self, model_field: str) -> str:
        for name, field in self.fields.items():
            if field.source == model_field or name == model_field:
                return name
        return model_field

    def _run(self, action, **kwargs):
        try:
            return action(**kwargs)
        except DjangoValidationError as exc:
            if hasattr(exc, "error_dict"):
                detail = {
                    self._api_name(key) if key != "__all__" else "non_field_errors": [
                        m for e in errors for m in e.messages
                    ]
                    for key, errors in exc.error_dict.items()
                }
            else:
                detail = {"non_field_errors": exc.messages}
            raise serializers.ValidationError(detail) from None

    version = serializers.IntegerField(
        read_only=True, help_text="Incremented on every change; the ETag is built from it."
    )

    def get_field_names(self, declared_fields, info):
        names = list(super().get_field_names(declared_fields, info))
        return names if "version" in names else [*names, "version"]

    def create(self, validated_data):
        return self._run(record_create, model=self.Meta.model, data=validated_data)

    def update(self, instance, validated_data):
        # `expected_version` comes from If-Match: checked under a row lock by the service.
        return self._run(record_update, instance=instance, data=validated_data,
                         expected_version=self.context.get("expected_version"))


class SiteSerializer(RecordSerializer):
    class Meta:
        model = Site
        fields = ["id", "code", "name", "revalidation_interval_months"]


class ProcessSerializer(RecordSerializer):
    site = serializers.SlugRelatedField(slug_field="code", queryset=Site.objects.all())

    class Meta:
        model = Process
        fields = ["id", "name", "description", "site"]


class SolventSerializer(RecordSerializer):
    antoine_t_min = QuantityField("temperature", source="antoine_t_min_k", required=False,
                                  allow_null=True)
    antoine_t_max = QuantityField("temperature", source="antoine_t_max_k", required=False,
                                  allow_null=True)

    class Meta:
        model = Solvent
        fields = [
            "id", "name", "cas_number", "vapour_pressure_source", "antoine_a", "antoine_b",
            "antoine_c", "antoine_log_base", "antoine_pressure_unit", "antoine_temperature_unit",
            "antoine_t_min", "antoine_t_max", "antoine_source",
        ]


class VesselSerializer(RecordSerializer):
    volume = QuantityField("volume", source="volume_m3")
    heat_transfer_area = QuantityField("area", source="heat_transfer_area_m2")
    heat_transfer_coefficient = QuantityField(
        "heat_transfer_coefficient", source="heat_transfer_coefficient_w_per_m2_k"
    )
    coolant_temperature = QuantityField("temperature", source="coolant_temperature_k")
    design_pressure = QuantityField("pressure", source="design_pressure_pa")
    relief_set_pressure = QuantityField("pressure", source="relief_set_pressure_pa")
    headspace_volume = QuantityField("volume", source="headspace_volume_m3", required=False,
                                     allow_null=True)

    class Meta:
        model = Vessel
        fields = [
            "id", "name", "tag", "volume", "heat_transfer_area", "heat_transfer_coefficient",
            "coolant_temperature", "design_pressure", "relief_set_pressure", "headspace_volume",
        ]


# Indicator values: API key -> key in the snapshot's SI values; the kind of each comes from
# the presenter's table (hazards.presenting.KINDS), as on the pages and in the dossier.
INDICATOR_FIELDS = {
    name: (key, INDICATOR_KINDS[key]) for name, key in (
        ("adiabatic_temperature_rise", "adiabatic_temperature_rise_k"),
        ("mtsr", "mtsr_k"),
        ("mtt", "mtt_k"),
        ("td24", "td24_k"),
        ("tmr_ad_at_mtsr", "tmr_ad_at_mtsr_s"),
    )
}


def _quantity(value, kind):
    if value is None:
        return None
    return {"value": canonical(value, kind), "unit": display_unit(kind)}


def _indicator(values: dict, key: str):
    return _quantity(values.get(key), INDICATOR_KINDS[key])


def indicators_payload(snapshot: IndicatorSnapshot | None) -> dict | None:
    """The `indicators` object of the API contract, from a stored snapshot."""
    if snapshot is None:
        return None
    values = snapshot.values
    payload = {
        name: _quantity(values.get(key), kind) for name, (key, kind) in INDICATOR_FIELDS.items()
    }
    payload.update(
        criticality_class=values.get("criticality_class"),
        severity=values.get("severity"),
        probability=values.get("probability"),
        risk_cell=values.get("risk_cell"),
        cooling_margin=values.get("cooling_margin"),
        cooling_capacity=_indicator(values, "cooling_capacity_w"),
        plant_peak_heat_release=_indicator(values, "plant_peak_heat_release_w"),
        minimum_dosing_time=_indicator(values, "minimum_dosing_time_s"),
        mtsr_time=_indicator(values, "mtsr_time_s"),
        end_pressure=_indicator(values, "end_pressure_pa"),
        td24_below_process_temperature=values.get("td24_below_process_temperature"),
        mtt_at_ambient_pressure=_indicator(values, "mtt_at_ambient_pressure_k"),
        criticality_class_at_ambient_pressure=values.get("criticality_class_at_ambient_pressure"),
        barrier_checks=list(values.get("barrier_checks") or []),
        warnings=list(snapshot.warnings),
        methods=dict(snapshot.methods),
        parameters=dict(snapshot.parameters),
        references=list(snapshot.references),
        inputs_hash=snapshot.inputs_hash,
        calcs_version=snapshot.calcs_version,
        libraries=dict(snapshot.libraries),
        computed_at=snapshot.computed_at.isoformat().replace("+00:00", "Z"),
    )
    return payload


CHECK_RESULTS = ["pass", "fail", "unknown"]


class CheckNumberSerializer(serializers.Serializer):
    value = serializers.FloatField(allow_null=True)
    unit = serializers.CharField(allow_blank=True, help_text="SI unit of the value.")


class BarrierCheckSerializer(serializers.Serializer):
    """One barrier check of a protective measure (issue 17), computed with the indicators."""

    name = serializers.CharField()
    measure = serializers.IntegerField(allow_null=True, help_text="Id of the measure.")
    kind = serializers.CharField(help_text="Kind of the measure.")
    result = serializers.ChoiceField(CHECK_RESULTS, help_text="unknown: an input "
                                     "is missing (named in `missing`) or the method does not "
                                     "apply (said in `note`); it never passes on a guess.")
    passes = serializers.BooleanField(allow_null=True)
    numbers = serializers.DictField(child=CheckNumberSerializer(), help_text="The check's "
                                    "inputs and results, SI values with their units.")
    method = serializers.CharField()
    references = serializers.ListField(child=serializers.CharField())
    note = serializers.CharField(allow_blank=True, help_text="Assumptions and cautions; the "
                                 "relief screening always says a relief specialist confirms it.")
    missing = serializers.ListField(child=serializers.CharField())


class IndicatorsSerializer(serializers.Serializer):
    """The `indicators` object (documentation of `indicators_payload`; read only)."""

    barrier_checks = BarrierCheckSerializer(
        many=True, help_text="Checks of the step's protective measures (empty without any).")

    adiabatic_temperature_rise = QuantityField("temperature_difference", allow_null=True)
    mtsr = QuantityField("temperature", allow_null=True, help_text="Maximum temperature of the "
                         "synthesis reaction after a cooling failure.")
    mtt = QuantityField("temperature", allow_null=True, help_text="Maximum technical "
                        "temperature.")
    td24 = QuantityField("temperature", allow_null=True, help_text="Temperature at which the "
                         "time to maximum rate under adiabatic conditions is 24 h.")
    tmr_ad_at_mtsr = QuantityField("duration_h", allow_null=True)
    criticality_class = serializers.IntegerField(
        allow_null=True, min_value=1, max_value=5,
        help_text="Criticality class of the cooling-failure scenario, 1 (least) to 5 (most "
                  "critical), from the order of process temperature, MTSR, MTT and TD24.")
    severity = serializers.CharField(
        allow_null=True, help_text="Severity level from the adiabatic rise, a label of the "
        "site's scale (3 levels: low, medium, high; 4 levels: negligible, medium, critical, "
        "catastrophic).")
    probability = serializers.CharField(
        allow_null=True, help_text="Probability level from TMRad at the MTSR, a label of the "
        "site's scale (3 levels: high, medium, low; 6 levels: frequent, probable, occasional, "
        "seldom, remote, almost impossible).")
    risk_cell = serializers.CharField(
        allow_null=True, help_text="The risk-matrix cell of severity and probability, as the "
        "site's matrix names it (e.g. acceptable, unacceptable); null when a level is unknown.")
    cooling_margin = serializers.FloatField(
        allow_null=True, help_text="Cooling capacity over the plant's peak heat release "
        "(dimensionless ratio; below the configured minimum a warning is given).")
    cooling_capacity = QuantityField("power", allow_null=True)
    plant_peak_heat_release = QuantityField("power", allow_null=True)
    minimum_dosing_time = QuantityField("time", allow_null=True)
    mtsr_time = QuantityField("time", allow_null=True)
    end_pressure = QuantityField("pressure", allow_null=True)
    td24_below_process_temperature = serializers.BooleanField(
        allow_null=True, help_text="True when TD24 is below the process temperature.")
    mtt_at_ambient_pressure = QuantityField(
        "temperature", allow_null=True, help_text="Under vacuum only: the boiling point at 1 atm, "
        "the MTT if the vacuum is lost (null otherwise).")
    criticality_class_at_ambient_pressure = serializers.IntegerField(
        allow_null=True, min_value=1, max_value=5, help_text="Under vacuum only: the class with "
        "the MTT at 1 atm, given beside the class (null otherwise).")
    warnings = serializers.ListField(
        child=serializers.CharField(), help_text="What the numbers cannot say on their own, in "
        "words: unknown inputs (e.g. MTT unknown for a closed vessel without vapour-pressure "
        "data), the basis used, extrapolation distances, and plausibility warnings that name "
        "the field, its value and the likely unit slip.")
    methods = serializers.DictField(child=serializers.CharField(),
                                    help_text="Indicator -> the calcs method that produced it.")
    parameters = serializers.DictField(child=serializers.JSONField(),
                                       help_text="Parameters of the methods, SI units.")
    references = serializers.ListField(child=serializers.CharField())
    inputs_hash = serializers.CharField(help_text="SHA-256 of the canonical JSON of the inputs.")
    calcs_version = serializers.CharField()
    libraries = serializers.DictField(
        child=serializers.CharField(),
        help_text="Versions of Python and of the numeric libraries that computed these values "
                  "(empty for snapshots computed before they were recorded).")
    computed_at = serializers.DateTimeField()


class StepSerializer(RecordSerializer):
    process = serializers.PrimaryKeyRelatedField(queryset=Process.objects.all())
    solvent = serializers.PrimaryKeyRelatedField(
        queryset=Solvent.objects.all(), required=False, allow_null=True
    )
    vessel = serializers.PrimaryKeyRelatedField(
        queryset=Vessel.objects.all(), required=False, allow_null=True
    )
    process_temperature = QuantityField("temperature", source="process_temperature_k")
    reaction_mass = QuantityField("mass", source="reaction_mass_kg")
    specific_heat_capacity = QuantityField(
        "specific_heat_capacity", source="specific_heat_capacity_j_per_kg_k"
    )
    operating_pressure = QuantityField("pressure", source="operating_pressure_pa")
    dosing_time = QuantityField("time", source="dosing_time_s", required=False, allow_null=True)
    mtt_override = QuantityField("temperature", source="mtt_override_k", required=False,
                                 allow_null=True)
    initial_mass_fraction = QuantityField(
        "fraction", required=False, allow_null=True,
        help_text="Semi-batch: the initial charge as a fraction of the final mass (m_0/m_final); "
        "with it an entered maximum accumulation is used on the mass present.")
    non_volatile_declared = serializers.BooleanField(
        required=False, help_text="Closed vessel without solvent vapour-pressure data: the "
        "reaction mass is declared non-volatile (needs `non_volatile_reason`); without it MTT "
        "is unknown and no class is assigned.")
    indicators = serializers.SerializerMethodField()
    needs_review = serializers.BooleanField(read_only=True)

    class Meta:
        model = ReactionStep
        fields = [
            "id", "process", "sequence", "name", "operation_mode", "process_temperature",
            "reaction_mass", "specific_heat_capacity", "system", "operating_pressure", "solvent",
            "vessel", "dosing_time", "mtt_override", "mtt_override_reason",
            "initial_mass_fraction", "non_volatile_declared", "non_volatile_reason",
            "needs_review", "indicators",
        ]

    def update(self, instance, validated_data):
        step = super().update(instance, validated_data)
        step.__dict__.pop("current_snapshots", None)  # prefetched before the write: stale
        return step

    @extend_schema_field(IndicatorsSerializer(allow_null=True))
    def get_indicators(self, step) -> dict | None:
        current = getattr(step, "current_snapshots", None)
        if current is not None:
            return indicators_payload(current[0] if current else None)
        return indicators_payload(step.snapshots.filter(is_current=True).first())


class CalorimetryRunSerializer(RecordSerializer):
    step = serializers.PrimaryKeyRelatedField(queryset=ReactionStep.objects.all())
    specific_reaction_heat = QuantityField(
        "specific_energy", source="specific_reaction_heat_j_per_kg", required=False,
        allow_null=True, help_text="Q′; may be left out when the run's series follows "
        "(`series/` derives it).",
    )
    max_accumulation = QuantityField("fraction", required=False, allow_null=True)
    max_heat_release_rate = QuantityField(
        "specific_power", source="max_heat_release_rate_w_per_kg", required=False, allow_null=True
    )
    gas_release = QuantityField(
        "specific_amount", source="gas_release_mol_per_kg", required=False, allow_null=True
    )
    lab_scale = QuantityField("mass", source="lab_scale_kg", required=False, allow_null=True)

    class Meta:
        model = CalorimetryRun
        fields = [
            "id", "step", "instrument", "run_date", "lab_scale", "specific_reaction_heat",
            "max_accumulation", "max_heat_release_rate", "gas_release", "raw_file_name",
            "raw_file_sha256", "is_basis", "notes",
        ]
        read_only_fields = ["raw_file_sha256"]
        # The one-basis-per-step constraint is met by the write itself: marking a run as the
        # basis releases the step's previous one in the same transaction (services.basis).
        validators: list = []


class DecompositionTestSerializer(RecordSerializer):
    step = serializers.PrimaryKeyRelatedField(queryset=ReactionStep.objects.all())
    onset_temperature = QuantityField(
        "temperature", source="onset_temperature_k", required=False, allow_null=True,
        help_text="Typed, or derived from the curves (`curves/`): the extrapolated onset of "
        "the slowest scan.")
    decomposition_energy = QuantityField(
        "specific_energy", source="decomposition_energy_j_per_kg", required=False,
        allow_null=True, help_text="Typed, or derived from the curves: the mean energy of "
        "the scans.")
    kinetics = serializers.SerializerMethodField(
        help_text="Kinetics from the curves: the chosen model, its parameters with units and "
        "standard errors, fit statistics, the model comparison and the autocatalysis screen; "
        "`status` says what is missing until scans at 3 heating rates exist.")
    heating_rate = QuantityField(
        "heating_rate", source="heating_rate_k_per_s", required=False, allow_null=True
    )
    sample_mass = QuantityField("mass", source="sample_mass_kg", required=False, allow_null=True)
    activation_energy = QuantityField(
        "molar_energy", source="activation_energy_j_per_mol", required=False, allow_null=True
    )
    reference_temperature = QuantityField(
        "temperature", source="reference_temperature_k", required=False, allow_null=True
    )
    heat_release_rate_at_reference = QuantityField(
        "specific_power", source="heat_release_rate_at_reference_w_per_kg", required=False,
        allow_null=True,
    )
    phi_factor = QuantityField("phi_factor", required=False, allow_null=True)

    class Meta:
        model = DecompositionTest
        fields = [
            "id", "step", "method", "test_date", "instrument", "sample_mass", "heating_rate",
            "crucible", "onset_temperature", "decomposition_energy", "activation_energy",
            "reference_temperature", "heat_release_rate_at_reference", "phi_factor", "is_basis",
            "notes", "kinetics",
        ]
        validators: list = []  # one basis per step: see CalorimetryRunSerializer

    @extend_schema_field({"type": "object", "additionalProperties": True})
    def get_kinetics(self, test) -> dict:
        return kinetics_payload(test.kinetics or {})


def kinetics_payload(k: dict) -> dict:
    """The public shape of `DecompositionTest.kinetics` (no covariance matrix or E(α) arrays
    beyond what a reader needs)."""
    if not k:
        return {"status": "no curves"}
    if k.get("status") != "fitted":
        return {"status": k.get("status"), "files_sha256": k.get("files_sha256", [])}
    chosen = k["fits"][k["model"]]
    return {
        "status": "fitted", "model": k["model"], "f_alpha": chosen["f_alpha"],
        "method": chosen["method"], "parameters": chosen["parameters"],
        "pre_exponential_per_s": chosen["pre_exponential_per_s"],
        "reference_temperature_k": chosen["reference_temperature_k"],
        "statistics": chosen["statistics"], "comparison": k["choice"],
        "autocatalysis_screen": k["screen"], "alternatives": {
            name: {"parameters": f["parameters"], "statistics": f["statistics"]}
            for name, f in k["fits"].items() if name != k["model"]},
        "e_alpha": {m: {"mean_j_per_mol": p["mean_j_per_mol"], "spread": p["spread"],
                        "warnings": p["warnings"]} for m, p in k["e_alpha"].items()},
        "lowest_measured_temperature_k": k.get("lowest_measured_k"),
        "files_sha256": k["files_sha256"], "calcs_version": k.get("calcs_version"),
    }


class IndicatorSnapshotSerializer(serializers.ModelSerializer):
    indicators = serializers.SerializerMethodField()

    class Meta:
        model = IndicatorSnapshot
        fields = ["id", "computed_at", "is_current", "inputs_hash", "calcs_version", "indicators",
                  "inputs"]

    @extend_schema_field(IndicatorsSerializer)
    def get_indicators(self, snapshot) -> dict:
        return indicators_payload(snapshot)


class ProblemTypeSerializer(serializers.Serializer):
    code = serializers.CharField()
    status = serializers.IntegerField()
    title = serializers.CharField()
    description = serializers.CharField()
