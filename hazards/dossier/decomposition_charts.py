"""Charts of the decomposition evidence: DSC scans with baselines and the fitted model, E(α).

Drawn like the other dossier charts (matplotlib Figure API, SVG, one font); the input is
plain data (`scan_data`), so a page and a frozen dossier draw the same thing.
"""

from __future__ import annotations

import matplotlib
import numpy as np

from calcs.rate_models import RATE_MODELS, conversion_function
from hazards.dossier.charts import _RC, INK, LIGHT, MID, _c, _figure, _legend, _message, _note, _svg
from hazards.services.curves_store import analyse_dsc

STYLES = ["-", "--", "-.", ":"]


def scan_data(test) -> list[dict]:
    """Each DSC curve of a test with its baseline and conversion (plain lists, SI)."""
    out = []
    for c in test.curves.order_by("id"):
        if c.derived.get("kind") != "dsc":
            continue
        a = analyse_dsc(
            c.data,
            sample_mass_kg=c.sample_mass_kg,
            exotherm_positive=c.exotherm_positive,
            baseline=c.baseline,
            limits_k=(c.limit_low_k, c.limit_high_k) if c.limit_low_k else None,
        )
        sign = 1.0 if c.exotherm_positive else -1.0
        out.append(
            {
                "heating_rate_k_per_s": a.heating_rate_k_per_s,
                "temperature_k": list(c.data["temperature_k"]),
                "heat_flow_w": [sign * x for x in c.data["heat_flow_w"]],
                "baseline_w": a.baseline_w.tolist(),
                "energy_j": a.energy_j_per_kg * c.sample_mass_kg,
                "event_temperature_k": a.curve.temperature_k.tolist(),
                "event_conversion": a.curve.conversion.tolist(),
                "event_baseline_w": a.baseline_w[
                    np.searchsorted(c.data["temperature_k"], a.limits_k[0]) :
                ][: len(a.curve.temperature_k)].tolist(),
            }
        )
    return out


def scans_chart(scans: list[dict], kinetics: dict) -> str:
    """Measured heat flow with its baseline per heating rate, and the fitted model's."""
    title = "DSC scans, baselines and fitted model"
    if not scans:
        return _message(title, "No DSC curves.")
    model = kinetics.get("model") if kinetics.get("status") == "fitted" else None
    with matplotlib.rc_context(_RC):
        fig, ax = _figure(title)
        for i, s in enumerate(sorted(scans, key=lambda s: s["heating_rate_k_per_s"])):
            style = STYLES[i % len(STYLES)]
            t = np.asarray(s["temperature_k"])
            ax.plot(
                _c(t),
                np.asarray(s["heat_flow_w"]) * 1e3,
                color=INK,
                linestyle=style,
                linewidth=0.9,
                label=f"{s['heating_rate_k_per_s'] * 60:g} K/min",
            )
            ax.plot(
                _c(t),
                np.asarray(s["baseline_w"]) * 1e3,
                color=LIGHT,
                linestyle=style,
                linewidth=0.7,
            )
            if model:
                te = np.asarray(s["event_temperature_k"])
                p = kinetics["parameters"]
                rate = np.exp(
                    p[1] - p[0] / 8.314462618 * (1 / te - 1 / kinetics["reference_temperature_k"])
                ) * conversion_function(model, s["event_conversion"], p)
                fit = np.asarray(s["event_baseline_w"]) + s["energy_j"] * rate
                ax.plot(
                    _c(te),
                    fit * 1e3,
                    color=MID,
                    linestyle="none",
                    marker=".",
                    markersize=1.2,
                    markevery=max(len(te) // 60, 1),
                    label="fitted model" if i == 0 else None,
                )
        ax.set_xlabel("temperature / °C")
        ax.set_ylabel("heat flow / mW (exotherm up)")
        _legend(ax)
        if model:
            _note(
                fig,
                f"{model.replace('_', ' ')}: f(α) = {RATE_MODELS[model][2]}; light lines: "
                "baselines",
            )
        else:
            _note(fig, f"light lines: baselines; {kinetics.get('status', 'no kinetics')}")
        return _svg(fig)


def e_alpha_chart(kinetics: dict) -> str:
    """Friedman and OFW activation energy against conversion, ± one standard error."""
    title = "Activation energy against conversion"
    profiles = kinetics.get("e_alpha") or {}
    if not profiles:
        return _message(title, "E(α) needs DSC scans at 3 or more heating rates.")
    with matplotlib.rc_context(_RC):
        fig, ax = _figure(title)
        for (name, p), marker in zip(sorted(profiles.items()), ("o", "s"), strict=False):
            a = np.asarray(p["conversion"], dtype=float)
            e = np.asarray(p["activation_energy_j_per_mol"], dtype=float) / 1e3
            err = np.asarray(p["stderr_j_per_mol"], dtype=float) / 1e3
            ax.errorbar(
                a,
                e,
                yerr=err,
                color=INK,
                marker=marker,
                markersize=3,
                markerfacecolor="white",
                linestyle="-",
                linewidth=0.7,
                capsize=2,
                label=f"{name.replace('_', '–').title()} (spread {p['spread']:.0%})",
            )
        ax.set_xlim(0, 1)
        ax.set_xlabel("conversion α")
        ax.set_ylabel("E / kJ/mol")
        _legend(ax)
        _note(fig, "E varying by more than 20 % suggests several steps (ICTAC 2011)")
        return _svg(fig)
