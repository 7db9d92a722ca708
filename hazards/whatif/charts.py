"""SVG charts of the what-if page: the operating-window map and the accumulation/MTSR profile.

matplotlib Figure API (no pyplot), text kept as text (`svg.fonttype = "none"`), fixed hash
salt and no date, so the same numbers give the same bytes. Grey-scale readable: the unsafe
region is hatched, lines differ by style and marker as well as grey level.
"""

from __future__ import annotations

import base64
import io

import matplotlib
import numpy as np
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from calcs.constants import T_ZERO_C

_RC = {
    "svg.fonttype": "none",
    "svg.hashsalt": "exoledger-whatif",
    "font.family": "DejaVu Sans",
    "font.size": 8.0,
    "axes.linewidth": 0.7,
    "axes.titlesize": 9.0,
    "axes.titlelocation": "left",
    "legend.fontsize": 7.0,
    "legend.frameon": False,
    "lines.linewidth": 1.4,
    "axes.unicode_minus": False,
    "hatch.linewidth": 0.6,
}
INK, MID, LIGHT = "#111111", "#555555", "#9a9a9a"


def _svg(fig: Figure) -> str:
    buf = io.StringIO()
    with matplotlib.rc_context(_RC):
        fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None})
    return buf.getvalue()


def data_uri(svg: str) -> str:
    """An SVG as an `<img>` source: the page's CSP allows `data:` images but no inline style,
    and matplotlib's SVG carries a style element."""
    return "data:image/svg+xml;base64," + base64.b64encode(svg.encode("utf-8")).decode("ascii")


def window_svg(win, chosen=None) -> str:
    """The safe operating window: dosing time (x) against process temperature (y), with the
    step's current operating point, the fastest acceptable dosing times and a chosen point."""
    g = win.grid
    x = g.dosing_times_s / 60.0
    y = g.temperatures_k - T_ZERO_C
    cur = win.current
    with matplotlib.rc_context(_RC):
        fig = Figure(figsize=(6.2, 5.0))
        ax = fig.add_axes((0.11, 0.40, 0.85, 0.53))
        safe = g.safe.astype(float)
        if y.size == 1:  # one temperature (no activation energy): a band
            y_plot = np.array([y[0] - 0.5, y[0] + 0.5])
            safe = np.vstack([safe, safe])
            margin = np.vstack([g.cooling_margin, g.cooling_margin])
        else:
            y_plot, margin = y, g.cooling_margin
        if x.size > 1:
            ax.contourf(x, y_plot, safe, levels=[-0.5, 0.5, 1.5], colors=["white", "#dcdcdc"],
                        hatches=["////", ""])
            finite = np.isfinite(margin)
            if finite.any() and np.nanmin(margin) < win.minimum_cooling_margin < np.nanmax(margin):
                ax.contour(x, y_plot, np.where(finite, margin, 0.0),
                           levels=[win.minimum_cooling_margin], colors=[INK],
                           linestyles=["--"], linewidths=1.0)
            if y.size > 1 and np.unique(g.criticality_class).size > 1:
                ax.contour(x, y_plot, g.criticality_class.astype(float),
                           levels=np.arange(1.5, 5.0), colors=[MID], linestyles=[":"],
                           linewidths=1.0)
        fast = g.fastest_safe_dosing_time_s / 60.0
        ok = np.isfinite(fast)
        if ok.any() and y.size > 1:
            ax.plot(fast[ok], y[ok], color=INK, linestyle="-", marker="|", markersize=6)
        ax.plot([cur.dosing_time_s / 60.0], [cur.process_temperature_k - T_ZERO_C], marker="o",
                markersize=7, markerfacecolor="white", markeredgecolor=INK, markeredgewidth=1.6,
                linestyle="none")
        if chosen is not None:
            ax.plot([chosen.dosing_time_s / 60.0], [chosen.process_temperature_k - T_ZERO_C],
                    marker="D", markersize=6, color=INK, markerfacecolor=LIGHT,
                    linestyle="none")
        i_cur = int(np.argmin(np.abs(g.temperatures_k - cur.process_temperature_k)))
        if np.isfinite(g.fastest_safe_dosing_time_s[i_cur]):
            ax.plot([g.fastest_safe_dosing_time_s[i_cur] / 60.0], [y[i_cur]], marker="*",
                    markersize=10, color=INK, linestyle="none")
        ax.set_xlim(x[0], x[-1])
        ax.set_ylim(y_plot[0], y_plot[-1])
        ax.set_xlabel("dosing time / min")
        ax.set_ylabel("process temperature / °C")
        ax.set_title("Safe operating window")
        handles = [
            Patch(facecolor="#dcdcdc", edgecolor=MID, label="acceptable: margin ≥ "
                  f"{win.minimum_cooling_margin:g}, class "
                  + " or ".join(str(c) for c in win.acceptable_classes)),
            Patch(facecolor="white", edgecolor=MID, hatch="////", label="not acceptable"),
            Line2D([], [], color=INK, linestyle="--", label=f"cooling margin = "
                   f"{win.minimum_cooling_margin:g}"),
            Line2D([], [], color=MID, linestyle=":", label="class boundary"),
            Line2D([], [], color=INK, marker="|", label="fastest acceptable dosing time"),
            Line2D([], [], color=INK, marker="o", markerfacecolor="white", linestyle="none",
                   label="current operating point"),
            Line2D([], [], color=INK, marker="*", linestyle="none",
                   label="fastest acceptable at current T"),
        ]
        if chosen is not None:
            handles.append(Line2D([], [], color=INK, marker="D", markerfacecolor=LIGHT,
                                  linestyle="none", label="chosen point"))
        ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(-0.1, -0.13), ncol=2,
                  columnspacing=1.2)
        fig.text(0.02, 0.02, f"Model: {win.model.name}. Supports, does not replace, a qualified "
                 "assessment.", fontsize=6.5, color=MID)
    return _svg(fig)


def profile_svg(point) -> str:
    """Accumulation a(t) and MTSR(t) of one what-if point, with MTT and TD24."""
    t, a, mtsr = point.profile
    with matplotlib.rc_context(_RC):
        fig = Figure(figsize=(6.2, 4.0))
        ax = fig.add_axes((0.11, 0.36, 0.76, 0.56))
        ax.plot(t / 60.0, mtsr - T_ZERO_C, color=INK, linestyle="-", label="MTSR(t)")
        for value, style, label in ((point.mtt_k, "--", "MTT"), (point.td24_k, "-.", "TD24")):
            if value is not None:
                ax.axhline(value - T_ZERO_C, color=MID, linestyle=style, linewidth=1.0,
                           label=label)
        ax.axvline(point.dosing_time_s / 60.0, color=LIGHT, linestyle=":", linewidth=1.0,
                   label="end of dosing")
        ax.set_xlabel("time from start of dosing / min")
        ax.set_ylabel("temperature / °C")
        ax2 = ax.twinx()
        ax2.plot(t / 60.0, a, color=MID, linestyle=(0, (5, 2)), marker="s", markevery=12,
                 markersize=3, label="accumulation a(t)")
        ax2.set_ylabel("accumulated fraction / -")
        ax2.set_ylim(0.0, max(0.05, float(a.max()) * 1.15))
        ax.set_title("Accumulation and MTSR if cooling fails at t")
        h1, l1 = ax.get_legend_handles_labels()
        h2, l2 = ax2.get_legend_handles_labels()
        ax.legend(h1 + h2, l1 + l2, loc="upper left", bbox_to_anchor=(-0.1, -0.16), ncol=3)
    return _svg(fig)
