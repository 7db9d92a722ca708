"""What-if evaluation and the safe operating window of one semi-batch step.

Reads only (selectors), except `apply_point`. The desired reaction's model comes from
`calcs.semibatch`:

* with a calorimetry series on the step: the pseudo-first-order k fitted to the decay of the
  heat release after dosing, at the run's temperature ("pseudo_first_order.series_fit");
* without one: k inferred from the entered maximum accumulation at the step's own dosing
  time and temperature, final-mass basis ("pseudo_first_order.from_entered_accumulation"),
  said so in the warnings — an inference, not a measurement;
* neither: refused (`NO_MODEL_DATA`).

k moves with temperature by an activation energy: entered with the request, else fitted
(Arrhenius) from the step's series at two or more temperatures, else none — and then only the
measured temperature (±0.5 K) is evaluated and other temperatures are refused
(`NO_ACTIVATION_ENERGY`): with no E_a there is no prediction, and no guess is conservative
in both directions (a higher k lowers the accumulation but raises the peak heat release).

Each point is assessed by `calcs.scenario.assess_step` on the step's inputs with
`dataclasses.replace`: the dosing time and temperature (and the activation energy) and, with
a series, nothing else: the assessment chooses, as it does for the step itself, between the
series as measured (the point agrees with the lab run), the dosing model at the point, or no
credit (`calcs.operating_point`), so the what-if at the step's own point answers exactly the
step's indicators. Without a series the model's accumulation on the mass present and its peak
heat release are passed in (at the step's own point its entered numbers, as the step reads
them). The window vectorises the same equations over the grid
(`calcs.semibatch.operating_window`); MTT and TD24 come from one assessment (one per
temperature for a closed vessel, whose MTT depends on T_p).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from calcs import operating_point, scenario, semibatch
from calcs.errors import CalcInputError
from hazards import trail
from hazards.models import CalorimetrySeries
from hazards.review.access import can_edit_process
from hazards.services.indicators import load_cases
from hazards.services.records import record_update

NOT_SEMI_BATCH = "The step is a batch step: it has no dosing time to explore."
NO_MODEL_DATA = ("The step has neither a calorimetry series that supports the model nor an "
                 "entered maximum accumulation between 0 and 1: there is nothing to model the "
                 "accumulation from.")
NO_SPECIFIC_HEAT = "The step has no reaction heat (calorimetry run): nothing to evaluate."
NO_ACTIVATION_ENERGY = ("No activation energy of the desired reaction (enter one, or measure "
                        "series at two or more temperatures): only the measured temperature "
                        "{t:.2f} °C can be evaluated.")
NO_SERIES_WARNING = ("No calorimetry series: k inferred from the entered maximum accumulation "
                     "{x:.3g} at the step's dosing time {td:.4g} min and {t:.2f} °C, assuming it "
                     "was measured there; final-mass basis (as the recorded indicator).")
TEMPERATURE_TOLERANCE_K = 0.5
MAX_GRID = 60


class WhatIfRefused(Exception):
    """The request cannot be evaluated; `field` names the input, `rule` says why."""

    def __init__(self, field: str | None, rule: str):
        self.field, self.rule = field, rule
        super().__init__(rule)


@dataclass(frozen=True)
class ReactionModel:
    """The desired reaction's model of one step (SI), with its provenance."""

    name: str
    rate_constant_per_s: float
    reference_temperature_k: float
    activation_energy_j_per_mol: float | None
    activation_energy_source: str | None
    anchor_dosing_time_s: float
    initial_mass_fraction: float
    peak_scale: float
    specific_heat_j_per_kg: float
    fit: semibatch.SemibatchFit | None = None
    arrhenius: semibatch.ArrheniusFit | None = None
    warnings: tuple[str, ...] = ()
    assumptions: tuple[str, ...] = semibatch.ASSUMPTIONS
    references: tuple[str, ...] = semibatch.REFERENCES

    def k_at(self, temperature_k: float, field_name: str = "process_temperature") -> float:
        if self.activation_energy_j_per_mol is None:
            if abs(temperature_k - self.reference_temperature_k) > TEMPERATURE_TOLERANCE_K:
                raise WhatIfRefused(field_name, NO_ACTIVATION_ENERGY.format(
                    t=self.reference_temperature_k - 273.15))
            return self.rate_constant_per_s
        return float(semibatch.rate_constant_at(
            self.rate_constant_per_s, self.reference_temperature_k, temperature_k,
            self.activation_energy_j_per_mol))


@dataclass(frozen=True)
class WhatIf:
    """One evaluated point (SI floats, None where unknown)."""

    dosing_time_s: float
    process_temperature_k: float
    rate_constant_per_s: float
    max_accumulation: float
    effective_accumulation: float
    mtsr_k: float | None
    mtsr_time_s: float
    peak_heat_release_w: float | None
    cooling_capacity_w: float | None
    cooling_margin: float | None
    minimum_cooling_margin: float
    tmr_ad_at_mtsr_s: float | None
    criticality_class: int | None
    mtt_k: float | None
    td24_k: float | None
    acceptable: bool
    warnings: tuple[str, ...]
    methods: dict
    profile: tuple  # (t [s], a [-], MTSR [K]) arrays
    model: ReactionModel
    operating_point: dict = field(default_factory=dict)  # mode and basis, as the step records


@dataclass(frozen=True)
class Window:
    grid: semibatch.OperatingWindow
    current: WhatIf
    model: ReactionModel
    minimum_cooling_margin: float
    acceptable_classes: tuple[int, ...]
    warnings: tuple[str, ...] = field(default=())


def series_rows(step_id: int) -> list[dict]:
    """Every calorimetry series of the step (a read): run id, basis flag, SI data, masses."""
    return list(CalorimetrySeries.objects.filter(run__step_id=step_id).order_by(
        "-run__is_basis", "-run__run_date", "-run_id").values(
        "run_id", "run__is_basis", "data", "initial_mass_kg", "feed_mass_kg"))


def load(step_id: int):
    """(case, series rows) of one step: the scenario inputs as the indicators read them."""
    cases = load_cases([step_id])
    if not cases:
        raise WhatIfRefused(None, "No such step.")
    return cases[0], series_rows(step_id)


def _fit(row: dict, process_temperature_k: float):
    """(SemibatchFit, DosingModel) of one series row: the same fit the step's assessment uses
    (calcs.operating_point.model_from_series), and the fit's quality for the page."""
    d = row["data"]
    args = (d["time_s"], d["heat_release_rate_w"], d["dosed_fraction"], row["initial_mass_kg"],
            row["feed_mass_kg"], d.get("reactor_temperature_k"), process_temperature_k)
    return semibatch.fit_semibatch_series(*args), operating_point.model_from_series(*args)


def build_model(case, rows: list[dict], *, activation_energy_j_per_mol: float | None = None
                ) -> ReactionModel:
    """The step's reaction model (see the module docstring); raises WhatIfRefused."""
    s = case.scenario_inputs
    if s.operation_mode != "semi_batch":
        raise WhatIfRefused(None, NOT_SEMI_BATCH)
    warnings: list[str] = []
    fits: list[tuple[dict, semibatch.SemibatchFit]] = []
    scales: dict[int, float] = {}
    for row in rows:
        try:
            fit, dosing = _fit(row, s.process_temperature_k)
            fits.append((row, fit))
            scales[row["run_id"]] = dosing.peak_scale
        except CalcInputError as exc:
            warnings.append(f"calorimetry run {row['run_id']}: the series does not support the "
                            f"model ({exc.argument}: {exc.rule})")
    basis_id = case.inputs["basis"]["calorimetry_run"]
    fits.sort(key=lambda rf: rf[0]["run_id"] != basis_id)  # the basis run first
    q_spec = s.specific_reaction_heat_j_per_kg
    arrhenius, ea_source = None, None
    if fits:
        row, fit = fits[0]
        warnings.extend(f"series fit (run {row['run_id']}): {w}" for w in fit.warnings)
        if q_spec is None:
            q_spec = fit.total_heat_j / (row["initial_mass_kg"] + row["feed_mass_kg"])
        k, t_ref, td0 = fit.rate_constant_per_s, fit.temperature_k, fit.dosing_time_s
        # the plant's fill where entered, else the lab's (as the step's assessment)
        r0 = s.initial_mass_fraction or fit.initial_mass_fraction
        scale, name = scales[row["run_id"]], "pseudo_first_order.series_fit"
        # the same rule as the step's indicators (hazards.services.indicators.dosing_arrhenius)
        try:
            arrhenius = operating_point.arrhenius_of_runs(
                [f.temperature_k for _, f in fits], [f.rate_constant_per_s for _, f in fits])
            if arrhenius is not None:
                warnings.extend(f"Arrhenius fit: {w}" for w in arrhenius.warnings)
        except CalcInputError as exc:
            warnings.append(f"Arrhenius fit of the runs refused: {exc.rule}")
    else:
        x_ac, td0 = s.max_accumulation, s.dosing_time_s
        if x_ac is None or not 0.0 < x_ac < 1.0 or td0 is None:
            raise WhatIfRefused(None, NO_MODEL_DATA)
        # on the mass present where the step gives its initial charge, as the step reads it
        r0 = s.initial_mass_fraction or 1.0
        dosing = operating_point.model_from_accumulation(
            x_ac, td0, s.process_temperature_k, r0, q_spec, s.max_heat_release_rate_w_per_kg)
        k, t_ref, fit, name = dosing.rate_constant_per_s, s.process_temperature_k, None, \
            "pseudo_first_order.from_entered_accumulation"
        warnings.append(NO_SERIES_WARNING.format(x=x_ac, td=td0 / 60, t=t_ref - 273.15))
        scale = dosing.peak_scale
    if not q_spec:
        raise WhatIfRefused(None, NO_SPECIFIC_HEAT)
    ea = activation_energy_j_per_mol
    if ea is not None:
        ea_source = "entered"
    elif arrhenius is not None:
        ea, ea_source = arrhenius.activation_energy_j_per_mol, f"fitted from {arrhenius.n_points} runs"
    else:
        warnings.append(NO_ACTIVATION_ENERGY.format(t=t_ref - 273.15))
    return ReactionModel(
        name=name, rate_constant_per_s=k, reference_temperature_k=t_ref,
        activation_energy_j_per_mol=ea, activation_energy_source=ea_source,
        anchor_dosing_time_s=td0, initial_mass_fraction=r0, peak_scale=scale,
        specific_heat_j_per_kg=q_spec, fit=fit, arrhenius=arrhenius, warnings=tuple(warnings))


def _inputs_at(case, model: ReactionModel, dosing_time_s: float, temperature_k: float):
    """The step's inputs at a point (see the module docstring), k, X_eff and its time."""
    s = case.scenario_inputs
    k = model.k_at(temperature_k)
    eff, t_max = semibatch.mass_basis_accumulation(k, dosing_time_s, model.initial_mass_fraction)
    point = {"process_temperature_k": temperature_k, "dosing_time_s": dosing_time_s}
    if s.series is not None:
        inputs = replace(s, **point,
                         dosing_activation_energy_j_per_mol=model.activation_energy_j_per_mol)
    elif not operating_point.differences(
            operating_point.LabBasis(model.anchor_dosing_time_s, model.reference_temperature_k,
                                     model.initial_mass_fraction),
            dosing_time_s, temperature_k, None):
        inputs = replace(s, **point)  # the entered numbers, where they were measured
    else:
        peak = model.peak_scale * semibatch.peak_specific_heat_release(
            model.specific_heat_j_per_kg, k, dosing_time_s)
        inputs = replace(s, **point, max_accumulation=None,
                         accumulation_on_mass_present=min(float(eff), 1.0),
                         accumulation_time_s=float(t_max),
                         max_heat_release_rate_w_per_kg=float(peak),
                         specific_reaction_heat_j_per_kg=model.specific_heat_j_per_kg)
    return inputs, k, eff, t_max


def _check_point(dosing_time_s: float, temperature_k: float) -> None:
    if not (math.isfinite(dosing_time_s) and dosing_time_s > 0):
        raise WhatIfRefused("dosing_time", "must be greater than zero")
    if not (math.isfinite(temperature_k) and temperature_k > 0):
        raise WhatIfRefused("process_temperature", "must be above absolute zero (0 K)")


def evaluate(case, model: ReactionModel, *, dosing_time_s: float,
             process_temperature_k: float | None = None,
             settings: scenario.AssessmentSettings | None = None,
             acceptable_classes: tuple[int, ...] = (1, 2)) -> WhatIf:
    """Assess one (dosing time, process temperature) point; nothing is saved."""
    settings = settings or scenario.DEFAULT_SETTINGS
    temp = process_temperature_k or case.scenario_inputs.process_temperature_k
    _check_point(dosing_time_s, temp)
    inputs, k, eff, t_max = _inputs_at(case, model, dosing_time_s, temp)
    try:
        a = scenario.assess_step(inputs, settings=settings)
    except CalcInputError as exc:
        raise WhatIfRefused(exc.argument, exc.rule) from None
    d_t = (a.adiabatic_temperature_rise_k or 0.0)
    profile = semibatch.dosing_profile(k, dosing_time_s, temp, d_t, model.initial_mass_fraction)
    margin = a.cooling_margin
    acceptable = (margin is not None and margin >= settings.minimum_cooling_margin
                  and a.criticality_class in acceptable_classes)
    return WhatIf(
        dosing_time_s=dosing_time_s, process_temperature_k=temp, rate_constant_per_s=k,
        max_accumulation=float(semibatch.accumulation_at_end_of_dosing(k, dosing_time_s)),
        effective_accumulation=eff, mtsr_k=a.mtsr_k,
        mtsr_time_s=t_max if a.mtsr_time_s is None else a.mtsr_time_s,
        peak_heat_release_w=a.plant_peak_heat_release_w, cooling_capacity_w=a.cooling_capacity_w,
        cooling_margin=margin, minimum_cooling_margin=settings.minimum_cooling_margin,
        tmr_ad_at_mtsr_s=a.tmr_ad_at_mtsr_s, criticality_class=a.criticality_class,
        mtt_k=a.mtt_k, td24_k=a.td24_k, acceptable=bool(acceptable), warnings=a.warnings,
        methods=a.methods, profile=profile, model=model,
        operating_point={key: a.parameters[key] for key in (
            "operating_point_mode", "operating_point_basis") if key in a.parameters})


def default_ranges(case, model: ReactionModel) -> dict:
    s = case.scenario_inputs
    td0 = s.dosing_time_s or model.anchor_dosing_time_s
    t0 = s.process_temperature_k
    dt = 20.0 if model.activation_energy_j_per_mol is not None else 0.0
    return {"dosing_time_min_s": max(td0 / 4, 60.0), "dosing_time_max_s": td0 * 3,
            "temperature_min_k": t0 - dt, "temperature_max_k": t0 + dt,
            "dosing_steps": 30, "temperature_steps": 30 if dt else 1}


def window(case, model: ReactionModel, *, dosing_time_min_s: float, dosing_time_max_s: float,
           temperature_min_k: float, temperature_max_k: float, dosing_steps: int = 30,
           temperature_steps: int = 30, settings: scenario.AssessmentSettings | None = None,
           acceptable_classes: tuple[int, ...] = (1, 2), rule=None) -> Window:
    """The safe operating window over a grid (bounded to MAX_GRID per axis); nothing is saved."""
    settings = settings or scenario.DEFAULT_SETTINGS
    s = case.scenario_inputs
    if not 2 <= dosing_steps <= MAX_GRID:
        raise WhatIfRefused("dosing_time_steps", f"must be between 2 and {MAX_GRID}")
    if not 1 <= temperature_steps <= MAX_GRID:
        raise WhatIfRefused("temperature_steps", f"must be between 1 and {MAX_GRID}")
    _check_point(dosing_time_min_s, temperature_min_k)
    if not dosing_time_max_s > dosing_time_min_s:
        raise WhatIfRefused("dosing_time_max", "must be greater than dosing_time_min")
    if temperature_max_k < temperature_min_k:
        raise WhatIfRefused("temperature_max", "must not be below temperature_min")
    warnings: list[str] = []
    temps = np.linspace(temperature_min_k, temperature_max_k, temperature_steps)
    if model.activation_energy_j_per_mol is None:
        if temperature_steps > 1 or abs(temperature_min_k - s.process_temperature_k) > 1e-9:
            warnings.append(NO_ACTIVATION_ENERGY.format(t=model.reference_temperature_k - 273.15))
        temps = np.array([s.process_temperature_k])
    dosing = np.linspace(dosing_time_min_s, dosing_time_max_s, dosing_steps)
    current = evaluate(case, model, dosing_time_s=s.dosing_time_s or model.anchor_dosing_time_s,
                       settings=settings, acceptable_classes=acceptable_classes)
    if s.system == "closed":  # the closed-vessel MTT depends on T_p (pad gas): one per row
        only_mtt = replace(s, series=None, specific_reaction_heat_j_per_kg=None,
                           decomposition_method=None, onset_temperature_k=None,
                           activation_energy_j_per_mol=None, peak_temperatures=None)
        mtt = [scenario.assess_step(replace(only_mtt, process_temperature_k=float(t)),
                                    settings=settings).mtt_k for t in temps]
        mtt = np.array([np.nan if v is None else v for v in mtt])
    else:
        mtt = current.mtt_k
    ua = (s.vessel_u_w_per_m2_k * s.vessel_heat_transfer_area_m2
          if s.vessel_u_w_per_m2_k and s.vessel_heat_transfer_area_m2 else None)
    k_ref, t_ref = model.rate_constant_per_s, model.reference_temperature_k
    if model.activation_energy_j_per_mol is None:
        k_ref, t_ref = model.k_at(s.process_temperature_k), s.process_temperature_k
    try:
        grid = semibatch.operating_window(
            dosing, temps, k_ref, t_ref, model.activation_energy_j_per_mol,
            model.specific_heat_j_per_kg, s.specific_heat_capacity_j_per_kg_k,
            s.reaction_mass_kg, ua, s.vessel_coolant_temperature_k, mtt, current.td24_k,
            settings.minimum_cooling_margin, model.initial_mass_fraction, model.peak_scale,
            acceptable_classes, rule)
    except CalcInputError as exc:
        raise WhatIfRefused(exc.argument, exc.rule) from None
    warnings.extend(grid.warnings)
    return Window(grid, current, model, settings.minimum_cooling_margin,
                  tuple(acceptable_classes), tuple(warnings))


APPLY_REASON_REQUIRED = "Give a reason for the change of the step."
APPLIED = ("Step changed to a dosing time of {td:.4g} min at {t:.2f} °C. The change is recorded "
           "like any other edit: the indicators were recomputed, and an approved or signed "
           "assessment of the process now needs review again.")


def apply_point(*, step, user, dosing_time_s: float, process_temperature_k: float, reason: str,
                expected_version: int | None):
    """Turn a chosen point into a change of the step through the normal record service.

    `hazards.services.records.record_update` (full_clean, row-locked version check) inside the
    audit context with the reason; the indicator layer recomputes the snapshot in the same
    transaction and marks an approved step `needs_review`; the review layer replaces the
    signed revisions whose content changed and opens the next draft. Nothing is signed here.
    """

    if not can_edit_process(user, step.process_id):
        raise PermissionError("You have no role on this process that allows this change.")
    reason = (reason or "").strip()
    if not reason:
        raise WhatIfRefused("reason", APPLY_REASON_REQUIRED)
    _check_point(dosing_time_s, process_temperature_k)
    with trail.scope(reason=f"what-if: {reason}"):
        return record_update(instance=step, data={"dosing_time_s": dosing_time_s,
                                                  "process_temperature_k": process_temperature_k},
                             expected_version=expected_version)
