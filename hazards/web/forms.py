"""Forms of every record: a value-and-unit input for each quantity (hazards.web.quantity_fields)."""

from __future__ import annotations

from django import forms

from hazards.fieldkinds import LABELS
from hazards.models import (
    CalorimetryRun,
    DecompositionPeak,
    DecompositionTest,
    Process,
    ReactionStep,
    Solvent,
    Vessel,
)
from hazards.web.display import human_unit
from hazards.web.quantity_fields import QuantityFormField, quantity_formfield_callback

REASON_HELP = ("Someone has signed these data: say why they change. The reason goes into the "
               "audit trail with your name and the time.")


EXAMPLES = {
    "temperature": "45 °C, 318.15 K or 113 °F", "mass": "4200 kg or 400 g",
    "specific_heat_capacity": "1.9 kJ/(kg·K)", "pressure": "1.013 bar, 2 bar g or 29.4 psi",
    "time": "120 min or 2 h", "specific_energy": "190 kJ/kg", "fraction": "0.42",
    "specific_power": "24 W/kg or 24 mW/g", "specific_amount": "1.2 mol/kg",
    "heating_rate": "4 K/min", "molar_energy": "95 kJ/mol", "volume": "6.3 m³",
    "area": "14 m²", "heat_transfer_coefficient": "320 W/(m²·K)", "phi_factor": "1.9",
}


def _readable(prepare):
    """Stored values shown in the input as people write them ('30 °C', not '30 degC')."""
    def prepare_value(value):
        shown = prepare(value)
        return shown.replace(" degC", " °C") if isinstance(shown, str) else shown
    return prepare_value


def humanise(form) -> None:
    """Labels people read, and unit help with examples, for every field of a form."""
    for name, field in form.fields.items():
        if name in LABELS:
            field.label = LABELS[name]
        if isinstance(field, QuantityFormField):
            field.prepare_value = _readable(field.prepare_value)
            unit = human_unit(field.kind) or "a plain number"
            example = EXAMPLES.get(field.kind)
            field.help_text = (f"A value with its unit, e.g. {example}; a bare number is read "
                               f"as {unit}." if example else field.help_text)


class RecordForm(forms.ModelForm):
    """A model form that carries the record's version (optimistic lock) and, when the data
    are under review or signed, a required reason."""

    version = forms.IntegerField(widget=forms.HiddenInput, required=False)
    reason = forms.CharField(
        label="Reason for the change", required=False, max_length=500, help_text=REASON_HELP,
        widget=forms.Textarea(attrs={"rows": 2}),
    )

    def __init__(self, *args, needs_reason: bool = False, **kwargs):
        super().__init__(*args, **kwargs)
        humanise(self)
        self.needs_reason = needs_reason
        if not needs_reason:
            del self.fields["reason"]
        else:
            self.fields["reason"].required = True
        if self.instance.pk is not None and not self.is_bound:
            self.initial["version"] = self.instance.version
        for name, field in self.fields.items():
            if name != "version" and field.required:
                field.widget.attrs.setdefault("required", True)
                field.widget.attrs.setdefault("aria-required", "true")

    def record_data(self) -> dict:
        """The cleaned values of the model's own fields (what the service writes)."""
        skip = {"version", "reason"}
        return {name: value for name, value in self.cleaned_data.items()
                if name not in skip and name in self._meta.fields}


def _meta(model, fields, widgets=None):
    return type("Meta", (), {"model": model, "fields": fields, "widgets": widgets or {},
                             "formfield_callback": staticmethod(
                                 quantity_formfield_callback(model))})


DATE = forms.DateInput(attrs={"type": "date"}, format="%Y-%m-%d")
TEXT3 = forms.Textarea(attrs={"rows": 3})


class ProcessForm(RecordForm):
    Meta = _meta(Process, ["name", "site", "description"], {"description": TEXT3})


class StepForm(RecordForm):
    Meta = _meta(ReactionStep, [
        "sequence", "name", "operation_mode", "process_temperature_k", "reaction_mass_kg",
        "specific_heat_capacity_j_per_kg_k", "system", "operating_pressure_pa", "solvent",
        "vessel", "dosing_time_s", "mtt_override_k", "mtt_override_reason",
        "initial_mass_fraction", "non_volatile_declared", "non_volatile_reason",
    ], {"mtt_override_reason": forms.Textarea(attrs={"rows": 2}),
        "non_volatile_reason": forms.Textarea(attrs={"rows": 2})})


class CalorimetryRunForm(RecordForm):
    Meta = _meta(CalorimetryRun, [
        "instrument", "run_date", "lab_scale_kg", "specific_reaction_heat_j_per_kg",
        "max_accumulation", "max_heat_release_rate_w_per_kg", "gas_release_mol_per_kg",
        "is_basis", "notes",
    ], {"run_date": DATE, "notes": TEXT3})


class DecompositionTestForm(RecordForm):
    Meta = _meta(DecompositionTest, [
        "method", "test_date", "instrument", "sample_mass_kg", "heating_rate_k_per_s",
        "crucible", "onset_temperature_k", "decomposition_energy_j_per_kg",
        "activation_energy_j_per_mol", "reference_temperature_k",
        "heat_release_rate_at_reference_w_per_kg", "phi_factor", "is_basis", "notes",
    ], {"test_date": DATE, "notes": TEXT3})


class PeakForm(forms.ModelForm):
    Meta = _meta(DecompositionPeak, ["heating_rate_k_per_s", "peak_temperature_k"])

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        humanise(self)
        for field in self.fields.values():
            field.required = False  # an empty row is skipped


class VesselForm(RecordForm):
    Meta = _meta(Vessel, [
        "tag", "name", "volume_m3", "heat_transfer_area_m2",
        "heat_transfer_coefficient_w_per_m2_k", "coolant_temperature_k", "design_pressure_pa",
        "relief_set_pressure_pa", "headspace_volume_m3",
    ])


class SolventForm(RecordForm):
    Meta = _meta(Solvent, [
        "name", "cas_number", "vapour_pressure_source", "antoine_a", "antoine_b", "antoine_c",
        "antoine_log_base", "antoine_pressure_unit", "antoine_temperature_unit",
        "antoine_t_min_k", "antoine_t_max_k", "antoine_source",
    ])


# Form key (in URLs) -> (form class, model).
FORMS = {
    "process": ProcessForm,
    "step": StepForm,
    "calorimetry": CalorimetryRunForm,
    "decomposition": DecompositionTestForm,
    "vessel": VesselForm,
    "solvent": SolventForm,
}

PEAK_ROWS = 4
