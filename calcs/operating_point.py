"""The indicators' inputs at the plant's operating point of a semi-batch step.

A calorimeter run measures the accumulation and the heat-release rate at the lab's dosing
time, temperature and fill. The plant may dose over another time, at another temperature,
into another initial charge. Read at the lab's time base, the run says nothing exact about
the plant; this module decides, and says, where each number of the step comes from
(METHODS.md §1.1-1.2, §2.2; Stoessel 2008, ch. 7 on semi-batch reactors):

=====================  ==========================================================
mode                   when, and what the indicators use
=====================  ==========================================================
``series``             lab and plant agree (dosing time within 5 %, temperature
                       within 0.5 K, final/initial mass within 0.05): the series
                       as measured
``model``              they differ and the pseudo-first-order dosing model
                       (:mod:`calcs.semibatch`) is fitted: the model at the
                       plant's dosing time, temperature and fill
``no_credit``          they differ and there is no model (or no activation energy
                       for another temperature): no credit for reaction during
                       dosing: the whole feed accumulated (MTSR = T_p + ΔT_ad), the
                       peak at least the dosing-controlled Q′/t_d
``lab_accumulation``   no series, an entered maximum accumulation: taken as
                       measured at the plant's own point (said)
=====================  ==========================================================

The tolerances are common practice, no source: tighter than the scatter of a repeated
calorimeter run, looser than rounding of the entered values.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from calcs.accumulation import mass_present
from calcs.errors import require_absolute_temperature, require_positive
from calcs.semibatch import (
    accumulation_at_end_of_dosing,
    fit_arrhenius,
    fit_semibatch_series,
    mass_basis_accumulation,
    peak_specific_heat_release,
    rate_constant_at,
    rate_constant_from_accumulation,
)

DOSING_TIME_TOLERANCE = 0.05  # relative
TEMPERATURE_TOLERANCE_K = 0.5
FILL_TOLERANCE = 0.05  # on the ratio final mass / initial charge
REFERENCES = ("stoessel2008", "steinbach1999", "methods_md")


@dataclass(frozen=True)
class LabBasis:
    """Where the lab run was measured: dosing time [s], temperature [K], m_0/m_final [-]."""

    dosing_time_s: float
    temperature_k: float
    initial_mass_fraction: float


@dataclass(frozen=True)
class DosingModel:
    """The desired reaction's pseudo-first-order model of one step (SI), and its basis."""

    rate_constant_per_s: float  # k at the reference temperature
    reference_temperature_k: float
    activation_energy_j_per_mol: float | None
    lab: LabBasis
    peak_scale: float  # measured/model peak at the lab point, at least 1
    source: str  # "series fit" | "entered accumulation"
    warnings: tuple[str, ...] = ()

    def k_at(self, temperature_k: float) -> float | None:
        """k at a temperature [1/s]; ``None`` off the lab temperature without an E_a."""
        if self.activation_energy_j_per_mol is None:
            if abs(temperature_k - self.reference_temperature_k) > TEMPERATURE_TOLERANCE_K:
                return None
            return self.rate_constant_per_s
        return float(rate_constant_at(self.rate_constant_per_s, self.reference_temperature_k,
                                      temperature_k, self.activation_energy_j_per_mol))


@dataclass(frozen=True)
class PointInputs:
    """What the indicators use at the plant's point, and where it came from."""

    mode: str
    dosing_time_s: float | None
    temperature_k: float
    initial_mass_fraction: float | None
    lab: LabBasis | None
    differences: tuple[str, ...] = ()
    rate_constant_per_s: float | None = None
    accumulation_at_end_of_dosing: float | None = None
    accumulation_on_mass_present: float | None = None  # X_eff, max MTSR = T_p + X_eff·ΔT_ad
    accumulation_time_s: float | None = None  # time of that maximum from the start of dosing
    peak_heat_release_w_per_kg: float | None = None  # per kg of final mass
    reason: str = ""


def model_from_series(time_s, heat_release_rate_w, dosed_fraction, initial_mass_kg,
                      feed_mass_kg, reactor_temperature_k=None, process_temperature_k=None,
                      activation_energy_j_per_mol=None):
    """The dosing model fitted to a lab series, with the lab basis and the peak scale.

    Equation: k from :func:`calcs.semibatch.fit_semibatch_series`; peak_scale =
    max(1, q_meas,max/m(t) / [Q′·(1 − e^{−k·t_d})/t_d]) at the lab point, so the model's peak
    never falls below the measured one.

    Parameters
    ----------
    time_s : array_like
        Time from the start of dosing [s].
    heat_release_rate_w : array_like
        Heat-release rate [W].
    dosed_fraction : array_like
        Dosed fraction of the stoichiometric feed [-].
    initial_mass_kg : float
        Lab initial charge m_0 [kg].
    feed_mass_kg : float
        Lab feed mass [kg].
    reactor_temperature_k : array_like or None
        T_r(t) [K].
    process_temperature_k : float or None
        The run's temperature when there is no T_r series [K].
    activation_energy_j_per_mol : float or None
        E_a of the desired reaction [J/mol] (entered or fitted over runs), ``None`` unknown.

    Returns
    -------
    DosingModel
        k [1/s] at the run's temperature, the lab basis, the peak scale, fit warnings.

    Validity: as the fit (raises :class:`calcs.errors.CalcInputError` when the series does
    not support it).

    Examples
    --------
    >>> t = np.linspace(0, 10800, 181)
    >>> q = 60e3 * (0.1 / 60) * (-np.expm1(-(0.1 / 60) * np.minimum(t, 3600)) / 6) * np.exp(
    ...     -(0.1 / 60) * np.maximum(t - 3600, 0))
    >>> m = model_from_series(t, q, np.minimum(t / 3600, 1), 0.4, 0.1, None, 303.15)
    >>> round(m.rate_constant_per_s * 60, 6), m.lab.dosing_time_s, m.lab.initial_mass_fraction
    (0.1, 3600.0, 0.8)

    References
    ----------
    METHODS.md C1.7; Steinbach 1999; Stoessel 2008 ch. 7 (semi-batch reactors).
    """
    fit = fit_semibatch_series(time_s, heat_release_rate_w, dosed_fraction, initial_mass_kg,
                               feed_mass_kg, reactor_temperature_k, process_temperature_k)
    q = np.asarray(heat_release_rate_w, dtype=float)
    fd = np.asarray(dosed_fraction, dtype=float)
    i = int(np.argmax(q))
    m_final = initial_mass_kg + feed_mass_kg
    m = float(mass_present(fd, initial_mass_kg, feed_mass_kg)[i])
    model_peak = peak_specific_heat_release(fit.total_heat_j / m_final, fit.rate_constant_per_s,
                                            fit.dosing_time_s)
    scale = max(1.0, float(q[i] / m) / model_peak) if model_peak > 0 else 1.0
    return DosingModel(fit.rate_constant_per_s, fit.temperature_k, activation_energy_j_per_mol,
                       LabBasis(fit.dosing_time_s, fit.temperature_k, fit.initial_mass_fraction),
                       scale, "series fit", tuple(fit.warnings))


def arrhenius_of_runs(temperatures_k, rate_constants_per_s, min_spread_k=2.0):
    """E_a of the desired reaction from the dosing models of runs at several temperatures.

    Equation: ln k = ln A − E_a/(R·T) (:func:`calcs.semibatch.fit_arrhenius`), only when at
    least two runs lie ``min_spread_k`` or more apart.

    Parameters
    ----------
    temperatures_k : sequence of float
        The runs' temperatures [K].
    rate_constants_per_s : sequence of float
        Their fitted k [1/s].
    min_spread_k : float
        Smallest spread of temperatures that is fitted [K] (common practice, no source).

    Returns
    -------
    ArrheniusFit or None
        ``None`` for fewer runs or too narrow a spread; raises
        :class:`calcs.errors.CalcInputError` when k does not rise with T.

    Examples
    --------
    >>> f = arrhenius_of_runs([303.15, 313.15], [1e-3, 2.41e-3])
    >>> round(f.activation_energy_j_per_mol / 1000)
    69

    References
    ----------
    Arrhenius law; Steinbach 1999.
    """
    temps = [float(t) for t in temperatures_k]
    if len(temps) < 2 or max(temps) - min(temps) < min_spread_k:
        return None
    return fit_arrhenius(temps, list(rate_constants_per_s))


def model_from_accumulation(accumulation, dosing_time_s, temperature_k, initial_mass_fraction,
                            specific_heat_j_per_kg=None, peak_w_per_kg=None,
                            activation_energy_j_per_mol=None):
    """The dosing model implied by an entered maximum accumulation at a known point.

    Equation: solve (1 − e^{−x})/x = X_ac for x = k·t_d; peak_scale = max(1, q′_entered /
    [Q′·(1 − e^{−k·t_d})/t_d]).

    Parameters
    ----------
    accumulation : float
        Maximum accumulation X_ac at the end of dosing [-], in (0, 1).
    dosing_time_s : float
        The dosing time it was measured at [s].
    temperature_k : float
        The temperature it was measured at [K].
    initial_mass_fraction : float
        m_0/m_final it was measured at [-].
    specific_heat_j_per_kg : float or None
        Q′ per kg of final mass [J/kg] (for the peak scale).
    peak_w_per_kg : float or None
        The entered peak heat-release rate [W/kg] (for the peak scale).
    activation_energy_j_per_mol : float or None
        E_a of the desired reaction [J/mol].

    Returns
    -------
    DosingModel
        An inference from one number, not a measurement (``source`` says so).

    Validity: the pseudo-first-order model; X_ac on the final-mass basis.

    Examples
    --------
    >>> m = model_from_accumulation(0.166254, 3600.0, 303.15, 0.8)
    >>> round(m.rate_constant_per_s * 60, 4)
    0.1

    References
    ----------
    METHODS.md C1.7 [DERIVED]; Stoessel 2008 ch. 7.
    """
    k = rate_constant_from_accumulation(accumulation, dosing_time_s)
    scale = 1.0
    if specific_heat_j_per_kg and peak_w_per_kg:
        scale = max(1.0, peak_w_per_kg / peak_specific_heat_release(specific_heat_j_per_kg, k,
                                                                     dosing_time_s))
    return DosingModel(k, temperature_k, activation_energy_j_per_mol,
                       LabBasis(dosing_time_s, temperature_k, initial_mass_fraction),
                       scale, "entered accumulation")


def inputs_at(model, specific_heat_j_per_kg, dosing_time_s, temperature_k,
              initial_mass_fraction=None):
    """The model evaluated at a plant point: k, a(t_d), X_eff and its time, the peak.

    Equation: k(T) by Arrhenius; a(t_d) = (1 − e^{−k·t_d})/(k·t_d); X_eff = max_t
    a(t)·m_f/m(t) (:func:`calcs.semibatch.mass_basis_accumulation`); q′_max =
    peak_scale·Q′·(1 − e^{−k·t_d})/t_d.

    Parameters
    ----------
    model : DosingModel
        The fitted model.
    specific_heat_j_per_kg : float
        Q′ per kg of final mass [J/kg].
    dosing_time_s : float
        Plant dosing time [s].
    temperature_k : float
        Plant process temperature [K].
    initial_mass_fraction : float or None
        Plant m_0/m_final [-]; ``None``: the lab's.

    Returns
    -------
    PointInputs or None
        Mode "model"; ``None`` when the temperature needs an E_a the model lacks.

    Validity: the assumptions of :mod:`calcs.semibatch`.

    Examples
    --------
    >>> m = model_from_accumulation(0.166254, 3600.0, 303.15, 0.8)
    >>> p = inputs_at(m, 120e3, 3600.0, 303.15)
    >>> round(303.15 + p.accumulation_on_mass_present * 60 - 273.15, 3)  # METHODS.md C1.7
    40.584

    References
    ----------
    METHODS.md §1.1 note, C1.7, C2.2; Stoessel 2008 ch. 7.
    """
    require_positive("dosing_time_s", dosing_time_s)
    require_absolute_temperature("temperature_k", temperature_k)
    k = model.k_at(temperature_k)
    if k is None:
        return None
    r0 = model.lab.initial_mass_fraction if initial_mass_fraction is None \
        else initial_mass_fraction
    eff, t_max = mass_basis_accumulation(k, dosing_time_s, r0)
    peak = model.peak_scale * peak_specific_heat_release(specific_heat_j_per_kg, k,
                                                         dosing_time_s)
    return PointInputs(
        "model", dosing_time_s, temperature_k, r0, model.lab, rate_constant_per_s=k,
        accumulation_at_end_of_dosing=float(accumulation_at_end_of_dosing(k, dosing_time_s)),
        accumulation_on_mass_present=min(float(eff), 1.0), accumulation_time_s=float(t_max),
        peak_heat_release_w_per_kg=float(peak))


def differences(lab, dosing_time_s, temperature_k, initial_mass_fraction):
    """Which of dosing time, temperature and fill differ between lab and plant.

    Equation: |t_d,plant/t_d,lab − 1| > 5 %; |T_plant − T_lab| > 0.5 K;
    |1/r_0,plant − 1/r_0,lab| > 0.05 (final/initial mass). An unknown plant value differs
    from nothing.

    Parameters
    ----------
    lab : LabBasis
        The lab run's point.
    dosing_time_s : float or None
        Plant dosing time [s].
    temperature_k : float
        Plant process temperature [K].
    initial_mass_fraction : float or None
        Plant m_0/m_final [-].

    Returns
    -------
    tuple of str
        Among "dosing time", "temperature", "fill".

    Examples
    --------
    >>> differences(LabBasis(3600.0, 303.15, 0.8), 10800.0, 303.15, None)
    ('dosing time',)

    References
    ----------
    Tolerances: common practice, no source.
    """
    out = []
    if dosing_time_s is not None and abs(dosing_time_s / lab.dosing_time_s - 1.0) > \
            DOSING_TIME_TOLERANCE:
        out.append("dosing time")
    if abs(temperature_k - lab.temperature_k) > TEMPERATURE_TOLERANCE_K:
        out.append("temperature")
    if initial_mass_fraction is not None and abs(
            1.0 / initial_mass_fraction - 1.0 / lab.initial_mass_fraction) > FILL_TOLERANCE:
        out.append("fill")
    return tuple(out)


def plant_point(lab, model, specific_heat_j_per_kg, dosing_time_s, temperature_k,
                initial_mass_fraction=None, lab_peak_w_per_kg=None):
    """Choose how the plant's point is evaluated (the modes of the module docstring).

    Equation: "series" when no difference; "model" → :func:`inputs_at`; "no_credit" →
    X_eff = 1 at t_d (MTSR = T_p + ΔT_ad) and q′_max = max(q′_lab, Q′/t_d,plant), the
    upper bound of the dosing-controlled feed Q′·ṁ (METHODS.md §2.2).

    Parameters
    ----------
    lab : LabBasis or None
        The series' point; ``None``: no series (mode "lab_accumulation").
    model : DosingModel or None
        The fitted model, ``None`` when the series does not support one.
    specific_heat_j_per_kg : float or None
        Q′ per kg of final mass [J/kg].
    dosing_time_s : float or None
        Plant dosing time [s] (``None``: the lab's is taken, said by the caller).
    temperature_k : float
        Plant process temperature [K].
    initial_mass_fraction : float or None
        Plant m_0/m_final [-] (``None``: the lab's).
    lab_peak_w_per_kg : float or None
        The lab's peak heat-release rate [W/kg] (entered or from the series).

    Returns
    -------
    PointInputs
        The mode, the differences, the inputs at the plant's point and the reason.

    Validity: Stoessel's cooling-failure scenario (dosing stops at the failure).

    Examples
    --------
    >>> lab = LabBasis(3600.0, 303.15, 0.8)
    >>> plant_point(lab, None, 120e3, 10800.0, 303.15).mode
    'no_credit'

    References
    ----------
    Stoessel 2008 ch. 7 (semi-batch reactors); METHODS.md §1.1, §2.2.
    """
    if lab is None:
        return PointInputs("lab_accumulation", dosing_time_s, temperature_k,
                           initial_mass_fraction, None,
                           reason="entered maximum accumulation, taken as measured at the "
                                  "plant's dosing time and temperature")
    diff = differences(lab, dosing_time_s, temperature_k, initial_mass_fraction)
    if not diff:
        return PointInputs("series", dosing_time_s, temperature_k, initial_mass_fraction, lab,
                           reason="lab series as measured (lab and plant agree)")
    td = lab.dosing_time_s if dosing_time_s is None else dosing_time_s
    if model is not None and specific_heat_j_per_kg is not None:
        point = inputs_at(model, specific_heat_j_per_kg, td, temperature_k,
                          initial_mass_fraction)
        if point is not None:
            return PointInputs(**{**point.__dict__, "differences": diff,
                                  "reason": f"dosing model ({model.source}) at the plant's "
                                            f"{td / 60:.4g} min"})
        why = ("no activation energy of the desired reaction to move k from the lab's "
               f"{lab.temperature_k - 273.15:.2f} °C")
    elif model is None:
        why = "the series does not support a dosing model"
    else:
        why = "no reaction heat"
    peak = None
    if specific_heat_j_per_kg is not None:
        peak = max(lab_peak_w_per_kg or 0.0, max(specific_heat_j_per_kg, 0.0) / td)
    return PointInputs("no_credit", td, temperature_k, initial_mass_fraction, lab, diff,
                       accumulation_on_mass_present=1.0, accumulation_time_s=td,
                       peak_heat_release_w_per_kg=peak,
                       reason=f"no credit for reaction during dosing ({why})")


def describe(point):
    """One sentence on how lab and plant differ, for the step's warnings.

    Parameters
    ----------
    point : PointInputs
        The result of :func:`plant_point`.

    Returns
    -------
    str or None
        ``None`` when lab and plant agree or there is no lab series.

    Examples
    --------
    >>> p = plant_point(LabBasis(3600.0, 303.15, 0.8), None, 120e3, 10800.0, 303.15)
    >>> describe(p).startswith("lab and plant differ in dosing time (lab 60 min, plant 180")
    True

    References
    ----------
    METHODS.md §1.1.
    """
    if not point.differences or point.lab is None:
        return None
    lab, bits = point.lab, []
    for name in point.differences:
        if name == "dosing time":
            bits.append(f"dosing time (lab {lab.dosing_time_s / 60:.4g} min, plant "
                        f"{point.dosing_time_s / 60:.4g} min)")
        elif name == "temperature":
            bits.append(f"temperature (lab {lab.temperature_k - 273.15:.2f} °C, plant "
                        f"{point.temperature_k - 273.15:.2f} °C)")
        else:
            bits.append(f"fill (final/initial mass: lab {1 / lab.initial_mass_fraction:.3g}, "
                        f"plant {1 / point.initial_mass_fraction:.3g})")
    return (f"lab and plant differ in {', '.join(bits)}: the indicators are evaluated at the "
            f"plant's point: {point.reason}")


__all__ = ["DOSING_TIME_TOLERANCE", "FILL_TOLERANCE", "REFERENCES", "TEMPERATURE_TOLERANCE_K",
           "DosingModel", "LabBasis", "PointInputs", "arrhenius_of_runs", "describe", "differences", "inputs_at",
           "model_from_accumulation", "model_from_series", "plant_point"]
