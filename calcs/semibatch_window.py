"""The semi-batch operating window: cooling margin and criticality class over t_d × T_p.

Part of :mod:`calcs.semibatch` (import from there); the class comes from the one rule,
:func:`calcs.criticality.criticality_classes`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from calcs.criticality import criticality_classes
from calcs.errors import CalcInputError, require_absolute_temperature, require_positive
from calcs.semibatch_model import (
    accumulation_at_end_of_dosing,
    mass_basis_accumulation,
    minimum_dosing_time,
    rate_constant_at,
)


@dataclass(frozen=True)
class OperatingWindow:
    """Grid of dosing times (columns) × process temperatures (rows), SI arrays."""

    dosing_times_s: np.ndarray
    temperatures_k: np.ndarray
    rate_constant_per_s: np.ndarray  # per temperature
    accumulation: np.ndarray  # a(t_d)
    effective_accumulation: np.ndarray  # mass basis, gives max MTSR
    mtsr_k: np.ndarray
    peak_heat_release_w: np.ndarray
    cooling_capacity_w: np.ndarray  # per temperature
    cooling_margin: np.ndarray
    criticality_class: np.ndarray  # 0 unknown
    safe: np.ndarray
    fastest_safe_dosing_time_s: np.ndarray  # per temperature, NaN where none on the grid
    cooling_limited_dosing_time_s: np.ndarray  # per temperature, exact, NaN if no cooling
    warnings: tuple[str, ...] = field(default=())


def operating_window(dosing_times_s, temperatures_k, rate_constant_per_s,
                     reference_temperature_k, activation_energy_j_per_mol,
                     specific_heat_j_per_kg, specific_heat_capacity_j_per_kg_k,
                     reaction_mass_kg, heat_transfer_capacity_w_per_k, coolant_temperature_k,
                     mtt_k, td24_k, minimum_cooling_margin, initial_mass_fraction=1.0,
                     peak_scale=1.0, acceptable_classes=(1, 2), rule=None):
    """Where the cooling margin holds and the class is acceptable, over t_d × T_p.

    Equation: k(T) by Arrhenius; X_eff from :func:`mass_basis_accumulation`;
    MTSR = T + X_eff·Q′/c_p; peak = peak_scale·Q′·(1 − e^{−k·t_d})/t_d·m;
    margin = U·A·(T − T_c)/peak; class from :func:`calcs.criticality.criticality_classes`;
    safe = margin ≥ minimum and class in acceptable_classes (or ``rule``).

    Parameters
    ----------
    dosing_times_s : array_like
        Dosing times of the columns [s].
    temperatures_k : array_like
        Process temperatures of the rows [K].
    rate_constant_per_s : float
        k at the reference temperature [1/s].
    reference_temperature_k : float
        T_ref of k [K].
    activation_energy_j_per_mol : float or None
        E_a [J/mol]; ``None`` allows only T = T_ref (raises otherwise).
    specific_heat_j_per_kg : float
        Q′ per kg of final mass [J/kg].
    specific_heat_capacity_j_per_kg_k : float
        c_p [J/(kg K)].
    reaction_mass_kg : float
        Plant reaction mass [kg].
    heat_transfer_capacity_w_per_k : float or None
        U·A of the vessel [W/K]; ``None``: no cooling data (never safe).
    coolant_temperature_k : float or None
        Coolant temperature [K].
    mtt_k : array_like or None
        MTT [K], scalar or one per temperature; ``None`` unknown.
    td24_k : float or None
        TD24 [K]; ``None`` unknown.
    minimum_cooling_margin : float
        Site minimum of capacity/peak [-].
    initial_mass_fraction : float
        m_0/m_final [-] for the mass basis (1: final-mass simplification).
    peak_scale : float
        Factor on the model peak (measured/model at the measured run, ≥ 1) [-].
    acceptable_classes : sequence of int
        Classes accepted by the default rule.
    rule : callable or None
        Site rule ``rule(criticality_class, cooling_margin, mtsr_k) -> bool array``
        replacing the default.

    Returns
    -------
    OperatingWindow
        2-D arrays (rows = temperatures) and per-temperature vectors, SI.

    Validity: the assumptions of the module docstring; MTT and TD24 as given.

    Examples
    --------
    >>> w = operating_window([3600.0, 7200.0], [303.15], 0.1 / 60, 303.15, None, 120e3,
    ...                      2000.0, 5000.0, 4200.0, 283.15, 383.15, 423.15, 1.0, 0.8)
    >>> w.criticality_class.tolist(), w.safe.tolist()
    ([[1, 1]], [[False, True]])

    References
    ----------
    METHODS.md §1, §2.2, §4.1; Steinbach 1999; Westerterp & Molga 2006 (from memory).
    """
    td = np.atleast_1d(np.asarray(dosing_times_s, dtype=float))
    temps = np.atleast_1d(np.asarray(temperatures_k, dtype=float))
    if not (np.all(td > 0) and np.all(temps > 0)):
        raise CalcInputError("dosing_times_s / temperatures_k", None, "must be > 0")
    k0 = require_positive("rate_constant_per_s", rate_constant_per_s)
    tref = require_absolute_temperature("reference_temperature_k", reference_temperature_k)
    if activation_energy_j_per_mol is None:
        if not np.allclose(temps, tref, atol=1e-9, rtol=0):
            raise CalcInputError("activation_energy_j_per_mol", None,
                                 "is needed to evaluate other temperatures than the run's")
        k = np.full(temps.shape, k0)
    else:
        k = np.asarray(rate_constant_at(k0, tref, temps, activation_energy_j_per_mol)).reshape(
            temps.shape)
    qs = require_positive("specific_heat_j_per_kg", specific_heat_j_per_kg)
    cp = require_positive("specific_heat_capacity_j_per_kg_k", specific_heat_capacity_j_per_kg_k)
    mass = require_positive("reaction_mass_kg", reaction_mass_kg)
    kk, tdd = np.meshgrid(k, td, indexing="ij")
    acc = accumulation_at_end_of_dosing(kk, tdd)
    eff, _ = mass_basis_accumulation(kk, tdd, initial_mass_fraction)
    mtsr = temps[:, None] + eff * (qs / cp)
    peak = peak_scale * qs * kk * acc * mass
    warnings = []
    if heat_transfer_capacity_w_per_k is None or coolant_temperature_k is None:
        cap = np.full(temps.shape, np.nan)
        warnings.append("no vessel cooling data: the cooling margin is unknown")
    else:
        cap = heat_transfer_capacity_w_per_k * (temps - coolant_temperature_k)
    margin = cap[:, None] / peak
    mtt = np.nan if mtt_k is None else np.asarray(mtt_k, dtype=float)
    mtt = mtt[:, None] if np.ndim(mtt) == 1 else mtt
    cls = criticality_classes(mtsr, mtt, np.nan if td24_k is None else td24_k)
    if rule is None:
        safe = (np.nan_to_num(margin, nan=-np.inf) >= minimum_cooling_margin) & np.isin(
            cls, list(acceptable_classes))
    else:
        safe = np.asarray(rule(cls, margin, mtsr), dtype=bool)
    first = np.where(safe.any(axis=1), np.argmax(safe, axis=1), -1)
    fastest = np.where(first >= 0, td[np.maximum(first, 0)], np.nan)
    limited = np.array([
        np.nan if not (c > 0) else minimum_dosing_time(qs, kt, c / mass / peak_scale,
                                                       minimum_cooling_margin)
        for kt, c in zip(k, cap, strict=True)], dtype=float)
    return OperatingWindow(td, temps, k, acc, eff, mtsr, peak, cap, margin, cls, safe,
                           fastest, limited, tuple(warnings))


def as_table(window: OperatingWindow) -> list[dict]:
    """The window's cells as rows of a table (SI floats), row-major by temperature.

    Parameters
    ----------
    window : OperatingWindow
        The result of :func:`operating_window`.

    Returns
    -------
    list of dict
        One dict per cell: temperature_k, dosing_time_s, accumulation, mtsr_k,
        peak_heat_release_w, cooling_margin, criticality_class, safe.

    Examples
    --------
    >>> w = operating_window([3600.0], [303.15], 0.1 / 60, 303.15, None, 120e3, 2000.0,
    ...                      5000.0, 4200.0, 283.15, 383.15, 423.15, 1.0)
    >>> as_table(w)[0]["criticality_class"]
    1

    References
    ----------
    METHODS.md §1, §4.1.
    """
    rows = []
    for i, temp in enumerate(window.temperatures_k):
        for j, td in enumerate(window.dosing_times_s):
            margin = float(window.cooling_margin[i, j])
            rows.append({
                "temperature_k": float(temp), "dosing_time_s": float(td),
                "accumulation": float(window.accumulation[i, j]),
                "mtsr_k": float(window.mtsr_k[i, j]),
                "peak_heat_release_w": float(window.peak_heat_release_w[i, j]),
                "cooling_margin": margin if math.isfinite(margin) else None,
                "criticality_class": int(window.criticality_class[i, j]) or None,
                "safe": bool(window.safe[i, j]),
            })
    return rows
