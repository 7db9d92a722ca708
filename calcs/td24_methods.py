"""TD24 from typed decomposition data: the method table (METHODS.md §3.2).

In the style of the ``fluids`` library: :func:`td24_methods` lists the methods the given
inputs allow, best first, and :func:`td24` computes TD24 by one of them (the first when
``method`` is None). The scenario (:mod:`calcs._scenario_steps`) takes the first method of
the table; a decomposition model fitted to curves (:mod:`calcs._scenario_kinetics`, by
adiabatic simulation) comes before all of them.

Every method reduces the data to a zero-order heat-release model (E_a, T_ref, q_ref) and
solves TMR_ad(TD24) = 24 h (Townsend & Tou 1980) with :func:`calcs.tmr.td24`.

==============================  ===========================================================
method                          inputs and model
==============================  ===========================================================
``td24.kinetic``                E_a, T_ref and q_ref typed (from a fit elsewhere)
``td24.kinetic_kissinger``      at least three DSC peaks (β, T_p) and Q_dec: Kissinger's
                                E_a and A (ASTM E2890), q_ref = Q_dec·A·exp(−E_a/R·T_ref)
                                at the lowest peak temperature
``td24.adiabatic_phi_corrected``  an adiabatic onset and φ: the onset corrected to φ = 1
                                (Fisher & Goetz 1991), q_ref = c_p·(detection rate) there
``td24.adiabatic_uncorrected``  an adiabatic onset without φ: the same at the measured onset
``td24.dsc_onset_screening``    a DSC onset only: q_ref = the screening rate at the onset
                                with the screening E_a (Keller et al. 1997); a screening
                                estimate, labelled so
==============================  ===========================================================

An adiabatic onset never falls back to the DSC screening: it is the better measurement.
E_a, where a method needs one and none is typed, is the screening value of the settings.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from calcs.constants import R
from calcs.kinetics import KineticFit, kissinger
from calcs.phi import corrected_onset_temperature
from calcs.tmr import td24 as td24_zero_order

KINETIC = "td24.kinetic"
KINETIC_KISSINGER = "td24.kinetic_kissinger"
ADIABATIC_PHI_CORRECTED = "td24.adiabatic_phi_corrected"
ADIABATIC_UNCORRECTED = "td24.adiabatic_uncorrected"
DSC_ONSET_SCREENING = "td24.dsc_onset_screening"

#: every method, in the order of preference
TD24_METHODS = (KINETIC, KINETIC_KISSINGER, ADIABATIC_PHI_CORRECTED, ADIABATIC_UNCORRECTED,
                DSC_ONSET_SCREENING)

#: screening values (common practice, no source beyond Keller et al. 1997 for the DSC case);
#: the scenario passes those of its AssessmentSettings
SCREENING_ACTIVATION_ENERGY_J_PER_MOL = 50e3
SCREENING_HEAT_RELEASE_RATE_W_PER_KG = 20.0
ARC_DETECTION_RATE_K_PER_S = 0.02 / 60.0


@dataclass(frozen=True)
class Td24Model:
    """The zero-order model a method derives: q(T) = q_ref·exp[−(E_a/R)(1/T − 1/T_ref)].

    `heat_release_rate_at_reference_w_per_kg` is None for the adiabatic methods without c_p.
    `fit` is the Kissinger fit (``td24.kinetic_kissinger``), `corrected_onset_k` the φ-
    corrected onset (``td24.adiabatic_phi_corrected``)."""

    method: str
    activation_energy_j_per_mol: float
    reference_temperature_k: float
    heat_release_rate_at_reference_w_per_kg: float | None
    fit: KineticFit | None = None
    corrected_onset_k: float | None = None


def td24_methods(
    *, activation_energy_j_per_mol: float | None = None,
    reference_temperature_k: float | None = None,
    heat_release_rate_at_reference_w_per_kg: float | None = None,
    peak_temperatures: tuple = (), decomposition_energy_j_per_kg: float | None = None,
    onset_temperature_k: float | None = None, onset_adiabatic: bool = False,
    phi_factor: float | None = None,
) -> list[str]:
    """The TD24 methods these inputs allow, best first (empty: TD24 cannot be estimated).

    Parameters
    ----------
    activation_energy_j_per_mol : float or None
        E_a typed [J/mol].
    reference_temperature_k : float or None
        T_ref of a typed q_ref [K].
    heat_release_rate_at_reference_w_per_kg : float or None
        q_ref typed [W/kg].
    peak_temperatures : tuple
        (heating rate [K/s], peak temperature [K]) of each DSC scan.
    decomposition_energy_j_per_kg : float or None
        Q_dec [J/kg].
    onset_temperature_k : float or None
        Onset temperature [K].
    onset_adiabatic : bool
        The onset is an adiabatic calorimeter's (else a DSC's).
    phi_factor : float or None
        φ of the adiabatic test.

    Returns
    -------
    list of str
        Method names of :data:`TD24_METHODS`, best first.

    Examples
    --------
    >>> td24_methods(onset_temperature_k=450.0)
    ['td24.dsc_onset_screening']
    >>> td24_methods(onset_temperature_k=450.0, onset_adiabatic=True, phi_factor=1.6)
    ['td24.adiabatic_phi_corrected']
    >>> td24_methods(activation_energy_j_per_mol=100e3, reference_temperature_k=400.0,
    ...              heat_release_rate_at_reference_w_per_kg=1.0, onset_temperature_k=450.0)
    ['td24.kinetic', 'td24.dsc_onset_screening']
    >>> td24_methods()
    []
    """
    methods = []
    if (activation_energy_j_per_mol is not None and reference_temperature_k is not None
            and heat_release_rate_at_reference_w_per_kg is not None):
        methods.append(KINETIC)
    if len(peak_temperatures or ()) >= 3 and decomposition_energy_j_per_kg:
        methods.append(KINETIC_KISSINGER)
    if onset_temperature_k is not None:
        if onset_adiabatic:
            methods.append(ADIABATIC_UNCORRECTED if phi_factor is None
                           else ADIABATIC_PHI_CORRECTED)
        else:
            methods.append(DSC_ONSET_SCREENING)
    return methods


def td24_model(
    method: str, *, specific_heat_capacity_j_per_kg_k: float | None = None,
    activation_energy_j_per_mol: float | None = None,
    reference_temperature_k: float | None = None,
    heat_release_rate_at_reference_w_per_kg: float | None = None,
    peak_temperatures: tuple = (), decomposition_energy_j_per_kg: float | None = None,
    onset_temperature_k: float | None = None, phi_factor: float | None = None,
    screening_activation_energy_j_per_mol: float = SCREENING_ACTIVATION_ENERGY_J_PER_MOL,
    screening_heat_release_rate_w_per_kg: float = SCREENING_HEAT_RELEASE_RATE_W_PER_KG,
    arc_detection_rate_k_per_s: float = ARC_DETECTION_RATE_K_PER_S,
) -> Td24Model:
    """The zero-order model of `method` (one of :data:`TD24_METHODS`) from these inputs.

    Parameters
    ----------
    method : str
        One of :data:`TD24_METHODS`.
    specific_heat_capacity_j_per_kg_k : float or None
        c_p [J/(kg K)] (the adiabatic methods need it for q_ref).
    activation_energy_j_per_mol : float or None
        E_a typed [J/mol].
    reference_temperature_k : float or None
        T_ref of a typed q_ref [K].
    heat_release_rate_at_reference_w_per_kg : float or None
        q_ref typed [W/kg].
    peak_temperatures : tuple
        (heating rate [K/s], peak temperature [K]) of each DSC scan.
    decomposition_energy_j_per_kg : float or None
        Q_dec [J/kg].
    onset_temperature_k : float or None
        Onset temperature [K].
    phi_factor : float or None
        φ of the adiabatic test.
    screening_activation_energy_j_per_mol, screening_heat_release_rate_w_per_kg : float
        E_a [J/mol] where none is typed, and q at a DSC onset [W/kg] (screening values).
    arc_detection_rate_k_per_s : float
        Self-heat rate at an adiabatic onset [K/s] (0.02 K/min).

    Returns
    -------
    Td24Model
        E_a, T_ref and q_ref (None: an adiabatic method without c_p) and the intermediate
        Kissinger fit or φ-corrected onset.

    Examples
    --------
    >>> m = td24_model("td24.dsc_onset_screening", onset_temperature_k=450.0)
    >>> (m.activation_energy_j_per_mol, m.reference_temperature_k,
    ...  m.heat_release_rate_at_reference_w_per_kg)
    (50000.0, 450.0, 20.0)
    >>> m = td24_model("td24.adiabatic_uncorrected", specific_heat_capacity_j_per_kg_k=1800.0,
    ...                onset_temperature_k=420.0, activation_energy_j_per_mol=120e3)
    >>> round(m.heat_release_rate_at_reference_w_per_kg, 3)  # 1800 J/(kg K) x 0.02 K/min
    0.6
    """
    ea = activation_energy_j_per_mol
    if method == KINETIC:
        return Td24Model(method, ea, reference_temperature_k,
                         heat_release_rate_at_reference_w_per_kg)
    if method == KINETIC_KISSINGER:
        fit = kissinger([p[0] for p in peak_temperatures], [p[1] for p in peak_temperatures])
        t_ref = min(p[1] for p in peak_temperatures)
        q = decomposition_energy_j_per_kg * fit.pre_exponential_per_s * math.exp(
            -fit.activation_energy_j_per_mol / (R * t_ref))
        return Td24Model(method, fit.activation_energy_j_per_mol, t_ref, q, fit=fit)
    e = ea if ea is not None else screening_activation_energy_j_per_mol
    if method in (ADIABATIC_PHI_CORRECTED, ADIABATIC_UNCORRECTED):
        t_on, corrected = onset_temperature_k, None
        if method == ADIABATIC_PHI_CORRECTED:
            t_on = corrected = corrected_onset_temperature(onset_temperature_k, e, phi_factor)
        # at the (corrected) onset the adiabatic self-heat rate equals the detection threshold
        cp = specific_heat_capacity_j_per_kg_k
        q = cp * arc_detection_rate_k_per_s if cp is not None else None
        return Td24Model(method, e, t_on, q, corrected_onset_k=corrected)
    if method == DSC_ONSET_SCREENING:
        return Td24Model(method, e, onset_temperature_k, screening_heat_release_rate_w_per_kg)
    raise ValueError(f"unknown TD24 method {method!r}; known: {', '.join(TD24_METHODS)}")


def td24(specific_heat_capacity_j_per_kg_k: float, *, method: str | None = None,
         **inputs) -> float | None:
    """TD24 [K] by `method` (None: the first of :func:`td24_methods`); None where no
    temperature gives TMR_ad = 24 h (see :func:`calcs.tmr.td_refusal`) or no method applies.

    Parameters
    ----------
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].
    method : str or None
        One of :data:`TD24_METHODS`; None: the first the inputs allow.
    inputs : keyword arguments
        Those of :func:`td24_methods` and :func:`td24_model`.

    Returns
    -------
    float or None
        TD24 [K].

    Examples
    --------
    A DSC onset of 450 K, screened (E_a 50 kJ/mol, 20 W/kg at the onset), c_p 1800 J/(kg K):
    TMR_ad at the onset is c_p·R·T²/(q·E_a) = 1800·8.314·450²/(20·50e3) ≈ 3030 s, far under
    a day, so TD24 lies well below the onset; at it the zero-order TMR_ad is 24 h (Townsend &
    Tou 1980):

    >>> from calcs.tmr import tmr_zero_order_at
    >>> t = td24(1800.0, onset_temperature_k=450.0)
    >>> round(t, 1)
    349.2
    >>> round(tmr_zero_order_at(t, 1800.0, 50e3, 450.0, 20.0) / 3600.0, 6)
    24.0
    >>> t == td24(1800.0, method="td24.dsc_onset_screening", onset_temperature_k=450.0)
    True
    >>> td24(1800.0) is None
    True
    """
    if method is None:
        allowed = td24_methods(**{k: v for k, v in inputs.items() if k in _TABLE_INPUTS})
        if not allowed:
            return None
        method = allowed[0]
    model_inputs = {k: v for k, v in inputs.items() if k != "onset_adiabatic"}
    m = td24_model(method, specific_heat_capacity_j_per_kg_k=specific_heat_capacity_j_per_kg_k,
                   **model_inputs)
    if m.heat_release_rate_at_reference_w_per_kg is None:
        return None
    return td24_zero_order(specific_heat_capacity_j_per_kg_k, m.activation_energy_j_per_mol,
                           m.reference_temperature_k, m.heat_release_rate_at_reference_w_per_kg)


_TABLE_INPUTS = frozenset({
    "activation_energy_j_per_mol", "reference_temperature_k",
    "heat_release_rate_at_reference_w_per_kg", "peak_temperatures",
    "decomposition_energy_j_per_kg", "onset_temperature_k", "onset_adiabatic", "phi_factor",
})
