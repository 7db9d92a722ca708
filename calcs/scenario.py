"""Cooling-failure scenario of one reaction step: the dispatcher the Django side calls.

``assess_step(StepInputs) -> Assessment`` chooses for each indicator the best
method the data allow and records which one it used (``Assessment.methods``),
the parameters it assumed (``parameters``) and the references (``references``,
keys into :data:`calcs.constants.REFERENCES`). Missing inputs never raise: they
give ``None`` values and warnings. Invalid inputs (non-finite, ≤ 0 K, fractions
outside 0..1, unknown mode) raise :class:`calcs.errors.CalcInputError`.

Method choice (the table of CONVENTIONS rule 2):

=================  ==============================================================
indicator          methods, best first
=================  ==============================================================
ΔT_ad              Q′ entered / Q′ from the series, divided by c_p
MTSR               batch: T_p + ΔT_ad; semi-batch: series MTSR(t) with m(t)
                   ("mtsr.semi_batch.series"), else T_p + X_eff·ΔT_ad with the
                   entered X_ac,max on the mass present (initial charge given), else
                   T_p + X_ac,max·ΔT_ad (final mass, warned), else the batch worst
                   case; ΔT_ad ≥ 0 (endothermic: 0, said)
MTT                override; open: boiling point at the operating pressure
                   (entered Antoine set, then chemicals by CAS; under vacuum also
                   the class at 1 atm); closed: P(T) = P_set (vapour + pad +
                   released gas; unknown without vapour data unless the mass is
                   declared non-volatile)
TD24               kinetic (E_a, T_ref, q_ref); Kissinger fit of peaks + energy;
                   φ-corrected adiabatic onset (Fisher-Goetz, q from the
                   detection threshold); DSC-onset screening estimate
TD24 (curves)      adiabatic simulation of the rate model fitted to the test's
                   curves, φ = 1 ("td24.adiabatic_simulation.<model>"), first
TMR_ad at MTSR     the same simulation where TD24 came from it, else zero order
                   from the same q(T) as TD24
=================  ==============================================================

The implementation is split: the input and result types live in
:mod:`calcs.scenario_types`, the indicator steps in :mod:`calcs._scenario_steps`
(their shared state in :mod:`calcs._scenario_context`); this module holds the
interface and imports both (types -> steps -> this module, no cycle).
"""

from __future__ import annotations

from calcs._scenario_steps import run
from calcs.scenario_types import (
    DEFAULT_SETTINGS,
    AntoineInputs,
    Assessment,
    AssessmentSettings,
    DecompositionKinetics,
    MeasureInputs,
    SeriesInputs,
    StepInputs,
)

__all__ = ["DEFAULT_SETTINGS", "AntoineInputs", "Assessment", "AssessmentSettings",
           "DecompositionKinetics", "MeasureInputs", "SeriesInputs", "StepInputs",
           "assess_step"]


def assess_step(inputs: StepInputs, *, settings: AssessmentSettings | None = None) -> Assessment:
    """Assess the cooling-failure scenario of one step: ΔT_ad, MTSR, MTT, TD24, class, risk.

    Equation: MTSR = T_p + ΔT_ad (batch) or max_t[T_r(t) + X_ac(t)·ΔT_ad·m_f/m(t)]
    (semi-batch series); MTT per system; TD24 and TMR_ad(MTSR) zero order from
    q(T) = q_ref·exp[−(E_a/R)(1/T − 1/T_ref)]; class per Stoessel; severity from
    ΔT_ad, probability from TMR_ad at MTSR; cooling margin U·A·(T_p − T_c)/(q′_max·m).

    Parameters
    ----------
    inputs : StepInputs
        The step, SI floats (``None`` where unknown).
    settings : AssessmentSettings or None
        Scales, risk matrix and screening assumptions (defaults when ``None``).

    Returns
    -------
    Assessment
        The indicators [K, s, W, Pa], warnings, method names, assumed
        parameters and reference keys.

    Validity: Stoessel's cooling-failure scenario: dosing stops at the failure,
    φ = 1 at plant scale, zero-order decomposition.

    Examples
    --------
    >>> a = assess_step(StepInputs("batch", 303.15, 1000.0, 2000.0, "open", None, None,
    ...     mtt_override_k=373.15, specific_reaction_heat_j_per_kg=100e3,
    ...     activation_energy_j_per_mol=100e3, reference_temperature_k=453.15,
    ...     heat_release_rate_at_reference_w_per_kg=50.0))
    >>> round(a.mtsr_k - 273.15, 2), a.criticality_class, a.methods["td24"]
    (80.0, 1, 'td24.kinetic')

    References
    ----------
    Stoessel 1993; Stoessel 2008; Townsend & Tou 1980; METHODS.md §1-5.
    """
    return run(inputs, settings or DEFAULT_SETTINGS)

