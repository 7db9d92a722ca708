"""Calorimeter series files: parse (pure, for previews) and attach to a run (a write).

The file is CSV text, one header row naming the columns with their units in square
brackets, then one row per time stamp:

    time [min],heat_release_rate [W],dosed_mass [g],reactor_temperature [degC]
    0,0.0,0,25.0
    0.5,1.2,4.1,25.1

Instrument exports are read as `hazards.services.table` describes: UTF-8, UTF-16 or
Windows-1252/Latin-1; comma, semicolon or tab separated; a decimal comma in semicolon- or
tab-separated files (`0,5;1,2`).

Columns: `time` and `heat_release_rate` are required; exactly one of `dosed_fraction`
(a fraction, `[-]`, `[1]` or `[%]`) and `dosed_mass` (a mass, converted with the feed mass);
`reactor_temperature` is optional (without it the step's process temperature is used).
Any unit of the right dimension is accepted (`s`, `min`, `h`; `W`, `mW`; `g`, `kg`; `K`,
`degC`, `°C`, `degF`). Every cell must be a plain decimal number (`-0.5`, `1e-3`): empty
cells, `nan`, `inf`, overflowing values such as `1e309`, a decimal comma in a
comma-separated file, thousands separators and spreadsheet formulas (`=SUM(A1:A3)`) are
refused. `time` must increase
strictly. A file is refused as a whole, with the row and column of every problem
(rows count records, the header being row 1), each value quoted as the file writes it and
each limit in the file's own unit. Limits: `MAX_BYTES`, `MAX_ROWS` data rows,
and at most `MAX_PROBLEMS` problems are listed.
"""

from __future__ import annotations

import csv
import hashlib
import re
from dataclasses import dataclass, field

import numpy as np

from calcs.units import Q_, ureg
from hazards.quantities import normalise_unit, size_text
from hazards.services.table import in_file_unit, open_table, read_rows

MAX_BYTES = 4 * 1024 * 1024
MAX_ROWS = 50_000
MAX_PROBLEMS = 200
FRACTION_TOLERANCE = 1e-9
# A dosed_fraction column may go beyond the stoichiometric amount (a 1.1-1.2 equivalent feed
# is ordinary practice; calcs caps it at 1 for the accumulation, METHODS.md §1.2 step 4).
# More than this many equivalents is taken as a typing slip (common practice, no source).
MAX_EQUIVALENTS = 3.0

# column -> (SI unit its values are converted to, physical rule or None)
COLUMNS = {
    "time": "second",
    "heat_release_rate": "watt",
    "dosed_fraction": "dimensionless",
    "dosed_mass": "kilogram",
    "reactor_temperature": "kelvin",
}
EXAMPLE_UNIT = {"time": "min", "heat_release_rate": "W", "dosed_fraction": "-",
                "dosed_mass": "g", "reactor_temperature": "degC"}
DIMENSIONLESS = {"-", "1", "", "fraction"}
_HEADER = re.compile(r"^\s*([A-Za-z_][A-Za-z0-9_ ]*?)\s*(?:\[\s*(.*?)\s*\])?\s*$")


@dataclass(frozen=True)
class SeriesProblem:
    """One reason to refuse a file: where (row, column), what (value) and why (rule)."""

    row: int | None
    column: str | None
    value: str | None
    rule: str
    code: str

    def as_dict(self) -> dict:
        return {"field": "file", "row": self.row, "column": self.column, "value": self.value,
                "rule": self.rule, "code": self.code}


@dataclass(frozen=True)
class ParsedSeries:
    """A file's columns converted to SI (lists of floats, one entry per data row)."""

    time_s: list[float]
    heat_release_rate_w: list[float]
    dosed_fraction: list[float]
    reactor_temperature_k: list[float] | None
    columns: dict[str, str]  # column -> unit as written in the header
    rows: int
    sha256: str
    read_as: str = "UTF-8, comma-separated"  # encoding and separator (`table.Table`)

    @property
    def data(self) -> dict:
        """The stored shape of `CalorimetrySeries.data`."""
        return {"time_s": self.time_s, "heat_release_rate_w": self.heat_release_rate_w,
                "dosed_fraction": self.dosed_fraction,
                "reactor_temperature_k": self.reactor_temperature_k}


@dataclass
class SeriesParse:
    """Either `series` (and no problems) or `problems` (and no series)."""

    series: ParsedSeries | None = None
    problems: list[SeriesProblem] = field(default_factory=list)

    @property
    def ok(self) -> bool:
        return self.series is not None and not self.problems


class _Problems(list):
    """At most MAX_PROBLEMS problems, then one line saying how many more there were."""

    hidden = 0

    def add(self, row, column, value, rule, code) -> None:
        if len(self) >= MAX_PROBLEMS:
            self.hidden += 1
            return
        shown = None if value is None else str(value)[:80]
        self.append(SeriesProblem(row, column, shown, rule, code))

    def result(self) -> SeriesParse:
        listed = list(self)
        if self.hidden:
            listed.append(SeriesProblem(None, None, None, f"and {self.hidden} more problems",
                                        "too_many_problems"))
        return SeriesParse(problems=listed)


def _linear_to_si(column: str, unit_text: str, target: str | None = None,
                  example: str | None = None) -> tuple[float, float]:
    """(a, b) with si = a·x + b for the unit as written; raises ValueError with a rule.

    `target` and `example` default to the calorimeter columns' (`COLUMNS`, `EXAMPLE_UNIT`)."""
    target = target or COLUMNS[column]
    example = example or EXAMPLE_UNIT[column]
    if target == "dimensionless" and unit_text.strip().lower() in DIMENSIONLESS:
        return 1.0, 0.0
    text = normalise_unit(unit_text)
    if text.strip() in ("%", "percent"):
        text = "percent"
    try:
        unit = ureg.Unit(text)
    except Exception:
        raise ValueError("is not a known unit", "unknown_unit") from None
    if unit.dimensionality != ureg.Unit(target).dimensionality:
        raise ValueError(
            f"has the wrong dimension for {column}: expected a unit like {example}",
            "wrong_dimension",
        )
    # Factors from pint's definitions (NIST SP 811 / ISO 80000); offsets for °C and °F.
    b = float(Q_(0.0, unit).to(target).magnitude)
    a = (float(Q_(1000.0, unit).to(target).magnitude) - b) / 1000.0  # less rounding for °F
    return a, b


def _header(cells: list[str], problems: _Problems) -> dict[str, tuple[int, str, str]]:
    """column -> (index, header text, unit text)."""
    found: dict[str, tuple[int, str, str]] = {}
    named: set[str] = set()
    for index, cell in enumerate(cells):
        match = _HEADER.match(cell)
        name = match.group(1).strip().lower().replace(" ", "_") if match else None
        if name not in COLUMNS:
            problems.add(1, cell or f"column {index + 1}", cell,
                         "is not a known column (time, heat_release_rate, dosed_fraction, "
                         "dosed_mass, reactor_temperature)", "unknown_column")
            continue
        if name in named:
            problems.add(1, cell, cell, "is a duplicate column", "duplicate_column")
            continue
        named.add(name)
        if match.group(2) is None:
            problems.add(1, cell, cell, f"must give its unit in square brackets, e.g. "
                         f"{name} [{EXAMPLE_UNIT[name]}]", "missing_unit")
            continue
        found[name] = (index, cell, match.group(2))
    for required in ("time", "heat_release_rate"):
        if required not in named:
            problems.add(1, required, None, "is a required column", "missing_column")
    if {"dosed_fraction", "dosed_mass"} <= named:
        problems.add(1, "dosed_mass", None, "give dosed_fraction or dosed_mass, not both",
                     "duplicate_column")
    elif not {"dosed_fraction", "dosed_mass"} & named:
        problems.add(1, "dosed_fraction", None,
                     "a dosed_fraction or a dosed_mass column is required", "missing_column")
    return found


def parse_series(raw: bytes, *, feed_mass_kg: float | None = None,
                 max_bytes: int = MAX_BYTES, max_rows: int = MAX_ROWS) -> SeriesParse:
    """Parse a calorimeter CSV file into SI columns, or list every problem in it.

    No database access and no side effects: the browser upload uses it for a preview.
    `feed_mass_kg` converts a `dosed_mass` column to the dosed fraction.
    """
    problems = _Problems()
    if len(raw) > max_bytes:
        problems.add(None, None, len(raw), f"is larger than the limit of {size_text(max_bytes)}",
                     "too_large")
        return problems.result()
    if not raw.strip():
        problems.add(None, None, None, "is empty", "empty_file")
        return problems.result()
    table = open_table(raw, problems)
    if table is None:
        return problems.result()
    reader = table.reader()
    try:
        header = next(reader)
    except csv.Error as exc:
        problems.add(1, None, None, f"is not valid CSV ({exc})", "csv")
        return problems.result()
    columns = _header([c.strip() for c in header], problems)
    conversions: dict[str, tuple[float, float]] = {}
    for name, (_, cell, unit) in columns.items():
        try:
            conversions[name] = _linear_to_si(name, unit)
        except ValueError as exc:
            rule, code = exc.args
            problems.add(1, cell, unit, rule, code)
    if problems:
        return problems.result()

    values, row_numbers, written = read_rows(reader, len(header), columns, problems, max_rows,
                                             table)
    if "dosed_mass" in columns and (feed_mass_kg is None or not feed_mass_kg > 0):
        problems.add(1, columns["dosed_mass"][1], None,
                     "a dosed_mass column needs the feed mass to give the dosed fraction",
                     "needs_feed_mass")
    if problems:
        return problems.result()

    si = {name: np.asarray(col) * conversions[name][0] + conversions[name][1]
          for name, col in values.items()}
    _physical_checks(si, columns, conversions, row_numbers, written, problems)
    if problems:
        return problems.result()
    if "dosed_mass" in si:
        name, fraction = "dosed_mass", si.pop("dosed_mass") / feed_mass_kg
        rule = "must not exceed the feed mass"
        limit = 1.0
    else:
        name, fraction = "dosed_fraction", si.pop("dosed_fraction")
        rule = (f"must be at most {MAX_EQUIVALENTS:g} (equivalents of the stoichiometric feed; "
                "above 1 is a surplus feed)")
        limit = MAX_EQUIVALENTS
    for i in np.flatnonzero(fraction > limit + FRACTION_TOLERANCE)[:MAX_PROBLEMS]:
        problems.add(row_numbers[i], columns[name][1], written[name][i], rule,
                     "out_of_range")
    if problems:
        return problems.result()
    # rounding of a full feed (e.g. 5 g of 5 g); a surplus beyond the tolerance is kept
    fraction = np.where(fraction <= 1.0 + FRACTION_TOLERANCE, np.minimum(fraction, 1.0),
                        fraction)
    return SeriesParse(series=ParsedSeries(
        time_s=si["time"].tolist(),
        heat_release_rate_w=si["heat_release_rate"].tolist(),
        dosed_fraction=fraction.tolist(),
        reactor_temperature_k=(si["reactor_temperature"].tolist()
                               if "reactor_temperature" in si else None),
        columns={name: unit for name, (_, _, unit) in columns.items()},
        rows=len(row_numbers),
        sha256=hashlib.sha256(raw).hexdigest(),
        read_as=table.description,
    ))


def _physical_checks(si: dict, columns: dict, conversions: dict, rows: list[int],
                     written: dict, problems: _Problems) -> None:
    """Physical rules on the SI values; each problem quotes the cell and the limit in the
    file's own unit."""
    time = si["time"]
    for i in np.flatnonzero(np.diff(time) <= 0)[:MAX_PROBLEMS]:
        problems.add(rows[i + 1], columns["time"][1], written["time"][i + 1],
                     f"time must increase from row to row (the row before has "
                     f"{written['time'][i]} {columns['time'][2]})", "not_increasing")
    for name, rule, bad in (
        ("dosed_fraction", "must not be negative", lambda v: v < 0),
        ("dosed_mass", "must not be negative", lambda v: v < 0),
        ("reactor_temperature", None, lambda v: v <= 0),
    ):
        if name in si:
            if rule is None:
                zero = in_file_unit(0.0, conversions[name], columns[name][2])
                rule = f"must be above absolute zero ({zero})"
            for i in np.flatnonzero(bad(si[name]))[:MAX_PROBLEMS]:
                problems.add(rows[i], columns[name][1], written[name][i], rule,
                             "out_of_range")
    for name, col in si.items():
        for i in np.flatnonzero(~np.isfinite(col))[:MAX_PROBLEMS]:
            # A finite value that overflows in SI (e.g. 1e308 h).
            problems.add(rows[i], columns[name][1], written[name][i],
                         "is out of range after unit conversion", "not_finite")
