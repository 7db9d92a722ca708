"""The uploaded calorimeter record of a run drawn as the instrument wrote it: heat-release
rate, reactor temperature, and dosed fraction with the thermal conversion, on one time axis.

One page-width SVG (matplotlib Figure API, text kept as text in the shipped font, fixed ids,
no date: the same data give the same bytes), with larger text than the dossier's small
charts so that it reads at the width of a page or a phone. Long records are thinned to the
minimum and maximum of each time bin, so a short spike of heat release is never dropped.
"""

from __future__ import annotations

import matplotlib
import numpy as np
from matplotlib.figure import Figure

from calcs.accumulation import analyse_accumulation
from calcs.constants import HOUR, T_ZERO_C
from hazards.dossier.charts import _RC, INK, MID, _svg

MAX_POINTS = 3000
_PAGE_RC = {
    **_RC,
    "font.size": 12,
    "axes.titlesize": 13,
    "legend.fontsize": 11,
    "lines.linewidth": 1.6,
}


def thin(values: np.ndarray, limit: int = MAX_POINTS) -> np.ndarray:
    """Indices that keep the first, the last and each bin's minimum and maximum of
    `values`: at most about `limit` points, no extreme lost."""
    n = len(values)
    if n <= limit:
        return np.arange(n)
    bins = max(limit // 2, 1)
    edges = np.linspace(0, n, bins + 1, dtype=int)
    keep = {0, n - 1}
    for lo, hi in zip(edges[:-1], edges[1:], strict=True):
        if hi > lo:
            chunk = values[lo:hi]
            keep.add(lo + int(np.argmin(chunk)))
            keep.add(lo + int(np.argmax(chunk)))
    return np.array(sorted(keep))


def thermal_conversion(data: dict, initial_mass_kg: float, feed_mass_kg: float) -> np.ndarray:
    """X_th(t) = Q(t)/Q_tot of the record (METHODS.md §1.2), from the accumulation analysis
    (the heat capacity does not enter X_th; 1 J/(kg·K) is passed only to satisfy it)."""
    result = analyse_accumulation(
        data["time_s"],
        data["heat_release_rate_w"],
        data["dosed_fraction"],
        1.0,
        initial_mass_kg,
        feed_mass_kg,
        reactor_temperature_k=data.get("reactor_temperature_k"),
        process_temperature_k=None if data.get("reactor_temperature_k") else 300.0,
    )
    return np.asarray(result.thermal_conversion, dtype=float)


#: (width, height) in inches: a page-wide drawing and a narrow one for phones, both with
#: the same text size, so that the text stays readable where the image is shrunk to fit.
SIZES = {"wide": (8.0, 7.2), "narrow": (4.6, 7.8)}


def series_chart(
    data: dict, *, initial_mass_kg: float, feed_mass_kg: float, title: str, size: str = "wide"
) -> str:
    """Three panels over time [h]: heat-release rate [W], reactor temperature [°C], dosed
    fraction and thermal conversion [-]."""
    t = np.asarray(data["time_s"], dtype=float)
    q = np.asarray(data["heat_release_rate_w"], dtype=float)
    fd = np.asarray(data["dosed_fraction"], dtype=float)
    tr = data.get("reactor_temperature_k")
    xth = thermal_conversion(data, initial_mass_kg, feed_mass_kg)
    keep = thin(q)
    hours = t[keep] / HOUR
    with matplotlib.rc_context(_PAGE_RC):
        fig = Figure(figsize=SIZES[size])
        left = 0.12 if size == "wide" else 0.2
        axes = fig.subplots(
            3,
            1,
            sharex=True,
            gridspec_kw={"hspace": 0.18, "left": left, "right": 0.97, "top": 0.93, "bottom": 0.09},
        )
        fig.suptitle(title, x=left, ha="left", fontsize=13, fontweight="bold")
        axes[0].plot(hours, q[keep], color=INK, label="heat-release rate")
        axes[0].set_ylabel("heat release / W")
        axes[0].axhline(0, color=MID, linewidth=0.6)
        if tr is not None:
            axes[1].plot(hours, np.asarray(tr, dtype=float)[keep] - T_ZERO_C, color=INK)
            axes[1].set_ylabel("reactor / °C")
        else:
            axes[1].text(
                0.5,
                0.5,
                "no reactor temperature in the file",
                ha="center",
                va="center",
                transform=axes[1].transAxes,
                color=MID,
            )
            axes[1].set_yticks([])
        axes[2].plot(hours, fd[keep], color=INK, linestyle="--", label="dosed fraction")
        axes[2].plot(hours, xth[keep], color=MID, linestyle="-", label="thermal conversion")
        axes[2].set_ylabel("fraction")
        axes[2].set_ylim(-0.03, max(1.05, float(fd.max()) * 1.05))
        axes[2].legend(loc="lower right")
        axes[2].set_xlabel("time / h")
        axes[2].set_xlim(float(hours[0]), float(hours[-1]))
        for ax in axes:
            ax.grid(True, color="#dddddd", linewidth=0.6)
        return _svg(fig)
