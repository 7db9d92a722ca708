"""Model choice and the autocatalysis screen (METHODS.md §12.3).

Model choice (stated criterion): Akaike's information criterion AIC = N·ln(SSR/N) + 2p;
the model with more parameters is chosen only when it lowers AIC by more than 10
(Burnham & Anderson 2002: ΔAIC > 10 leaves the other model essentially no support)
and, for the autocatalytic law, when its fitted f(α) accelerates. The nested F-test
is reported beside it as evidence. Fits come from :mod:`calcs.kinetic_fit`.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import stats

from calcs.errors import CalcInputError
from calcs.kinetic_fit import ModelFit
from calcs.rate_models import master_plot_maximum

REFERENCES = ("burnham_anderson2002", "malek1992", "ictac2011")
AIC_MARGIN = 10.0
MASTER_PLOT_LIMIT = 0.1  # α_M above this: the y(α) maximum is inside the range (autocatalytic)


def choose_model(fits, margin: float = AIC_MARGIN) -> tuple[ModelFit, dict]:
    """Choose between fitted models by AIC, preferring fewer parameters unless ΔAIC > margin.

    Equation: chosen = simplest model unless a model with more parameters has
    AIC lower by more than ``margin`` and, if autocatalytic, its fitted f(α) has its
    maximum at α_M = (1 − n·z)/(n + 1) > 0.1 (else it is an nth-order law in
    disguise, taking up systematic error); F = [(SSR₁ − SSR₂)/(p₂ − p₁)]/[SSR₂/(N − p₂)].

    Parameters
    ----------
    fits : sequence
        :class:`ModelFit` objects on the same points.
    margin : float
        ΔAIC needed to accept the extra parameters [-] (10).

    Returns
    -------
    tuple
        (chosen fit, evidence dict with AIC of each model, ΔAIC, F and its p-value).

    Validity: fits on the same data; the F-test treats the nth-order model as nested
    in the autocatalytic one (z → ∞), so its p-value is approximate.

    Examples
    --------
    >>> a = ModelFit("nth_order", np.zeros(3), np.eye(3), 400., 100, 1.0, -10., 0, .9, (1, 2), ())
    >>> b = ModelFit("autocatalytic", np.array([1e5, 0, 1, -2]), np.eye(4), 400., 100, .5, -70.,
    ...              0, .9, (1, 2), ())
    >>> choose_model([a, b])[0].model
    'autocatalytic'

    References
    ----------
    Burnham & Anderson 2002, Model Selection and Multimodel Inference, Springer.
    """
    if not fits:
        raise CalcInputError("fits", 0, "needs at least one fit")
    order = sorted(fits, key=lambda f: len(f.parameters))
    chosen = order[0]
    for f in order[1:]:
        if f.aic < chosen.aic - margin and accelerates(f) is not False:
            chosen = f
    evidence = {
        "criterion": f"AIC, extra parameters accepted when ΔAIC > {margin:g} and an "
        f"autocatalytic fit accelerates (f(α) largest at α > {MASTER_PLOT_LIMIT})",
        "aic": {f.model: f.aic for f in fits},
        "chosen": chosen.model,
        "fitted_alpha_at_max_f": {f.model: fitted_alpha_max(f) for f in fits},
    }
    if len(order) >= 2:
        a, b = order[0], order[-1]
        dp, dof = len(b.parameters) - len(a.parameters), b.points - len(b.parameters)
        f_stat = ((a.ssr - b.ssr) / dp) / (b.ssr / dof) if b.ssr > 0 and dp > 0 else math.inf
        evidence.update(
            delta_aic=a.aic - b.aic,
            f_statistic=f_stat,
            f_p_value=float(stats.f.sf(f_stat, dp, dof)) if dp > 0 else 1.0,
        )
    return chosen, evidence


def fitted_alpha_max(fit: ModelFit) -> float:
    """Conversion at which the fitted f(α) is largest.

    Equation: autocatalytic α_M = max(0, (1 − n·z)/(n + 1)); nth order (n > 0) 0.

    Parameters
    ----------
    fit : ModelFit
        A fitted model.

    Returns
    -------
    float
        α_M [-].

    Validity: the two models of :data:`calcs.rate_models.RATE_MODELS`.

    Examples
    --------
    >>> f = ModelFit("autocatalytic", np.array([1e5, 0, 1, -2]), np.eye(4), 400., 9, 1, 1, 1, 1,
    ...              (1, 2), ())
    >>> round(fitted_alpha_max(f), 3)
    0.495

    References
    ----------
    Málek 1992 (y(α) ∝ f(α)); derived for (1 − α)ⁿ(α + z).
    """
    if fit.model != "autocatalytic":
        return 0.0
    n, z = float(fit.parameters[2]), 10.0 ** float(fit.parameters[3])
    return max(0.0, (1.0 - n * z) / (n + 1.0))


def accelerates(fit: ModelFit) -> bool | None:
    """Whether an autocatalytic fit shows acceleration (None for other models).

    Parameters
    ----------
    fit : ModelFit
        A fitted model.

    Returns
    -------
    bool or None
        α_M > 0.1 for an autocatalytic fit, ``None`` otherwise.

    Examples
    --------
    >>> f = ModelFit("nth_order", np.zeros(3), np.eye(3), 400., 9, 1, 1, 1, 1, (1, 2), ())
    >>> accelerates(f) is None
    True
    """
    if fit.model != "autocatalytic":
        return None
    return fitted_alpha_max(fit) > MASTER_PLOT_LIMIT


def autocatalysis_screen(curves, fits, e_alpha_profile=None) -> dict:
    """Evidence for autocatalysis: master-plot maximum, model comparison, E(α) trend.

    Equation: α_M = argmax of Málek's y(α) = (dα/dt)·exp(E/RT) per scan (E: the
    isoconversional mean, else the nth-order fit); autocatalytic when α_M > 0.1 in
    every scan AND the autocatalytic model wins by ΔAIC > 10.

    Parameters
    ----------
    curves : sequence
        :class:`calcs.dsc.ConversionCurve` objects.
    fits : sequence
        :class:`ModelFit` objects (nth_order and autocatalytic).
    e_alpha_profile : EAlphaProfile or None
        The result of :func:`calcs.isoconversional_profile.e_alpha`.

    Returns
    -------
    dict
        ``autocatalytic`` (bool), ``alpha_at_master_plot_maximum`` per scan,
        ``conversion_at_peak`` per scan, the model comparison, the E(α) trend and a
        sentence saying why.

    Validity: single-step kinetics; a multi-step process can mimic either answer.

    Examples
    --------
    >>> from calcs.dsc import ConversionCurve
    >>> a = np.linspace(0, 1, 201); c = ConversionCurve(0.1, a, np.full_like(a, 400.),
    ...     a, (1 - a) * (a + 0.01))
    >>> autocatalysis_screen([c], [])["alpha_at_master_plot_maximum"]
    [0.495]

    References
    ----------
    Málek 1992, Thermochim. Acta 200, 257-269; Vyazovkin et al. 2011 (ICTAC).
    """
    by_model = {f.model: f for f in fits}
    if e_alpha_profile is not None:
        e = e_alpha_profile.mean_j_per_mol
    elif "nth_order" in by_model:
        e = float(by_model["nth_order"].parameters[0])
    else:
        e = 1e5
    alpha_m = [master_plot_maximum(c.conversion, c.rate_per_s, c.temperature_k, e) for c in curves]
    peaks = [float(np.asarray(c.conversion)[np.argmax(c.rate_per_s)]) for c in curves]
    out = {
        "alpha_at_master_plot_maximum": alpha_m,
        "conversion_at_peak": peaks,
        "master_plot_limit": MASTER_PLOT_LIMIT,
        "activation_energy_used_j_per_mol": e,
    }
    shape = bool(alpha_m) and min(alpha_m) > MASTER_PLOT_LIMIT
    comparison = None
    if len(by_model) >= 2:
        _, comparison = choose_model(list(by_model.values()))
        out["model_comparison"] = comparison
    if e_alpha_profile is not None:
        out["e_alpha_spread"] = e_alpha_profile.spread
        out["e_alpha_trend_j_per_mol"] = e_alpha_profile.trend_j_per_mol
    wins = comparison is not None and comparison["chosen"] == "autocatalytic"
    out["autocatalytic"] = bool(shape and (wins or comparison is None))
    out["reason"] = (
        (
            f"master-plot maximum at α = {min(alpha_m):.2f}…{max(alpha_m):.2f} "
            f"({'inside' if shape else 'not inside'} the range, limit {MASTER_PLOT_LIMIT}); "
            + (
                f"AIC prefers {comparison['chosen']} (ΔAIC = {comparison['delta_aic']:.3g})"
                if comparison and "delta_aic" in comparison
                else "no model comparison"
            )
        )
        if alpha_m
        else "no scans"
    )
    return out
