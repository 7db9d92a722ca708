"""Charts of the decomposition evidence: DSC scans with baselines and the fitted model, E(α),
and the self-heat rate of adiabatic runs, measured and φ-corrected.

Drawn like the other dossier charts (matplotlib Figure API, SVG, one font); the input is
plain data (`scan_data`, `evidence`), so a page and a frozen dossier draw the same thing.
"""

from __future__ import annotations

import matplotlib
import numpy as np

from calcs.rate_models import RATE_MODELS, conversion_function
from hazards.dossier.charts import _RC, INK, LIGHT, MID, _c, _figure, _legend, _message, _note, _svg
from hazards.services.curves_store import analyse_dsc

STYLES = ["-", "--", "-.", ":"]


def _thin(values: list, points: int | None) -> list:
    if points is None or len(values) <= points:
        return list(values)
    stride = -(-len(values) // points)
    picked = list(values[::stride])
    if (len(values) - 1) % stride:
        picked.append(values[-1])
    return picked


def scan_data(test) -> list[dict]:
    """Each DSC curve of a test with its baseline and conversion (plain lists, SI)."""
    return scan_points(test.curves.order_by("id"))


def scan_points(curves, points: int | None = None) -> list[dict]:
    """`scan_data` of the given curves, each list thinned to about `points` values."""
    out = []
    for c in curves:
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
                "temperature_k": _thin(list(c.data["temperature_k"]), points),
                "heat_flow_w": _thin([sign * x for x in c.data["heat_flow_w"]], points),
                "baseline_w": _thin(a.baseline_w.tolist(), points),
                "energy_j": a.energy_j_per_kg * c.sample_mass_kg,
                "event_temperature_k": _thin(a.curve.temperature_k.tolist(), points),
                "event_conversion": _thin(a.curve.conversion.tolist(), points),
                "event_baseline_w": _thin(
                    a.baseline_w[np.searchsorted(c.data["temperature_k"], a.limits_k[0]) :][
                        : len(a.curve.temperature_k)
                    ].tolist(),
                    points,
                ),
            }
        )
    return out


def run_points(curves, points: int | None = None) -> list[dict]:
    """Each adiabatic run's self-heat rate from its onset to its highest temperature, and
    its φ-corrected curve where it has one (plain lists, SI)."""
    out = []
    for c in curves:
        d = c.derived
        if d.get("kind") != "adiabatic":
            continue
        t = np.asarray(c.data["time_s"], float)
        temp = np.asarray(c.data["temperature_k"], float)
        rate = np.gradient(temp, t)
        i0 = int(np.searchsorted(t, d.get("onset_time_s", t[0])))
        i1 = i0 + int(np.argmax(temp[i0:]))
        keep = [i for i in range(i0, i1 + 1) if rate[i] > 0]
        corrected = (d.get("corrected") or {}).get("curve") or {}
        out.append(
            {
                "file_name": c.file_name,
                "phi": d.get("phi"),
                "activation_energy_j_per_mol": d.get("activation_energy_j_per_mol"),
                "temperature_k": _thin([float(temp[i]) for i in keep], points),
                "self_heat_rate_k_per_s": _thin([float(rate[i]) for i in keep], points),
                "corrected_temperature_k": corrected.get("temperature_k") or [],
                "corrected_self_heat_rate_k_per_s": corrected.get("self_heat_rate_k_per_s")
                or [],
            }
        )
    return out


def arc_chart(runs: list[dict]) -> str:
    """Self-heat rate against temperature of adiabatic runs: as measured and φ-corrected."""
    title = "Adiabatic runs: self-heat rate"
    if not runs:
        return _message(title, "No adiabatic runs.")
    with matplotlib.rc_context(_RC):
        fig, ax = _figure(title)
        for i, r in enumerate(runs):
            style = STYLES[i % len(STYLES)]
            ax.plot(
                _c(np.asarray(r["temperature_k"])),
                np.asarray(r["self_heat_rate_k_per_s"]) * 60,
                color=INK,
                linestyle=style,
                linewidth=0.9,
                label="measured" if i == 0 else None,
            )
            if r["corrected_temperature_k"]:
                ax.plot(
                    _c(np.asarray(r["corrected_temperature_k"])),
                    np.asarray(r["corrected_self_heat_rate_k_per_s"]) * 60,
                    color=MID,
                    linestyle=style,
                    linewidth=0.9,
                    marker=".",
                    markersize=1.5,
                    markevery=max(len(r["corrected_temperature_k"]) // 40, 1),
                    label="φ-corrected (φ = 1)" if i == 0 else None,
                )
        ax.set_yscale("log")
        ax.set_xlabel("temperature / °C")
        ax.set_ylabel("self-heat rate / (K/min)")
        _legend(ax)
        r = runs[0]
        e = r.get("activation_energy_j_per_mol")
        _note(
            fig,
            f"φ of the cell {r['phi']:g}; E {e / 1e3:.0f} kJ/mol; correction after Fisher et al."
            " 1992 / ASTM E1981"
            if r.get("phi") and e
            else "not φ-corrected: φ or E unknown",
        )
        return _svg(fig)


def evidence(test, curves, kinetics: dict, points: int) -> dict:
    """What a dossier freezes of a test's curves: their identity and figures, the kinetics,
    and the points its charts are drawn from."""
    keep = ("status", "model", "parameters", "reference_temperature_k", "files_sha256",
            "lowest_measured_k", "fits", "choice", "screen", "e_alpha", "methods",
            "covariance_method", "degrees_of_freedom", "energy_stderr_j_per_kg",
            "activation_energy_source", "basis_curve_sha256")
    return {
        "test": test.pk,
        "method": test.method,
        "kinetics": {k: kinetics[k] for k in keep if k in kinetics},
        "curves": [
            {
                "file_name": c.file_name,
                "sha256": c.sha256,
                "sample_mass_kg": c.sample_mass_kg,
                "phi_factor": c.phi_factor,
                "baseline": c.baseline,
                "derived": {
                    k: v for k, v in c.derived.items() if k not in ("corrected", "methods")
                }
                | {"corrected": {k: v for k, v in (c.derived.get("corrected") or {}).items()
                                 if k != "curve"}},
            }
            for c in curves
        ],
        "scans": scan_points([c for c in curves if c.derived.get("kind") == "dsc"], points),
        "runs": run_points(curves, points),
    }


def chart_names(decomposition: dict | None) -> list[str]:
    """The decomposition charts of a step's dossier page."""
    if not decomposition:
        return []
    names = []
    if decomposition.get("scans"):
        names += ["dsc_scans", "e_alpha"]
    if decomposition.get("runs"):
        names.append("adiabatic_runs")
    return names


def decomposition_charts(decomposition: dict | None) -> dict[str, str]:
    """Every decomposition chart of a step, by name, in the order of `chart_names`."""
    draw = {
        "dsc_scans": lambda d: scans_chart(d["scans"], d["kinetics"]),
        "e_alpha": lambda d: e_alpha_chart(d["kinetics"]),
        "adiabatic_runs": lambda d: arc_chart(d["runs"]),
    }
    return {name: draw[name](decomposition) for name in chart_names(decomposition)}


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
