"""Input and result types of :func:`calcs.scenario.assess_step` (SI floats; ``None`` where
unknown). Their own module, so the scenario's steps import them without importing the
dispatcher."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field, fields
from typing import Any

from calcs.constants import ATM
from calcs.criticality import (
    DEFAULT_RISK_MATRIX,
    PROBABILITY_3,
    PROBABILITY_6,
    SEVERITY_3,
    SEVERITY_4,
    RiskMatrix,
    Scale,
)
from calcs.result import json_safe
from calcs.vapour import AntoineInputs


@dataclass(frozen=True)
class SeriesInputs:
    """A measured (lab-scale) heat-flow calorimetry series, SI units."""

    time_s: Sequence[float]
    heat_release_rate_w: Sequence[float]
    dosed_fraction: Sequence[float]  # 0..1 of the stoichiometric feed
    reactor_temperature_k: Sequence[float] | None
    initial_mass_kg: float
    feed_mass_kg: float


@dataclass(frozen=True)
class DecompositionKinetics:
    """A rate model fitted to a decomposition test's curves (:mod:`calcs.kinetic_fit`)."""

    model: str  # a key of calcs.rate_models.RATE_MODELS
    parameters: tuple[float, ...]  # E [J/mol], ln k_ref, n[, log10 z]
    reference_temperature_k: float
    covariance: tuple[tuple[float, ...], ...] | None = None
    lowest_measured_k: float | None = None
    files_sha256: tuple[str, ...] = ()
    # scans − 1 when the covariance includes the scan-to-scan jackknife; the standard
    # uncertainty of the mean decomposition energy [J/kg]
    degrees_of_freedom: int | None = None
    energy_stderr_j_per_kg: float = 0.0


@dataclass(frozen=True)
class MeasureInputs:
    """Design values of one protective measure (SI floats, ``None`` where not entered)."""

    id: int | None
    kind: str
    trip_temperature_k: float | None = None
    response_time_s: float | None = None
    capacity_w: float | None = None
    set_pressure_pa: float | None = None  # absolute
    vent_area_m2: float | None = None
    discharge_coefficient: float | None = None
    relief_system: str | None = None  # "vapour" | "gassy" | "hybrid"
    vessel_volume_m3: float | None = None
    condenser_ua_w_per_k: float | None = None
    coolant_inlet_temperature_k: float | None = None
    coolant_outlet_temperature_k: float | None = None
    vapour_line_diameter_m: float | None = None
    latent_heat_j_per_kg: float | None = None
    vapour_molar_mass_kg_per_mol: float | None = None
    liquid_density_kg_per_m3: float | None = None
    synthesis_activation_energy_j_per_mol: float | None = None


@dataclass(frozen=True)
class StepInputs:
    """Inputs of one reaction step, SI floats; ``None`` where unknown."""

    operation_mode: str  # "batch" | "semi_batch"
    process_temperature_k: float
    reaction_mass_kg: float | None
    specific_heat_capacity_j_per_kg_k: float | None
    system: str  # "open" | "closed"
    operating_pressure_pa: float | None  # absolute
    dosing_time_s: float | None
    mtt_override_k: float | None = None
    solvent_cas: str | None = None
    solvent_antoine: AntoineInputs | None = None
    vessel_heat_transfer_area_m2: float | None = None
    vessel_u_w_per_m2_k: float | None = None
    vessel_coolant_temperature_k: float | None = None
    vessel_relief_set_pressure_pa: float | None = None  # absolute
    vessel_design_pressure_pa: float | None = None  # absolute
    vessel_headspace_m3: float | None = None
    specific_reaction_heat_j_per_kg: float | None = None  # per kg final reaction mass
    max_accumulation: float | None = None
    max_heat_release_rate_w_per_kg: float | None = None
    gas_release_mol_per_kg: float | None = None
    series: SeriesInputs | None = None
    decomposition_method: str | None = None  # "dsc" | "adiabatic"
    onset_temperature_k: float | None = None
    decomposition_energy_j_per_kg: float | None = None
    activation_energy_j_per_mol: float | None = None
    reference_temperature_k: float | None = None
    heat_release_rate_at_reference_w_per_kg: float | None = None
    phi_factor: float | None = None
    peak_temperatures: tuple[tuple[float, float], ...] | None = None  # (β [K/s], T_p [K])
    # an explicit, recorded declaration that the reaction mass is non-volatile: a closed
    # vessel then counts pad and released gas only (without it, no vapour data = MTT unknown)
    non_volatile_declared: bool = False
    initial_mass_fraction: float | None = None  # m_0/m_final of a semi-batch step, (0, 1]
    decomposition_kinetics: DecompositionKinetics | None = None  # fitted from the curves
    measures: tuple[MeasureInputs, ...] = ()  # protective measures (issue 17), design values
    # E_a of the desired (dosed) reaction [J/mol]: moves the dosing model's k from the lab's
    # temperature to the plant's (calcs.operating_point); None: only the lab's temperature
    dosing_activation_energy_j_per_mol: float | None = None
    # the largest accumulation on the mass present, in final-mass terms (max MTSR = T_p +
    # X·ΔT_ad), and its time from the start of dosing [s]: a model's answer at this point
    accumulation_on_mass_present: float | None = None
    accumulation_time_s: float | None = None


_SEVERITY = {"3-level": SEVERITY_3, "4-level": SEVERITY_4}
_PROBABILITY = {"3-level": PROBABILITY_3, "6-level": PROBABILITY_6}


@dataclass(frozen=True)
class AssessmentSettings:
    """Site choices: scales, risk matrix and the documented screening assumptions.

    ``severity_scale`` is "3-level" (default) or "4-level" or a
    :class:`calcs.criticality.Scale`; ``probability_scale`` "3-level" (default),
    "6-level" or a Scale. ``risk_matrix`` defaults to an organisational choice
    (configure per site). The screening E_a (50 kJ/mol) and q at onset
    (20 W/kg) are [MEMORY, not confirmed] values quoted for Keller et al. 1997;
    the ARC detection threshold 0.02 K/min is common ARC practice [MEMORY].
    """

    severity_scale: str | Scale = "3-level"
    probability_scale: str | Scale = "3-level"
    risk_matrix: RiskMatrix = DEFAULT_RISK_MATRIX
    screening_activation_energy_j_per_mol: float = 50e3
    screening_heat_release_rate_w_per_kg: float = 20.0
    arc_detection_rate_k_per_s: float = 0.02 / 60.0
    end_of_reaction_fraction: float = 0.01
    ambient_pressure_pa: float = ATM
    minimum_cooling_margin: float = 1.3
    # how far below the lowest measured temperature TD24/TMRad may be extrapolated before a
    # warning (common practice, no source)
    max_extrapolation_k: float = 50.0
    # An emergency measure passes its time check when TMRad is at least this many times its
    # response time (common practice, no source).
    minimum_time_ratio: float = 2.0

    def severity(self) -> Scale:
        """The severity :class:`Scale` selected."""
        s = self.severity_scale
        return s if isinstance(s, Scale) else _SEVERITY[s]

    def probability(self) -> Scale:
        """The probability :class:`Scale` selected."""
        s = self.probability_scale
        return s if isinstance(s, Scale) else _PROBABILITY[s]


@dataclass(frozen=True)
class Assessment:
    """Indicators of one step (SI floats or ``None``), with provenance."""

    adiabatic_temperature_rise_k: float | None = None
    mtsr_k: float | None = None
    mtsr_time_s: float | None = None
    mtt_k: float | None = None
    mtt_at_ambient_pressure_k: float | None = None  # under vacuum: MTT and class at 1 atm
    criticality_class_at_ambient_pressure: int | None = None
    td24_k: float | None = None
    tmr_ad_at_mtsr_s: float | None = None
    criticality_class: int | None = None
    td24_below_process_temperature: bool = False
    severity: str | None = None
    probability: str | None = None
    risk_cell: str | None = None
    cooling_capacity_w: float | None = None
    plant_peak_heat_release_w: float | None = None
    cooling_margin: float | None = None
    minimum_dosing_time_s: float | None = None
    end_pressure_pa: float | None = None
    barrier_checks: tuple[dict, ...] = ()  # only steps with measures carry them
    warnings: tuple[str, ...] = ()
    methods: dict[str, str] = field(default_factory=dict)
    parameters: dict[str, Any] = field(default_factory=dict)
    references: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """JSON-safe dict of every field (tuples as lists, NaN/inf as ``None``)."""
        data = {f.name: json_safe(getattr(self, f.name)) for f in fields(self)}
        if not data["barrier_checks"]:
            # steps without measures keep the snapshot shape they always had
            del data["barrier_checks"]
        return data


DEFAULT_SETTINGS = AssessmentSettings()
