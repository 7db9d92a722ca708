"""Attach a calorimeter series to a run: store the file, derive Q′ and X_ac,max (a write).

The parsing is `hazards.services.series.parse_series` (pure, shared with the browser
preview); the derivation is `calcs.accumulation.analyse_accumulation`, called exactly as the
indicator scenario calls it.
"""

from __future__ import annotations

from django.core.exceptions import ValidationError
from django.db import transaction

import calcs
from calcs.accumulation import analyse_accumulation
from calcs.errors import CalcInputError
from hazards.models import CalorimetryRun, CalorimetrySeries
from hazards.services.records import lock_version, record_update
from hazards.services.series import ParsedSeries, SeriesProblem, parse_series

SERIES_EXISTS = "The run already has a calorimeter series ({name}, SHA-256 {sha})."


class SeriesRejected(Exception):
    """The file (or what it implies) cannot be accepted; nothing was stored."""

    def __init__(self, problems: list[SeriesProblem]):
        self.problems = problems
        super().__init__(f"{len(problems)} problem(s) in the series file")


class SeriesExists(Exception):
    def __init__(self, series):
        self.series = series
        super().__init__(SERIES_EXISTS.format(name=series.file_name, sha=series.sha256))


def analyse_series(series: ParsedSeries | dict, *, step, initial_mass_kg: float,
                   feed_mass_kg: float):
    """`calcs.accumulation.analyse_accumulation` of a series with the step's c_p and T_p,
    exactly as the indicator scenario calls it."""
    data = series.data if isinstance(series, ParsedSeries) else series
    return analyse_accumulation(
        data["time_s"], data["heat_release_rate_w"], data["dosed_fraction"],
        step.specific_heat_capacity_j_per_kg_k, initial_mass_kg, feed_mass_kg,
        data.get("reactor_temperature_k"), step.process_temperature_k,
    )


def derived_summary(analysis) -> dict:
    """The SI summary stored in `CalorimetrySeries.derived`."""
    return {
        "method": "calcs.accumulation.analyse_accumulation",
        "calcs_version": calcs.__version__,
        "specific_reaction_heat_j_per_kg": analysis.specific_heat_j_per_kg,
        "total_heat_j": analysis.total_heat_j,
        "max_accumulation": analysis.max_accumulation,
        "max_mtsr_k": analysis.max_mtsr_k,
        "max_mtsr_time_s": analysis.max_mtsr_time_s,
        "accumulation_at_max_mtsr": analysis.accumulation_at_max_mtsr,
        "max_heat_release_rate_w_per_kg": analysis.max_heat_release_rate_w_per_kg,
        "end_time_s": analysis.end_time_s,
        "end_criterion": analysis.end_criterion,
        "negative_accumulation_clipped": analysis.negative_accumulation_clipped,
        "warnings": list(analysis.warnings),
    }


def series_attach(*, run, file_name: str, raw: bytes, initial_mass_kg: float,
                  feed_mass_kg: float, expected_run_version: int | None = None):
    """Store a calorimeter file on a run and derive the run's Q′ and X_ac,max from it.

    All or nothing, in one transaction: the series row (original bytes and SHA-256, SI
    columns, derived summary) and the run's `specific_reaction_heat_j_per_kg` and
    `max_accumulation`; the indicators of the step are recomputed before it commits.
    Returns (series, analysis). Raises SeriesRejected, SeriesExists or StaleRecord.
    """

    parsed = parse_series(raw, feed_mass_kg=feed_mass_kg)
    if not parsed.ok:
        raise SeriesRejected(parsed.problems)
    with transaction.atomic():
        run = CalorimetryRun._base_manager.select_for_update().select_related("step").get(
            pk=run.pk)
        lock_version(instance=run, expected_version=expected_run_version)
        existing = CalorimetrySeries.objects.filter(run=run).first()
        if existing is not None:
            raise SeriesExists(existing)
        try:
            analysis = analyse_series(parsed.series, step=run.step,
                                      initial_mass_kg=initial_mass_kg, feed_mass_kg=feed_mass_kg)
        except CalcInputError as exc:
            raise SeriesRejected([SeriesProblem(None, exc.argument, None, exc.rule,
                                                "calculation")]) from None
        series = CalorimetrySeries(
            run=run, file_name=file_name[:255], original=raw, sha256=parsed.series.sha256,
            columns=parsed.series.columns, data=parsed.series.data,
            initial_mass_kg=initial_mass_kg, feed_mass_kg=feed_mass_kg,
            derived=derived_summary(analysis),
        )
        try:
            series.full_clean()
        except ValidationError as exc:
            raise SeriesRejected([
                SeriesProblem(None, name, None, message, "invalid")
                for name, messages in exc.message_dict.items() for message in messages
            ]) from None
        series.save()
        record_update(instance=run, data={
            "specific_reaction_heat_j_per_kg": analysis.specific_heat_j_per_kg,
            "max_accumulation": analysis.max_accumulation,
            "raw_file_name": file_name[:255],
            "raw_file_sha256": parsed.series.sha256,
        })
    return series, analysis
