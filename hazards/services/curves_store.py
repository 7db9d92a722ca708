"""Attach a measured curve to a decomposition test and derive what the curves give (a write).

One transaction: the curve row (original bytes, SHA-256, SI columns, what it yields), then
the test's derived onset, energy and `kinetics` from all its curves, then the step's
indicators (the recompute runs before commit). A DSC test's onset is the extrapolated onset
of its slowest scan (the most sensitive one), its energy the mean over the scans; with scans
at 3 or more heating rates the kinetics are fitted (`calcs.kinetic_fit`), chosen
(`calcs.autocatalytic`) and used for TD24 and TMRad by simulation (`calcs.adiabatic_sim`).
"""

from __future__ import annotations

import dataclasses

import numpy as np
from django.core.exceptions import ValidationError
from django.db import transaction

import calcs
from calcs.arc import (
    analyse_adiabatic_run,
    corrected_run,
    first_order_activation_energy,
    gas_after_cooling,
)
from calcs.autocatalytic import autocatalysis_screen, choose_model
from calcs.dsc import analyse_scan
from calcs.errors import CalcInputError
from calcs.isoconversional_profile import e_alpha
from calcs.kinetic_fit import fit_rate_model, scan_jackknife_covariance
from calcs.result import json_safe
from hazards.models import DecompositionCurve, DecompositionTest
from hazards.services.curves import parse_curve
from hazards.services.records import lock_version, record_update
from hazards.services.series import SeriesProblem
from hazards.services.series_store import SeriesRejected

MIN_RATES_FOR_KINETICS = 3
KINETICS_PENDING = "kinetics need DSC scans at {n} or more heating rates ({have} so far)"


def analyse_dsc(
    data: dict,
    *,
    sample_mass_kg: float,
    exotherm_positive: bool = True,
    baseline: str = "sigmoidal",
    limits_k=None,
):
    sign = 1.0 if exotherm_positive else -1.0
    return analyse_scan(
        data["time_s"],
        data["temperature_k"],
        sign * np.asarray(data["heat_flow_w"]),
        sample_mass_kg,
        baseline=baseline,
        limits_k=limits_k,
    )


def scan_summary(a) -> dict:
    """The SI summary stored in `DecompositionCurve.derived` for a DSC scan."""
    return json_safe(
        {
            "kind": "dsc",
            "heating_rate_k_per_s": a.heating_rate_k_per_s,
            "onset_k": a.onset_k,
            "first_deviation_k": a.first_deviation_k,
            "peak_k": a.peak_k,
            "energy_j_per_kg": a.energy_j_per_kg,
            "limits_k": list(a.limits_k),
            "baseline": a.baseline_method,
            "methods": a.methods,
            "warnings": list(a.warnings),
            "calcs_version": calcs.__version__,
        }
    )


def run_summary(
    data: dict,
    *,
    phi: float | None,
    sample_mass_kg: float,
    free_volume_m3: float | None = None,
    typed_activation_energy: float | None = None,
) -> dict:
    """The SI summary stored in `DecompositionCurve.derived` for an adiabatic run.

    Onset at the detection sensitivity, self-heat rate, measured TMR and rise, pressure
    figures, E (typed on the test, else first order from the run, Townsend & Tou), the
    φ-corrected curve (onset, final temperature, TMR at the corrected onset, the curve for
    the charts) and the non-condensable gas after cooling (METHODS.md §12.5).
    """
    time, temp, pressure = data["time_s"], data["temperature_k"], data.get("pressure_pa")
    r = analyse_adiabatic_run(time, temp, pressure)
    rate = r.self_heat_rate_k_per_s
    warnings = list(r.warnings)
    methods = {
        "onset": "arc.onset at the detection sensitivity 0.02 K/min",
        "self_heat_rate": "arc.self_heat_rate (central differences)",
        "tmr": "arc.measured_tmr (onset to maximum self-heat rate)",
        "adiabatic_rise": "phi·ΔT_meas (ASTM E1981)",
    }
    e_fit = first_order_activation_energy(
        temp, rate, r.onset_k, r.onset_k + r.measured_rise_k
    )
    warnings += [f"E from the run: {w}" for w in e_fit.warnings]
    if typed_activation_energy:
        e, methods["activation_energy"] = typed_activation_energy, "typed on the test"
    else:
        e, methods["activation_energy"] = e_fit.value, "arc.first_order_activation_energy"
    corrected = None
    if phi is None:
        warnings.append("φ not given: the run is not φ-corrected")
    elif e is None:
        warnings.append("no activation energy: the run is not φ-corrected")
    else:
        corrected = corrected_run(time, temp, r, phi, e)
        methods["phi_correction"] = "arc.phi_correct_curve (Fisher et al. 1992, ASTM E1981)"
    gas = None
    if pressure is not None:
        g = gas_after_cooling(temp, pressure, free_volume_m3, sample_mass_kg)
        gas = {"mol_per_kg": g.value, **g.parameters}
        warnings += list(g.warnings)
        methods["gas"] = g.method
    return json_safe(
        {
            "kind": "adiabatic",
            "onset_k": r.onset_k,
            "onset_time_s": r.onset_time_s,
            "max_self_heat_rate_k_per_s": r.max_rate_k_per_s,
            "temperature_at_max_rate_k": r.temperature_at_max_rate_k,
            "measured_tmr_s": r.tmr_from_onset_s,
            "measured_rise_k": r.measured_rise_k,
            "adiabatic_rise_k": (phi or 1.0) * r.measured_rise_k,
            "phi": phi,
            "activation_energy_j_per_mol": e,
            "activation_energy_fit": {"value_j_per_mol": e_fit.value, **e_fit.parameters},
            "corrected": corrected,
            "max_pressure_pa": r.max_pressure_pa,
            "max_pressure_rate_pa_per_s": r.max_pressure_rate_pa_per_s,
            "gas": gas,
            "warnings": warnings,
            "methods": methods,
            "calcs_version": calcs.__version__,
        }
    )


def derive_adiabatic(test: DecompositionTest, curves) -> tuple[dict, dict]:
    """(test fields, kinetics JSON) from the adiabatic runs of a test.

    The run with the lowest onset is the basis (the conservative one). The test takes its
    onset and φ; its E when none was typed (a derived E is marked in `kinetics` so a later
    run may replace it); its energy as c_p·φ·ΔT_meas with the step's c_p (the sample taken
    as the reaction mass), when the step has one.
    """
    basis = min(curves, key=lambda c: c.derived["onset_k"])
    d = basis.derived
    previous = test.kinetics or {}
    typed_e = (
        test.activation_energy_j_per_mol
        if previous.get("activation_energy_source") != "curve"
        else None
    )
    fields = {"onset_temperature_k": d["onset_k"], "phi_factor": basis.phi_factor}
    methods = {"onset_temperature": "arc.onset of the run with the lowest onset"}
    source = "typed" if typed_e else None
    if not typed_e:
        fields["activation_energy_j_per_mol"] = d.get("activation_energy_j_per_mol")
        if fields["activation_energy_j_per_mol"] is not None:
            source = "curve"
            methods["activation_energy"] = "arc.first_order_activation_energy"
    cp = test.step.specific_heat_capacity_j_per_kg_k
    if cp:
        fields["decomposition_energy_j_per_kg"] = cp * (basis.phi_factor or 1.0) * d[
            "measured_rise_k"
        ]
        methods["decomposition_energy"] = (
            "c_p of the step × φ × ΔT_meas of the run (sample taken as the reaction mass)"
        )
    kinetics = {
        "status": "adiabatic run: TD24 from the φ-corrected onset",
        "files_sha256": [c.sha256 for c in curves],
        "basis_curve_sha256": basis.sha256,
        "activation_energy_source": source,
        "methods": methods,
        "calcs_version": calcs.__version__,
    }
    return fields, json_safe(kinetics)


def derive_kinetics(curves) -> tuple[dict, dict]:
    """(test fields, kinetics JSON) from all DSC curves of a test."""
    scans = [
        analyse_dsc(
            c.data,
            sample_mass_kg=c.sample_mass_kg,
            exotherm_positive=c.exotherm_positive,
            baseline=c.baseline,
            limits_k=(c.limit_low_k, c.limit_high_k) if c.limit_low_k else None,
        )
        for c in curves
    ]
    slowest = min(scans, key=lambda a: a.heating_rate_k_per_s)
    fields = {
        "onset_temperature_k": slowest.onset_k,
        "decomposition_energy_j_per_kg": float(np.mean([a.energy_j_per_kg for a in scans])),
        "heating_rate_k_per_s": slowest.heating_rate_k_per_s,
    }
    rates = {round(a.heating_rate_k_per_s * 60, 3) for a in scans}
    files = [c.sha256 for c in curves]
    base = {
        "files_sha256": files,
        "calcs_version": calcs.__version__,
        "methods": {
            "onset_temperature": "dsc.extrapolated_onset of the slowest scan",
            "decomposition_energy": "mean of dsc.energy over the scans",
        },
    }
    if len(rates) < MIN_RATES_FOR_KINETICS:
        return fields, {
            **base,
            "status": KINETICS_PENDING.format(n=MIN_RATES_FOR_KINETICS, have=len(rates)),
        }
    conv = [a.curve for a in scans]
    profiles = {m: e_alpha(conv, m) for m in ("friedman", "ozawa_flynn_wall")}
    fits = [fit_rate_model(conv, m) for m in ("nth_order", "autocatalytic")]
    chosen, evidence = choose_model(fits)
    screen = autocatalysis_screen(conv, fits, profiles["friedman"])
    # the chosen model's covariance: the fit's (a lower bound: points of a scan are not
    # independent) plus the scan-to-scan jackknife; the report's stderr follow it
    chosen = dataclasses.replace(
        chosen, covariance=chosen.covariance + scan_jackknife_covariance(conv, chosen)
    )
    energies = [a.energy_j_per_kg for a in scans]
    kinetics = {
        **base,
        "status": "fitted",
        "model": chosen.model,
        "parameters": [float(x) for x in chosen.parameters],
        "covariance": chosen.covariance.tolist(),
        "covariance_method": "least squares s²(JᵀJ)⁻¹ + leave-one-scan-out jackknife",
        "degrees_of_freedom": len(scans) - 1,
        "energy_stderr_j_per_kg": float(np.std(energies, ddof=1) / np.sqrt(len(energies))),
        "reference_temperature_k": chosen.reference_temperature_k,
        "lowest_measured_k": min(a.first_deviation_k for a in scans),
        "fits": {f.model: (chosen if f.model == chosen.model else f).report() for f in fits},
        "choice": evidence,
        "screen": screen,
        "e_alpha": {
            m: {
                "conversion": p.conversion,
                "activation_energy_j_per_mol": p.activation_energy_j_per_mol,
                "stderr_j_per_mol": p.stderr_j_per_mol,
                "mean_j_per_mol": p.mean_j_per_mol,
                "spread": p.spread,
                "warnings": list(p.warnings),
            }
            for m, p in profiles.items()
        },
    }
    return fields, json_safe(kinetics)


def _rejected(exc: CalcInputError) -> SeriesRejected:
    return SeriesRejected([SeriesProblem(None, exc.argument, None, exc.rule, "calculation")])


def curve_attach(
    *,
    test: DecompositionTest,
    file_name: str,
    raw: bytes,
    sample_mass_kg: float,
    exotherm_positive: bool = True,
    phi_factor: float | None = None,
    free_volume_m3: float | None = None,
    baseline: str = "sigmoidal",
    limits_k=None,
    expected_test_version: int | None = None,
):
    """Store a curve on a test, derive its figures and the test's, recompute the step.

    All or nothing. Returns the curve. Raises SeriesRejected (file or calculation
    problems, nothing stored) or StaleRecord.
    """
    parsed = parse_curve(raw, kind=test.method)
    if not parsed.ok:
        raise SeriesRejected(parsed.problems)
    data = parsed.series.data
    try:
        if test.method == "dsc":
            derived = scan_summary(
                analyse_dsc(
                    data,
                    sample_mass_kg=sample_mass_kg,
                    exotherm_positive=exotherm_positive,
                    baseline=baseline,
                    limits_k=limits_k,
                )
            )
        else:
            previous = test.kinetics or {}
            derived = run_summary(
                data,
                phi=phi_factor,
                sample_mass_kg=sample_mass_kg,
                free_volume_m3=free_volume_m3,
                typed_activation_energy=test.activation_energy_j_per_mol
                if previous.get("activation_energy_source") != "curve"
                else None,
            )
    except CalcInputError as exc:
        raise _rejected(exc) from None
    with transaction.atomic():
        test = DecompositionTest._base_manager.select_for_update().get(pk=test.pk)
        lock_version(instance=test, expected_version=expected_test_version)
        curve = DecompositionCurve(
            test=test,
            file_name=file_name[:255],
            original=raw,
            sha256=parsed.series.sha256,
            columns=parsed.series.columns,
            data=data,
            sample_mass_kg=sample_mass_kg,
            exotherm_positive=exotherm_positive,
            phi_factor=phi_factor,
            free_volume_m3=free_volume_m3,
            baseline=baseline,
            limit_low_k=limits_k[0] if limits_k else None,
            limit_high_k=limits_k[1] if limits_k else None,
            derived=derived,
        )
        try:
            curve.full_clean()
        except ValidationError as exc:
            raise SeriesRejected(
                [
                    SeriesProblem(None, name, None, message, "invalid")
                    for name, messages in exc.message_dict.items()
                    for message in messages
                ]
            ) from None
        curve.save()
        test_refresh(test=test)
    return curve


def test_refresh(*, test: DecompositionTest) -> DecompositionTest:
    """Derive the test's onset, energy and kinetics from all its curves (inside a write)."""
    curves = list(test.curves.order_by("id"))
    if not curves:
        return record_update(instance=test, data={"kinetics": {}})
    if test.method == "dsc":
        try:
            fields, kinetics = derive_kinetics(curves)
        except CalcInputError as exc:
            raise _rejected(exc) from None
    else:
        fields, kinetics = derive_adiabatic(test, curves)
    return record_update(instance=test, data={**fields, "kinetics": kinetics})
