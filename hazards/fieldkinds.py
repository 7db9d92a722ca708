"""Which stored SI field holds which kind of quantity (used by forms, admin and history)."""

from __future__ import annotations

QUANTITY_FIELDS: dict[str, dict[str, str]] = {
    "vessel": {
        "volume_m3": "volume",
        "heat_transfer_area_m2": "area",
        "heat_transfer_coefficient_w_per_m2_k": "heat_transfer_coefficient",
        "coolant_temperature_k": "temperature",
        "design_pressure_pa": "pressure",
        "relief_set_pressure_pa": "pressure",
        "headspace_volume_m3": "volume",
    },
    "solvent": {"antoine_t_min_k": "temperature", "antoine_t_max_k": "temperature"},
    "reactionstep": {
        "process_temperature_k": "temperature",
        "reaction_mass_kg": "mass",
        "specific_heat_capacity_j_per_kg_k": "specific_heat_capacity",
        "operating_pressure_pa": "pressure",
        "dosing_time_s": "time",
        "mtt_override_k": "temperature",
        "initial_mass_fraction": "fraction",
    },
    "calorimetryrun": {
        "lab_scale_kg": "mass",
        "specific_reaction_heat_j_per_kg": "specific_energy",
        "max_accumulation": "fraction",
        "max_heat_release_rate_w_per_kg": "specific_power",
        "gas_release_mol_per_kg": "specific_amount",
    },
    "decompositiontest": {
        "sample_mass_kg": "mass",
        "heating_rate_k_per_s": "heating_rate",
        "onset_temperature_k": "temperature",
        "decomposition_energy_j_per_kg": "specific_energy",
        "activation_energy_j_per_mol": "molar_energy",
        "reference_temperature_k": "temperature",
        "heat_release_rate_at_reference_w_per_kg": "specific_power",
        "phi_factor": "phi_factor",
    },
    "decompositionpeak": {
        "heating_rate_k_per_s": "heating_rate",
        "peak_temperature_k": "temperature",
    },
    "calorimetryseries": {"initial_mass_kg": "mass", "feed_mass_kg": "mass"},
    "measure": {
        "trip_temperature_k": "temperature",
        "response_time_s": "response_time",
        "capacity_w": "capacity",
        "set_pressure_pa": "pressure",
        "vent_area_m2": "area",
        "discharge_coefficient": "discharge_coefficient",
        "vessel_volume_m3": "volume",
        "condenser_ua_w_per_k": "thermal_conductance",
        "coolant_inlet_temperature_k": "temperature",
        "coolant_outlet_temperature_k": "temperature",
        "vapour_line_diameter_m": "length",
        "latent_heat_j_per_kg": "specific_energy",
        "vapour_molar_mass_kg_per_mol": "molar_mass",
        "liquid_density_kg_per_m3": "density",
        "synthesis_activation_energy_j_per_mol": "activation_energy",
    },
    "decompositioncurve": {
        "sample_mass_kg": "mass",
        "phi_factor": "phi_factor",
        "free_volume_m3": "volume",
        "limit_low_k": "temperature",
        "limit_high_k": "temperature",
    },
}


def kinds_for(model) -> dict[str, str]:
    return QUANTITY_FIELDS.get(model._meta.model_name, {})


# What people call each field (forms, change records, notifications).
LABELS = {
    "sequence": "Sequence number", "operation_mode": "Operation mode", "system": "System",
    "process_temperature_k": "Process temperature Tp",
    "reaction_mass_kg": "Reaction mass (plant scale)",
    "specific_heat_capacity_j_per_kg_k": "Specific heat capacity cp",
    "operating_pressure_pa": "Operating pressure", "dosing_time_s": "Dosing time",
    "mtt_override_k": "MTT override", "mtt_override_reason": "Reason for the MTT override",
    "initial_mass_fraction": "Initial charge as a fraction of the final mass (semi-batch)",
    "non_volatile_declared": "Reaction mass declared non-volatile (closed vessel without "
                             "vapour-pressure data)",
    "non_volatile_reason": "Basis of the non-volatile declaration",
    "lab_scale_kg": "Lab-scale mass", "run_date": "Run date",
    "specific_reaction_heat_j_per_kg": "Specific reaction heat Q′",
    "max_accumulation": "Maximum accumulation X_ac,max",
    "max_heat_release_rate_w_per_kg": "Peak heat-release rate",
    "gas_release_mol_per_kg": "Gas release", "is_basis": "Basis of the assessment",
    "test_date": "Test date", "sample_mass_kg": "Sample mass", "heating_rate_k_per_s": "Heating rate",
    "onset_temperature_k": "Onset temperature",
    "decomposition_energy_j_per_kg": "Decomposition energy",
    "activation_energy_j_per_mol": "Activation energy Ea",
    "reference_temperature_k": "Reference temperature",
    "heat_release_rate_at_reference_w_per_kg": "Heat-release rate at the reference temperature",
    "phi_factor": "φ factor of the test", "peak_temperature_k": "Peak temperature",
    "volume_m3": "Volume", "heat_transfer_area_m2": "Heat-transfer area",
    "heat_transfer_coefficient_w_per_m2_k": "Heat-transfer coefficient U",
    "coolant_temperature_k": "Coolant temperature", "design_pressure_pa": "Design pressure",
    "relief_set_pressure_pa": "Relief set pressure", "headspace_volume_m3": "Headspace volume",
    "cas_number": "CAS number", "vapour_pressure_source": "Vapour pressure from",
    "antoine_a": "Antoine A", "antoine_b": "Antoine B", "antoine_c": "Antoine C",
    "antoine_log_base": "Antoine logarithm", "antoine_pressure_unit": "Antoine pressure unit",
    "antoine_temperature_unit": "Antoine temperature unit",
    "antoine_t_min_k": "Antoine range, lowest temperature",
    "antoine_t_max_k": "Antoine range, highest temperature",
    "antoine_source": "Source of the Antoine set",
}
