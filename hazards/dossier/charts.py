"""Charts of one step's cooling-failure assessment, as SVG strings (dossier PDF and step pages).

Each public function takes a step's snapshot data — a dict with the keys of an
`IndicatorSnapshot` (`values`, `methods`, `parameters`, `inputs`, ...) or the snapshot object
itself — and returns an SVG document as a string, or None when the chart does not apply to
the step (for example the accumulation chart of a batch step). Where a chart applies but the
data to draw it are missing, the SVG says so instead of drawing.

Drawn with matplotlib's Figure API (no pyplot, no global state besides an rc context), text
kept as text (`svg.fonttype = "none"`) in the shipped DejaVu Sans (family "Exoledger Sans",
static/fonts/fonts.css), fixed ids and no date, so the same data give the same bytes.
Lines differ by style and marker as well as by grey level, so a grey-scale print reads.
"""

from __future__ import annotations

import io
import math
import multiprocessing
import threading

import matplotlib
import numpy as np
from matplotlib.figure import Figure
from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

from calcs.accumulation import analyse_accumulation, mass_present
from calcs.adiabatic_sim import tmr_line
from calcs.constants import DAY, HOUR, T_ZERO_C, R
from calcs.rate_models import RATE_MODELS
from calcs.semibatch import accumulated_fraction, dosing_profile
from calcs.tmr import tmr_zero_order_at
from hazards.quantities import scientific

FONT_FAMILY = "Exoledger Sans"
WIDTH_IN, HEIGHT_IN = 3.9, 3.5
_RC = {
    "svg.fonttype": "none",
    "svg.hashsalt": "exoledger-dossier",
    "font.family": "DejaVu Sans",
    "font.size": 7.5,
    "axes.linewidth": 0.7,
    "axes.titlesize": 8.5,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "legend.fontsize": 6.6,
    "legend.frameon": False,
    "legend.framealpha": 0.9,
    "lines.linewidth": 1.4,
    "path.simplify": False,
    "axes.unicode_minus": False,
}
INK, MID, LIGHT = "#111111", "#555555", "#8a8a8a"


def snapshot_data(snapshot) -> dict:
    """A snapshot as the plain dict the chart functions read."""
    if snapshot is None or isinstance(snapshot, dict):
        return snapshot or {}
    return {key: getattr(snapshot, key) for key in
            ("values", "methods", "parameters", "inputs", "warnings", "references")}


def _plain_number(value, _position=None, *, high: float = 1e5, low: float = 1e-3) -> str:
    """A tick or legend number: 0.1, 250, 1000, then powers of ten (10⁶, 2.4·10¹⁰)."""
    if value != 0 and (abs(value) >= high or abs(value) < low):
        return scientific(value)
    return f"{value:g}"


def _log_tick(value, _position=None) -> str:
    """A decade of a log axis: 0.1, 1, 10, 100, 1000, then 10⁴, 10⁵ (no 10000 beside 10⁵)."""
    return _plain_number(value, high=1e4, low=1e-2)


def _hours(value: float) -> str:
    """A duration in hours with three significant digits, powers of ten when huge."""
    return _plain_number(float(f"{value:.3g}"))


def _c(kelvin):
    return None if kelvin is None else kelvin - T_ZERO_C


def _figure(title: str):
    fig = Figure(figsize=(WIDTH_IN, HEIGHT_IN))
    ax = fig.add_axes((0.15, 0.46, 0.62, 0.47))
    # A fixed title position: matplotlib would otherwise measure every tick label of every
    # axis at each draw to place it (a third of a chart's drawing time). No chart puts tick
    # labels above its plot, so the place is the same.
    ax.set_title(title, y=1.0, pad=5.0)
    return fig, ax


def _legend(ax, handles=None, labels=None):
    """Below the plot, so it never hides a line."""
    kwargs = {"loc": "upper left", "bbox_to_anchor": (-0.2, -0.2), "ncol": 1,
              "handlelength": 2.6, "columnspacing": 1.0, "borderaxespad": 0.0}
    if handles is not None:
        return ax.legend(handles, labels, **kwargs)
    return ax.legend(**kwargs)


def _note(fig, text):
    fig.text(0.02, 0.015, text, fontsize=6.2, color=MID, wrap=True)


def _svg(fig) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": "Exoledger"})
    text = buf.getvalue()
    # Our own copy of the font first, then whatever the browser has.
    return text.replace("font-family: 'DejaVu Sans'",
                        f"font-family: '{FONT_FAMILY}', 'DejaVu Sans', sans-serif")


LABEL_GAP_PT = 8.0  # vertical room one level label needs (legend-size text)


def _spread(positions: list[float], gap: float, low: float, high: float) -> list[float]:
    """Label heights (points) moved apart by at least `gap`, kept within [low, high].

    Sorted positions are pushed up where they crowd, then the stack is pushed back down
    from the top if it left the plot. Order is kept, so a label stays beside its own line.
    """
    placed: list[float] = []
    for y in positions:
        placed.append(max(y, placed[-1] + gap) if placed else max(y, low))
    overflow = placed[-1] - high if placed else 0.0
    if overflow > 0:
        placed = [y - overflow for y in placed]
        for i in range(len(placed) - 2, -1, -1):
            placed[i] = min(placed[i], placed[i + 1] - gap)
    return placed


def _freer_side(ax, value, lift_pt: float, text: str) -> str:
    """'left' or 'right': the end of the plot where a label above `value` covers fewer
    points of the drawn curves (of every axes of the figure, so a twin's lines count)."""
    fig = ax.figure
    pt = fig.dpi / 72.0
    x0, x1 = ax.bbox.x0, ax.bbox.x1
    y_line = ax.transData.transform((0.0, value))[1]
    bottom, top = y_line + lift_pt * pt, y_line + (lift_pt + LABEL_GAP_PT) * pt
    width = (len(text) * 3.9 + 6.0) * pt  # 6.6 pt DejaVu Sans: about 3.9 pt a character
    boxes = {"left": (x0, x0 + width), "right": (x1 - width, x1)}
    hits = dict.fromkeys(boxes, 0)
    for axes in fig.axes:
        for line in axes.get_lines():
            xy = np.asarray(line.get_xydata(), dtype=float)
            if len(xy) < 2 or not np.isfinite(xy).all():
                continue
            disp = axes.transData.transform(xy)
            # Dense along the curve, so a steep segment between two samples counts too.
            t = np.linspace(0.0, len(disp) - 1.0, 40 * len(disp))
            xs = np.interp(t, np.arange(len(disp)), disp[:, 0])
            ys = np.interp(t, np.arange(len(disp)), disp[:, 1])
            inside_y = (ys >= bottom) & (ys <= top)
            for side, (left, right) in boxes.items():
                hits[side] += int(np.count_nonzero(inside_y & (xs >= left) & (xs <= right)))
    return "right" if hits["right"] < hits["left"] else "left"


def _levels(ax, levels, *, inside: bool = False):
    """Horizontal lines at temperatures, each labelled at the right edge of the plot.

    `levels` holds (value °C or None, label, line style, colour). Call it after the y limits
    are final: labels of close levels (MTT and TD24 a few kelvin apart, say) are moved apart
    in points so they never print over each other, with a thin leader to their line. With
    `inside` (a plot whose right edge carries a second axis and its tick labels) the labels
    sit inside the plot above their line on a white ground, at the end where they cover
    less of the curves.
    """
    shown = sorted((lv for lv in levels if lv[0] is not None), key=lambda lv: lv[0])
    if not shown:
        return
    y0, y1 = ax.get_ylim()
    height_pt = ax.get_position().height * ax.figure.get_figheight() * 72.0
    to_pt = height_pt / (y1 - y0)
    wanted = [(value - y0) * to_pt for value, *_ in shown]
    placed = _spread(wanted, LABEL_GAP_PT, -LABEL_GAP_PT, height_pt + LABEL_GAP_PT)
    for (value, label, style, colour), want, got in zip(shown, wanted, placed, strict=True):
        ax.axhline(value, linestyle=style, color=colour, linewidth=1.0)
        text = f"{label} {value:.0f} °C"
        if inside:
            side = _freer_side(ax, value, got - want + 1.5, text)
            ax.annotate(text, xy=(0.0 if side == "left" else 1.0, value),
                        xycoords=("axes fraction", "data"),
                        xytext=(3 if side == "left" else -3, got - want + 1.5),
                        textcoords="offset points", va="bottom", ha=side, fontsize=6.6,
                        color=INK, bbox={"boxstyle": "square,pad=0.1", "facecolor": "white",
                                         "edgecolor": "none"})
            continue
        moved = abs(got - want) > 0.5
        ax.annotate(text, xy=(1.0, value),
                    xycoords=("axes fraction", "data"), xytext=(6 if moved else 3, got - want),
                    textcoords="offset points", va="center", ha="left", fontsize=6.6, color=INK,
                    arrowprops={"arrowstyle": "-", "linewidth": 0.5, "color": MID,
                                "shrinkA": 0, "shrinkB": 0} if moved else None)


def _message(title: str, message: str) -> str:
    with matplotlib.rc_context(_RC):
        fig, ax = _figure(title)
        ax.set_axis_off()
        ax.text(0.5, 0.5, message, ha="center", va="center", wrap=True, fontsize=8.5,
                transform=ax.transAxes)
        return _svg(fig)


def _step(span: float) -> float:
    for step in (0.1, 0.25, 0.5, 1.0, 2.0, 5.0, 10.0, 24.0):
        if span / step <= 3:
            return step
    return 48.0


def _activation_energy(snap: dict) -> float | None:
    params, inputs = snap.get("parameters") or {}, snap.get("inputs") or {}
    for value in (inputs.get("activation_energy_j_per_mol"),
                  params.get("kissinger_activation_energy_j_per_mol"),
                  params.get("assumed_activation_energy_j_per_mol"),
                  params.get("screening_activation_energy_j_per_mol")):
        if value:
            return float(value)
    return None


def decomposition_model(snap: dict):
    """(cp, E_a, T_ref, q_ref) of the zero-order q(T) behind TD24, or None.

    The calcs layer keeps E_a and TD24; the zero-order model through TMR_ad(TD24) = 24 h with
    that E_a is the same q(T) it used, so TMR at any temperature follows without repeating the
    method choice here.
    """
    values, inputs = snap.get("values") or {}, snap.get("inputs") or {}
    cp, ea, td24 = inputs.get("specific_heat_capacity_j_per_kg_k"), _activation_energy(snap), \
        values.get("td24_k")
    if not (cp and ea and td24):
        return None
    q_at_td24 = cp * R * td24 * td24 / (ea * DAY)
    return cp, ea, td24, q_at_td24


def simulated_model(snap: dict):
    """(model, parameters, T_ref, ΔT_ad) when TD24 came from a fitted model's simulation."""
    methods, params = snap.get("methods") or {}, snap.get("parameters") or {}
    if not str(methods.get("td24", "")).startswith("td24.adiabatic_simulation"):
        return None
    model = params.get("decomposition_model")
    named = params.get("decomposition_model_parameters") or {}
    if model not in RATE_MODELS or not all(n in named for n in RATE_MODELS[model][0]):
        return None
    return (model, [named[n] for n in RATE_MODELS[model][0]],
            params["decomposition_reference_temperature_k"],
            params["decomposition_adiabatic_rise_k"])


def _simulated_tmr(sim, temps) -> np.ndarray:
    """TMRad [s] by simulation on a coarse grid, interpolated in log over `temps`."""
    grid = np.linspace(temps[0], temps[-1], 16)
    line = np.maximum(tmr_line(*sim, grid), 1e-9)
    return np.exp(np.interp(temps, grid, np.log(line)))


def cooling_failure_chart(snapshot) -> str:
    """Temperature after a cooling failure: Tp, rise to MTSR, then the decomposition runaway."""
    snap = snapshot_data(snapshot)
    values, inputs = snap.get("values") or {}, snap.get("inputs") or {}
    title = "Cooling-failure scenario"
    tp, mtsr = inputs.get("process_temperature_k"), values.get("mtsr_k")
    if not (tp and mtsr):
        return _message(title, "MTSR not computed: no reaction heat or heat capacity.")
    mtt, td24, tmr = values.get("mtt_k"), values.get("td24_k"), values.get("tmr_ad_at_mtsr_s")
    cp = inputs.get("specific_heat_capacity_j_per_kg_k")
    rate = inputs.get("max_heat_release_rate_w_per_kg")
    if _point_mode(snap) in ("model", "no_credit") and values.get("plant_peak_heat_release_w") \
            and inputs.get("reaction_mass_kg"):
        # the lab's peak belongs to the lab's dosing time: the plant's peak, per kg
        rate = values["plant_peak_heat_release_w"] / inputs["reaction_mass_kg"]
    # Rise of the synthesis at the peak adiabatic rate (linear: a short, conservative time).
    t_rise_h = ((mtsr - tp) / (rate / cp) / HOUR) if (rate and cp and mtsr > tp) else 0.5
    rise_note = "at the peak heat-release rate" if (rate and cp) else "schematic duration"
    model, sim = decomposition_model(snap), simulated_model(snap)
    if model is None and sim is not None:  # E of the fitted model shapes the runaway branch
        model = (cp, sim[1][0], td24, None)
    with matplotlib.rc_context(_RC):
        fig, ax = _figure(title)
        pre = max(0.25, 0.15 * t_rise_h)
        ax.plot([-pre, 0], [_c(tp)] * 2, color=INK, linestyle="-", label="normal operation")
        ax.plot([0, t_rise_h], [_c(tp), _c(mtsr)], color=INK, linestyle="--", marker="o",
                markevery=[1], label=f"synthesis, adiabatic ({rise_note})")
        end_h = t_rise_h * 2 + pre
        energy = inputs.get("decomposition_energy_j_per_kg")
        note = "The synthesis is drawn to scale; "
        if model and tmr and energy and cp:
            _, ea, _, _ = model
            tmr_h = tmr / HOUR
            # The runaway after TMRad is drawn over a fixed span, not to scale: hours or days
            # would flatten the synthesis to a vertical line.
            span = max(2.0 * t_rise_h, 1.0)
            t_final = mtsr + energy / cp
            frac = np.linspace(0.0, 1.0, 200)[:-1]
            temps = mtsr - (R * mtsr * mtsr / ea) * np.log(1.0 - frac)
            keep = temps <= t_final
            gap = 0.25 * span
            ax.plot([t_rise_h, t_rise_h + gap], [_c(mtsr)] * 2, color=MID, linestyle="-.")
            ax.plot(t_rise_h + gap + frac[keep] * span, _c(temps[keep]), color=MID,
                    linestyle="-.", label=f"decomposition runaway after TMRad {_hours(tmr_h)} h")
            ax.annotate("≈", xy=(t_rise_h + gap / 2, _c(mtsr)), ha="center", va="center",
                        fontsize=11, color=INK)
            end_h = t_rise_h + gap + span * 1.05
            # Ticks of the synthesis part, none closer than 8 % of the axis to the one before
            # ("0" and "0.1" would print into each other when the rise is short).
            room = 0.08 * (end_h + pre)
            ticks = []
            for t in np.arange(0.0, t_rise_h + 1e-9, _step(t_rise_h)):
                if not ticks or t - ticks[-1] >= room:
                    ticks.append(float(t))
            ax.set_xticks(ticks + [t_rise_h + gap + span])
            ax.set_xticklabels([f"{t:g}" for t in ticks] + [f"+{_hours(tmr_h)}"])
            note += "after the break (≈) the time axis is compressed to TMRad."
        else:
            note += "no decomposition data for the runaway branch."
        _note(fig, note)
        top = max(v for v in (mtsr, mtt, td24, tp) if v is not None)
        ax.set_ylim(_c(tp) - 15, _c(top) + 25)
        _levels(ax, [(_c(tp), "Tp", ":", MID), (_c(mtsr), "MTSR", "--", LIGHT),
                     (_c(mtt), "MTT", (0, (5, 2)), MID),
                     (_c(td24), "TD24", (0, (3, 1, 1, 1)), MID)])
        ax.set_xlim(-pre, end_h)
        ax.axvline(0, color=LIGHT, linewidth=0.8)
        ax.annotate("cooling fails", xy=(0, _c(tp)), xytext=(3, -12), textcoords="offset points",
                    fontsize=7)
        ax.set_xlabel("time after cooling failure / h")
        ax.set_ylabel("temperature / °C")
        _legend(ax)
        return _svg(fig)


def _point_mode(snap: dict) -> str | None:
    return (snap.get("parameters") or {}).get("operating_point_mode")


def plant_dosing_curves(snap: dict) -> dict | None:
    """The dosing model at the plant's point, on the plant's time axis (the numbers the step's
    indicators came from; calcs.operating_point): t [s], a(t) [-], MTSR(t) [K] and the plant
    heat release q(t) = peak factor·Q′·k·a(t)·m [W]; None unless the step is in model mode."""
    params, values, inputs = (snap.get(k) or {} for k in ("parameters", "values", "inputs"))
    k, td = params.get("dosing_model_rate_constant_per_s"), params.get("plant_dosing_time_s")
    dt, cp = values.get("adiabatic_temperature_rise_k"), inputs.get(
        "specific_heat_capacity_j_per_kg_k")
    tp, mass = inputs.get("process_temperature_k"), inputs.get("reaction_mass_kg")
    if _point_mode(snap) != "model" or None in (k, td, dt, cp, tp, mass):
        return None
    r0 = params.get("plant_initial_mass_fraction") or 1.0
    t, a, mtsr = dosing_profile(k, td, tp, dt, r0)
    q = params.get("dosing_model_peak_scale", 1.0) * dt * cp * k * accumulated_fraction(
        t, k, td) * mass
    return {"time_s": t, "accumulation": a, "mtsr_k": mtsr, "heat_release_w": q,
            "dosed_fraction": np.minimum(t / td, 1.0), "dosing_time_s": td}


def accumulation_chart(snapshot, series: dict | None = None) -> str | None:
    """Thermal accumulation and MTSR(t) over the dosing of a semi-batch step (None for batch)."""
    snap = snapshot_data(snapshot)
    values, inputs = snap.get("values") or {}, snap.get("inputs") or {}
    if inputs.get("operation_mode") != "semi_batch":
        return None
    title = "Accumulation and MTSR during dosing"
    tp, cp = inputs.get("process_temperature_k"), inputs.get("specific_heat_capacity_j_per_kg_k")
    plant = plant_dosing_curves(snap)
    td_plant = (snap.get("parameters") or {}).get("plant_dosing_time_s")
    if plant is not None:
        t_h, x_ac, f_d, mtsr_t = (plant["time_s"] / HOUR, plant["accumulation"],
                                  plant["dosed_fraction"], plant["mtsr_k"])
        source = (f"dosing model at the plant's {td_plant / 60:.4g} min dosing (plant time); "
                  "the lab series was dosed over "
                  f"{snap['parameters']['lab_dosing_time_s'] / 60:.4g} min")
        i_max = int(np.argmax(mtsr_t))
    elif _point_mode(snap) == "no_credit" and td_plant and tp is not None and \
            values.get("adiabatic_temperature_rise_k") is not None:
        # no credit for reaction during dosing: all of the feed accumulates
        r0 = (snap.get("parameters") or {}).get("plant_initial_mass_fraction") or 1.0
        t = np.linspace(0.0, td_plant * 1.25, 126)
        f_d = np.minimum(t / td_plant, 1.0)
        x_ac = f_d
        mtsr_t = tp + x_ac * values["adiabatic_temperature_rise_k"] / (r0 + (1 - r0) * f_d)
        t_h, i_max = t / HOUR, int(np.argmax(mtsr_t))
        source = ("no dosing model for the plant's point: no credit for reaction during "
                  f"dosing over the plant's {td_plant / 60:.4g} min")
    elif series and series.get("time_s") and cp:
        a = analyse_accumulation(
            series["time_s"], series["heat_release_rate_w"], series["dosed_fraction"], cp,
            series["initial_mass_kg"], series["feed_mass_kg"],
            reactor_temperature_k=series.get("reactor_temperature_k"), process_temperature_k=tp)
        t_h, x_ac, f_d, mtsr_t = a.time_s / HOUR, a.accumulation, a.dosed_fraction, a.mtsr_k
        source = f"from the calorimetry series {series.get('file_name', '')}".strip()
        i_max = int(np.argmax(mtsr_t))
    else:
        x_max, td, dt_ad = inputs.get("max_accumulation"), inputs.get("dosing_time_s"), \
            values.get("adiabatic_temperature_rise_k")
        if x_max is None or not td or dt_ad is None or tp is None:
            return _message(title, "No calorimetry series and no maximum accumulation: "
                                   "MTSR(t) cannot be drawn.")
        t = np.linspace(0.0, td * 1.25, 126)
        f_d = np.minimum(t / td, 1.0)
        x_ac = np.minimum(f_d, x_max)
        x_ac[t > td] = x_max * np.exp(-(t[t > td] - td) / (0.1 * td))
        mtsr_t = tp + x_ac * dt_ad
        t_h = t / HOUR
        source = (f"estimate from the maximum accumulation {x_max:.0%} (no series): "
                  "plateau assumed until the end of feed")
        i_max = int(np.argmax(mtsr_t))
    with matplotlib.rc_context(_RC):
        fig, ax = _figure(title)
        ax.plot(t_h, np.asarray(f_d) * 100, color=LIGHT, linestyle=":", label="dosed (% of feed)")
        ax.plot(t_h, np.asarray(x_ac) * 100, color=INK, linestyle="--",
                label="accumulation X_ac (%)")
        ax.set_ylim(0, 105)
        ax.set_xlabel("time from start of dosing / h")
        ax.set_ylabel("fraction / %")
        right = ax.twinx()
        right.plot(t_h, _c(np.asarray(mtsr_t)), color=INK, linestyle="-", marker="s",
                   markevery=[i_max], label="MTSR(t) (°C, right axis)")
        right.set_ylabel("MTSR(t) / °C")
        lo, hi = float(np.min(mtsr_t)), float(np.max(mtsr_t))
        # MTT and TD24 only where they are near enough not to squash MTSR(t) into a line.
        near = [(_c(level), name, style, MID) for level, name, style in (
            (values.get("mtt_k"), "MTT", (0, (5, 2))),
            (values.get("td24_k"), "TD24", (0, (3, 1, 1, 1))))
            if level is not None and level < hi + 0.6 * (hi - lo + 20)]
        bottom, top = _c(lo), max([_c(hi)] + [lv[0] for lv in near])
        pad = 0.08 * max(top - bottom, 2.0)
        right.set_ylim(bottom - pad, top + pad)
        _levels(right, near, inside=True)
        lines = ax.get_lines() + right.get_lines()[:1]
        _legend(ax, lines, [line.get_label() for line in lines])
        _note(fig, source)
        return _svg(fig)


TMR_CEILING_H = 1e5  # about 11 years: the top of the TMRad axis


def tmr_chart(snapshot) -> str:
    """Zero-order TMRad against the initial temperature, with TD24, MTSR and Tp marked."""
    snap = snapshot_data(snapshot)
    values, inputs = snap.get("values") or {}, snap.get("inputs") or {}
    title = "TMRad against initial temperature"
    model, sim = decomposition_model(snap), simulated_model(snap)
    td24 = values.get("td24_k")
    if sim is None and model is None or td24 is None:
        return _message(title, "No decomposition kinetics or onset: TMRad and TD24 unknown.")
    tp, mtsr = inputs.get("process_temperature_k"), values.get("mtsr_k")
    lo = min(v for v in (tp, mtsr, td24) if v) - 20.0
    hi = max(v for v in (tp, mtsr, td24) if v) + 30.0
    temps = np.linspace(lo, hi, 120)
    if sim is not None:
        tmr_h = _simulated_tmr(sim, temps) / HOUR
        line_label = f"TMRad, simulated ({sim[0].replace('_', ' ')} fit)"
    else:
        cp, ea, td24, q24 = model
        tmr_h = np.array([tmr_zero_order_at(t, cp, ea, td24, q24) for t in temps]) / HOUR
        line_label = "TMRad, zero order"
    with matplotlib.rc_context(_RC):
        fig, ax = _figure(title)
        ax.semilogy(_c(temps), tmr_h, color=INK, linestyle="-", label=line_label)
        ax.axhline(24, color=MID, linestyle="--", linewidth=1.0, label="24 h")
        ax.axhline(8, color=LIGHT, linestyle=":", linewidth=1.0, label="8 h")
        ax.plot([_c(td24)], [24], marker="D", color=INK, linestyle="none",
                label=f"TD24 {_c(td24):.0f} °C")
        ax.axvline(_c(td24), color=INK, linestyle=(0, (3, 1, 1, 1)), linewidth=0.8)
        # Times beyond TMR_CEILING_H (decades) all mean the same to a reader; drawing them
        # would spend most of the axis on them and squeeze the 8-24 h region.
        top = min(float(np.max(tmr_h)), TMR_CEILING_H) * 1.5
        if mtsr:
            tm = (values.get("tmr_ad_at_mtsr_s") or float(_simulated_tmr(sim, [mtsr])[0])
                  if sim is not None else tmr_zero_order_at(mtsr, cp, ea, td24, q24)) / HOUR
            if tm <= top:
                ax.plot([_c(mtsr)], [tm], marker="o", color=INK, markerfacecolor="white",
                        linestyle="none", label=f"MTSR {_c(mtsr):.0f} °C: {_hours(tm)} h")
            else:  # an arrow at the top edge: the point is far above the plot
                ax.plot([_c(mtsr)], [top], marker="^", color=INK, markerfacecolor="white",
                        linestyle="none", clip_on=False,
                        label=f"MTSR {_c(mtsr):.0f} °C: {_hours(tm)} h (above the plot)")
        if tp:
            ax.axvline(_c(tp), color=LIGHT, linestyle=":", linewidth=0.8)
            ax.annotate("Tp", xy=(_c(tp), 1.0), xycoords=("data", "axes fraction"),
                        xytext=(2, -10), textcoords="offset points", fontsize=7)
        ax.set_xlabel("initial temperature / °C")
        ax.set_ylabel("TMRad / h (log scale)")
        # Plain numbers on the log axis: no mathtext to parse (a third of a chart's drawing time).
        ax.yaxis.set_major_formatter(FuncFormatter(_log_tick))
        ax.yaxis.set_minor_formatter(NullFormatter())
        # Minor ticks at 2 and 5 of each decade only: enough to read a time off the log axis,
        # and each tick is a handful of artists to lay out.
        ax.yaxis.set_minor_locator(LogLocator(base=10.0, subs=(2.0, 5.0)))
        ax.set_xlim(_c(lo), _c(hi))
        bottom = max(float(np.min(tmr_h)), 1e-3) / 1.5
        ax.set_ylim(min(bottom, 1.0), max(top, 100.0))
        _legend(ax)
        label = (snap.get("parameters") or {}).get("td24_label")
        if sim is not None:
            band = (snap.get("parameters") or {}).get("td24_band_k")
            _note(fig, f"{sim[0].replace('_', ' ')} model fitted to the DSC scans, "
                  f"Ea {sim[1][0] / 1000:.0f} kJ/mol, φ = 1"
                  + (f"; TD24 95 % band {_c(band[0]):.1f}–{_c(band[1]):.1f} °C" if band else ""))
        else:
            _note(fig, f"zero order, Ea {ea / 1000:.0f} kJ/mol, cp {cp / 1000:.2f} kJ/(kg·K)"
                  + (f"; TD24 is a {label}" if label else ""))
        return _svg(fig)


def heat_release_chart(snapshot, series: dict | None = None) -> str:
    """Plant heat-release rate against the vessel's cooling capacity."""
    snap = snapshot_data(snapshot)
    values, inputs = snap.get("values") or {}, snap.get("inputs") or {}
    title = "Heat release against plant cooling capacity"
    cap, peak = values.get("cooling_capacity_w"), values.get("plant_peak_heat_release_w")
    margin = (snap.get("parameters") or {}).get("minimum_cooling_margin", 1.3)
    if cap is None or peak is None:
        return _message(title, "No vessel or no peak heat-release rate: the cooling duty "
                               "cannot be compared.")
    plant_mass = inputs.get("reaction_mass_kg")
    plant = plant_dosing_curves(snap)
    note = ""
    if _point_mode(snap) in ("model", "no_credit"):
        series = None  # the lab record's time base is not the plant's: never drawn as the plant
    with matplotlib.rc_context(_RC):
        fig, ax = _figure(title)
        if plant is not None:
            t, q = plant["time_s"], plant["heat_release_w"]
            ax.plot(t / HOUR, q / 1000, color=INK, linestyle="-",
                    label="dosing model at plant scale")
            ax.set_xlabel("time from start of dosing at the plant / h")
            xmax = float(t[-1] / HOUR)
            note = f"plant dosing {plant['dosing_time_s'] / 60:.4g} min; "
        elif series and series.get("time_s") and plant_mass:
            t = np.asarray(series["time_s"], dtype=float)
            fd = np.asarray(series["dosed_fraction"], dtype=float)
            m = mass_present(fd, series["initial_mass_kg"], series["feed_mass_kg"])
            q = np.asarray(series["heat_release_rate_w"], dtype=float) / m * plant_mass
            ax.plot(t / HOUR, q / 1000, color=INK, linestyle="-",
                    label="heat release scaled to plant mass")
            ax.set_xlabel("time from start of dosing / h")
            xmax = float(t[-1] / HOUR)
        else:
            ax.barh([1], [peak / 1000], height=0.5, color="white", edgecolor=INK, hatch="////",
                    label="peak heat release at plant scale")
            ax.set_yticks([])
            ax.set_xlabel("power / kW")
            xmax = None
        if xmax is not None:
            ax.axhline(cap / 1000, color=INK, linestyle="--", label="cooling capacity U·A·ΔT")
            ax.axhline(cap / margin / 1000, color=MID, linestyle=":",
                       label=f"capacity / {margin:g} (required margin)")
            ax.set_ylabel("power / kW")
            ax.set_xlim(0, xmax)
            ax.set_ylim(0, max(cap, float(q.max())) / 1000 * 1.25)
        else:
            ax.axvline(cap / 1000, color=INK, linestyle="--", label="cooling capacity U·A·ΔT")
            ax.axvline(cap / margin / 1000, color=MID, linestyle=":",
                       label=f"capacity / {margin:g} (required margin)")
            ax.set_xlim(0, max(cap, peak) / 1000 * 1.3)
            ax.set_ylim(0.4, 2.2)
        _legend(ax)
        ratio = values.get("cooling_margin")
        if ratio is not None and math.isfinite(ratio):
            _note(fig, f"{note}cooling margin (capacity / peak) {ratio:.2f}; required "
                       f"{margin:g}")
        return _svg(fig)


def chart_names(snapshot) -> list[str]:
    """The charts that apply to a step, in the order a page shows them (known before drawing,
    so the pages can be laid out while the charts are drawn)."""
    snap = snapshot_data(snapshot)
    semi_batch = (snap.get("inputs") or {}).get("operation_mode") == "semi_batch"
    return ["cooling_failure"] + (["accumulation"] if semi_batch else []) + [
        "tmr", "heat_release"]


def step_charts(snapshot, series: dict | None = None) -> dict[str, str]:
    """Every chart that applies to a step, by name, in the order of `chart_names`."""
    draw = {
        "cooling_failure": lambda: cooling_failure_chart(snapshot),
        "accumulation": lambda: accumulation_chart(snapshot, series),
        "tmr": lambda: tmr_chart(snapshot),
        "heat_release": lambda: heat_release_chart(snapshot, series),
    }
    return {name: draw[name]() for name in chart_names(snapshot)}


def _step_charts_of(item: tuple) -> dict[str, str]:
    snapshot, series = item
    return step_charts(snapshot, series)


def charts_of_steps(items: list[tuple], *, processes: int = 1,
                    timeout: float | None = None) -> list[dict[str, str]]:
    """`step_charts` of many (snapshot dict, series) pairs, in order, on several processes.

    A chart takes tens of milliseconds of pure Python in matplotlib, so a long dossier spreads
    its steps over forked processes, one per core. The SVGs are the same bytes whichever
    process draws them (fixed ids, no dates). Forking is done only from a single-threaded
    process, where no other thread can hold a lock the children would inherit; otherwise, and
    for a few steps, the charts are drawn here. Past `timeout` seconds the processes are
    killed and `TimeoutError` is raised. Each chart's work is bounded by its data (series are
    frozen at `SERIES_POINTS` points), so no memory limit is set on these processes.
    """
    workers = min(processes, len(items) // 2)
    if workers < 2 or threading.active_count() > 1:
        return [_step_charts_of(item) for item in items]
    pool = multiprocessing.get_context("fork").Pool(workers)
    try:
        return pool.map_async(_step_charts_of, items, chunksize=1).get(timeout)
    except multiprocessing.TimeoutError:
        raise TimeoutError(f"drawing the charts took longer than {timeout:g} s") from None
    finally:
        pool.terminate()
        pool.join()
