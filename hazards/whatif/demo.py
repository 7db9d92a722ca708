"""Demo data for the what-if page: generated calorimetry series for one semi-batch demo step.

"Esterification with acid dosing" gets two lab runs with series generated from the
pseudo-first-order model (k·t_d = 8.33, i.e. 12 % accumulation at the end of a 150-min lab
feed at 70 °C; E_a 65 kJ/mol for the second run at 60 °C) plus 0.3 % seeded noise, so the
page can fit k and the activation energy. Invented numbers, labelled as generated. Idempotent:
a run that already has a series is left alone.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import io

import numpy as np

from calcs import semibatch
from calcs.constants import R
from hazards.models import CalorimetryRun, CalorimetrySeries, ReactionStep
from hazards.services.records import record_create
from hazards.services.series import parse_series
from hazards.services.series_store import analyse_series, derived_summary

STEP_NAME = "Esterification with acid dosing"
INSTRUMENT = "RC-lab heat-flow calorimeter 2"
SECOND_INSTRUMENT = "RC-lab heat-flow calorimeter 2 (generated what-if demo run, 60 degC)"
LAB_M0, LAB_FEED = 0.7, 0.1  # kg
LAB_TD = 150 * 60.0  # s
K_70 = 8.33 / LAB_TD  # 1/s at 70 °C
EA = 65e3  # J/mol, desired reaction (invented)
Q_SPEC = 80e3  # J/kg of final mass, as entered for the demo step


def generated_series(temperature_c: float, seed: int) -> tuple[bytes, dict]:
    """(CSV bytes, SI data) of a generated run at `temperature_c`."""
    k = K_70 * float(np.exp(-EA / R * (1 / (temperature_c + 273.15) - 1 / 343.15)))
    t = np.arange(0.0, LAB_TD + 4 * 3600.0 + 1, 60.0)
    q = Q_SPEC * (LAB_M0 + LAB_FEED) * k * semibatch.accumulated_fraction(t, k, LAB_TD)
    q = q + np.random.default_rng(seed).normal(0.0, 0.003 * q.max(), t.size)
    fd = np.minimum(t / LAB_TD, 1.0)
    tr = np.full(t.size, temperature_c + 273.15)
    out = io.StringIO()
    out.write("time [min],heat_release_rate [W],dosed_fraction [-],reactor_temperature [degC]\n")
    for row in zip(t / 60, q, fd, tr - 273.15, strict=True):
        out.write("{:.1f},{:.6f},{:.6f},{:.3f}\n".format(*row))
    data = {"time_s": t.tolist(), "heat_release_rate_w": q.tolist(),
            "dosed_fraction": fd.tolist(), "reactor_temperature_k": tr.tolist()}
    return out.getvalue().encode("utf-8"), data


def _attach(run, temperature_c: float, seed: int) -> None:
    if CalorimetrySeries.objects.filter(run=run).exists():
        return
    raw, _ = generated_series(temperature_c, seed)
    parsed = parse_series(raw).series  # the same SI columns an upload would store
    analysis = analyse_series(parsed, step=run.step, initial_mass_kg=LAB_M0,
                              feed_mass_kg=LAB_FEED)
    record_create(model=CalorimetrySeries, data=dict(
        run=run, file_name=f"whatif-demo-{temperature_c:.0f}C.csv", original=raw,
        sha256=hashlib.sha256(raw).hexdigest(), columns=parsed.columns, data=parsed.data,
        initial_mass_kg=LAB_M0, feed_mass_kg=LAB_FEED, derived=derived_summary(analysis)))


def load_whatif_demo() -> None:
    """Add the generated series (and the second-temperature run) to the demo step."""

    step = ReactionStep.objects.filter(name=STEP_NAME, process__site__code="varnholt").first()
    if step is None:
        return
    run = CalorimetryRun.objects.filter(step=step, instrument=INSTRUMENT).first()
    if run is not None:
        _attach(run, 70.0, seed=70)
    second = CalorimetryRun.objects.filter(step=step, instrument=SECOND_INSTRUMENT).first()
    if second is None:
        second = record_create(model=CalorimetryRun, data=dict(
            step=step, instrument=SECOND_INSTRUMENT, run_date=dt.date(2026, 9, 20),
            lab_scale_kg=LAB_M0 + LAB_FEED, specific_reaction_heat_j_per_kg=Q_SPEC,
            notes="Generated series for the what-if demonstration (invented data)."))
    _attach(second, 60.0, seed=60)
