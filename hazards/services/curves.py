"""Decomposition curves: parse a DSC scan or an adiabatic run (pure, for previews).

CSV text like the calorimeter series (`hazards.services.series`: one header row with units
in square brackets, plain decimal numbers, refused whole with row and column, values and
limits quoted in the file's own units; encodings, separators and decimal marks of
instrument exports as `hazards.services.table` reads them):

    time [min],temperature [degC],heat_flow [mW]          (DSC, exotherm positive)
    time [min],temperature [degC],pressure [bar]          (adiabatic; pressure optional)

Any unit of the right dimension is accepted. `time` must increase strictly.
"""

from __future__ import annotations

import csv
import hashlib
from dataclasses import dataclass

import numpy as np

from hazards.quantities import size_text
from hazards.services.series import (
    _HEADER,
    MAX_BYTES,
    MAX_ROWS,
    SeriesParse,
    _linear_to_si,
    _Problems,
)
from hazards.services.table import in_file_unit, open_table, read_rows

# kind -> {column: (SI unit, example unit, required)}
CURVE_COLUMNS = {
    "dsc": {
        "time": ("second", "min", True),
        "temperature": ("kelvin", "degC", True),
        "heat_flow": ("watt", "mW", True),
    },
    "adiabatic": {
        "time": ("second", "min", True),
        "temperature": ("kelvin", "degC", True),
        "pressure": ("pascal", "bar", False),
    },
}
DATA_KEYS = {
    "time": "time_s",
    "temperature": "temperature_k",
    "heat_flow": "heat_flow_w",
    "pressure": "pressure_pa",
}


@dataclass(frozen=True)
class ParsedCurve:
    """A curve file's columns in SI (lists of floats, one per data row)."""

    data: dict  # time_s, temperature_k, heat_flow_w | pressure_pa
    columns: dict[str, str]  # column -> unit as written
    rows: int
    sha256: str
    read_as: str = "UTF-8, comma-separated"  # encoding and separator (`table.Table`)


def _header(kind: str, cells: list[str], problems: _Problems) -> dict:
    spec = CURVE_COLUMNS[kind]
    found: dict[str, tuple[int, str, str]] = {}
    for index, cell in enumerate(cells):
        match = _HEADER.match(cell)
        name = match.group(1).strip().lower().replace(" ", "_") if match else None
        if name not in spec:
            problems.add(
                1,
                cell or f"column {index + 1}",
                cell,
                f"is not a known column of a {kind} curve ({', '.join(spec)})",
                "unknown_column",
            )
        elif name in found:
            problems.add(1, cell, cell, "is a duplicate column", "duplicate_column")
        elif match.group(2) is None:
            problems.add(
                1,
                cell,
                cell,
                f"must give its unit in square brackets, e.g. {name} [{spec[name][1]}]",
                "missing_unit",
            )
        else:
            found[name] = (index, cell, match.group(2))
    for name, (_, _, required) in spec.items():
        if required and name not in found and not any(p.column == name for p in problems):
            problems.add(1, name, None, "is a required column", "missing_column")
    return found


def parse_curve(
    raw: bytes, *, kind: str, max_bytes: int = MAX_BYTES, max_rows: int = MAX_ROWS
) -> SeriesParse:
    """Parse a curve file into SI columns (`SeriesParse.series` is a `ParsedCurve`), or list
    every problem with its row and column. No database access."""
    problems = _Problems()
    if len(raw) > max_bytes:
        problems.add(
            None,
            None,
            len(raw),
            f"is larger than the limit of {size_text(max_bytes)}",
            "too_large",
        )
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
    columns = _header(kind, [c.strip() for c in header], problems)
    conversions = {}
    for name, (_, cell, unit) in columns.items():
        target, example, _ = CURVE_COLUMNS[kind][name]
        try:
            conversions[name] = _linear_to_si(name, unit, target, example)
        except ValueError as exc:
            rule, code = exc.args
            problems.add(1, cell, unit, rule, code)
    if problems:
        return problems.result()
    values, rows, written = read_rows(reader, len(header), columns, problems, max_rows, table)
    if problems:
        return problems.result()
    si = {
        name: np.asarray(v) * conversions[name][0] + conversions[name][1]
        for name, v in values.items()
    }
    time_unit = columns["time"][2]
    for i in np.flatnonzero(np.diff(si["time"]) <= 0)[:50]:
        problems.add(
            rows[i + 1],
            columns["time"][1],
            written["time"][i + 1],
            f"time must increase from row to row (the row before has "
            f"{written['time'][i]} {time_unit})",
            "not_increasing",
        )
    zero = in_file_unit(0.0, conversions["temperature"], columns["temperature"][2])
    for i in np.flatnonzero(si["temperature"] <= 0)[:50]:
        problems.add(
            rows[i],
            columns["temperature"][1],
            written["temperature"][i],
            f"must be above absolute zero ({zero})",
            "out_of_range",
        )
    if "pressure" in si:
        for i in np.flatnonzero(si["pressure"] < 0)[:50]:
            problems.add(
                rows[i],
                columns["pressure"][1],
                written["pressure"][i],
                "must be an absolute pressure (not negative)",
                "out_of_range",
            )
    for name, col in si.items():
        for i in np.flatnonzero(~np.isfinite(col))[:50]:
            problems.add(
                rows[i],
                columns[name][1],
                written[name][i],
                "is out of range after unit conversion",
                "not_finite",
            )
    if problems:
        return problems.result()
    return SeriesParse(
        series=ParsedCurve(
            data={DATA_KEYS[name]: col.tolist() for name, col in si.items()},
            columns={name: unit for name, (_, _, unit) in columns.items()},
            rows=len(rows),
            sha256=hashlib.sha256(raw).hexdigest(),
            read_as=table.description,
        )
    )
