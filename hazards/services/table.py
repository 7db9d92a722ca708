"""Instrument exports as text tables: encoding, separator and decimal mark, then the rows.

Shared by the calorimeter series (`hazards.services.series`) and the decomposition curves
(`hazards.services.curves`). What an instrument's export may be:

- **Encoding**: UTF-8 (with or without a BOM); UTF-16 with a BOM, or without one when the
  text is plain ASCII-range UTF-16 (every other byte zero); else Windows-1252 / Latin-1,
  the usual single-byte exports (`°C` written as byte 0xB0, `µW` as 0xB5). Data cells are
  plain ASCII numbers, so a single-byte reading can change only the header's text, which
  is then checked like any header (an unknown unit is refused). A file that mixes UTF-8
  with single-byte characters, UTF-32, or a binary file is refused, naming the encoding
  and, where there is one, the row and column of the first byte that does not fit.
- **Separator**: comma, semicolon or tab, whichever separates the header's cells.
- **Decimal mark**: a point; in a semicolon- or tab-separated file also a comma (`12,5`),
  as spreadsheet exports in many locales write it. A file uses one mark: the first
  decimal cell fixes it, and a cell with the other mark is refused with its row and column
  (`1.500` in a decimal-comma file may be a thousands separator, so it is never guessed).
"""

from __future__ import annotations

import csv
import io
import math
import re
from dataclasses import dataclass

_NUMBER = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")
_NUMBER_COMMA = re.compile(r"^[+-]?(?:\d+,?\d*|,\d+)(?:[eE][+-]?\d+)?$")
_NON_FINITE = re.compile(r"^[+-]?(nan|inf|infinity)$", re.I)
_FORMULA_START = ("=", "@", "\t", "\r")
# A UTF-8 multi-byte sequence (lead byte and its continuation bytes).
_UTF8_SEQUENCE = re.compile(rb"[\xc2-\xf4][\x80-\xbf]+")
_MAGIC = {
    b"PK\x03\x04": "a ZIP archive or .xlsx workbook",
    b"\xd0\xcf\x11\xe0": "an .xls workbook",
    b"%PDF": "a PDF document",
}
SEPARATORS = {",": "comma", ";": "semicolon", "\t": "tab"}


@dataclass(frozen=True)
class Table:
    """A file's text and how it was read."""

    text: str
    encoding: str  # as named to people: "UTF-8", "UTF-16", "Windows-1252 (Latin-1)"
    separator: str  # ",", ";" or "\t"

    @property
    def allows_decimal_comma(self) -> bool:
        return self.separator != ","

    @property
    def description(self) -> str:
        return f"{self.encoding}, {SEPARATORS[self.separator]}-separated"

    def reader(self):
        return csv.reader(io.StringIO(self.text, newline=""), delimiter=self.separator, strict=True)


def _utf16_without_bom(sample: bytes) -> str | None:
    """'utf-16-le' / 'utf-16-be' when the sample looks like ASCII-range UTF-16 text."""
    if len(sample) < 4:
        return None
    even, odd = sample[0::2], sample[1::2]
    if odd.count(0) >= 0.9 * len(odd) and even.count(0) <= 0.1 * len(even):
        return "utf-16-le"
    if even.count(0) >= 0.9 * len(even) and odd.count(0) <= 0.1 * len(odd):
        return "utf-16-be"
    return None


def _where(text_before: str, header: list[str] | None, separator: str) -> tuple[int, str]:
    """(row, column) of the position just after `text_before`."""
    row = text_before.count("\n") + 1
    line = text_before.rsplit("\n", 1)[-1]
    cell = line.count(separator)
    column = header[cell] if header and cell < len(header) else f"column {cell + 1}"
    return row, column


def decode(raw: bytes, problems) -> tuple[str, str] | None:
    """(text, encoding name) of an instrument export, or None with the reason in `problems`."""
    for magic, what in _MAGIC.items():
        if raw.startswith(magic):
            problems.add(None, None, None, f"is {what}, not a CSV text file", "not_csv")
            return None
    if raw.startswith((b"\xff\xfe\x00\x00", b"\x00\x00\xfe\xff")):
        problems.add(
            None,
            None,
            "UTF-32",
            "is UTF-32 text: save it as UTF-8, UTF-16 or Latin-1 CSV",
            "encoding",
        )
        return None
    codec = None
    if raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        codec = "utf-16"
    elif b"\x00" in raw[:4096]:
        codec = _utf16_without_bom(raw[:4096])
        if codec is None:
            problems.add(
                None,
                None,
                None,
                "contains NUL bytes and is not UTF-16 text (a binary file?)",
                "encoding",
            )
            return None
    if codec:
        try:
            text = raw.decode(codec)
        except UnicodeDecodeError as exc:
            before = raw[: exc.start - exc.start % 2].decode(codec, "replace")
            row, column = _where(before, None, ",")
            problems.add(
                row,
                None,
                f"byte {exc.start}",
                "is UTF-16 text that cannot be decoded here (a cut or damaged file?)",
                "encoding",
            )
            return None
        text = text.lstrip("\ufeff")
        name = "UTF-16"
    else:
        body = raw[3:] if raw.startswith(b"\xef\xbb\xbf") else raw
        try:
            text, name = body.decode("utf-8"), "UTF-8"
        except UnicodeDecodeError as exc:
            if _UTF8_SEQUENCE.search(body):
                # UTF-8 characters and bytes that are not UTF-8 in one file: two encodings.
                before = body[: exc.start].decode("utf-8", "replace")
                first = before.split("\n", 1)[0].rstrip("\r")
                separator = _separator(first)
                header = [c.strip() for c in first.split(separator)]
                row, column = _where(before, header if "\n" in before else None, separator)
                problems.add(
                    row,
                    column,
                    repr(body[exc.start : exc.start + 4])[2:-1],
                    "is not valid UTF-8 though other characters of the file are: "
                    "save the whole file in one encoding (UTF-8 CSV)",
                    "encoding",
                )
                return None
            try:
                text = body.decode("cp1252")
            except UnicodeDecodeError:
                text = body.decode("latin-1")
            name = "Windows-1252 (Latin-1)"
    if "\x00" in text:
        problems.add(None, None, None, "contains NUL characters (a binary file?)", "encoding")
        return None
    return text, name


def _separator(header_line: str) -> str:
    """The separator of the header's cells (outside square brackets); comma by default."""
    outside = re.sub(r"\[[^\]]*\]", "", header_line)
    counts = {sep: outside.count(sep) for sep in SEPARATORS}
    best = max(counts, key=lambda sep: (counts[sep], sep == ","))
    return best if counts[best] else ","


def open_table(raw: bytes, problems) -> Table | None:
    """The decoded file and its separator, or None with the reason in `problems`."""
    decoded = decode(raw, problems)
    if decoded is None:
        return None
    text, encoding = decoded
    first = text.split("\n", 1)[0].rstrip("\r")
    return Table(text=text, encoding=encoding, separator=_separator(first))


def _cell_problem(cell: str, decimal_comma: bool) -> tuple[str, str]:
    text = cell.strip()
    if not text:
        return "is empty", "empty"
    if _NON_FINITE.match(text):
        return "must be a finite number", "not_finite"
    if text.startswith(_FORMULA_START) or re.match(r"^[+-][A-Za-z(]", text):
        return "is a spreadsheet formula, not a number", "formula"
    if not decimal_comma and re.match(r"^[+-]?\d+,\d+$", text):
        return "must use a decimal point, not a comma", "not_a_number"
    if re.match(r"^[+-]?\d{1,3}([.,' ]\d{3})+([.,]\d+)?$", text):
        return "must be a plain number (no thousands separators)", "not_a_number"
    return "must be a number", "not_a_number"


class _DecimalMark:
    """The file's decimal mark, fixed by its first decimal cell."""

    def __init__(self, table: Table | None):
        self.comma_allowed = table is not None and table.allows_decimal_comma
        self.mark = None
        self.first = None  # (row, column) of the cell that fixed it

    def read(self, cell: str, row: int, column: str) -> tuple[float | None, str | None]:
        """(value, None) or (None, rule) for one cell."""
        has_point, has_comma = "." in cell, "," in cell
        if _NUMBER.match(cell):
            mark = "." if has_point else None
        elif self.comma_allowed and _NUMBER_COMMA.match(cell):
            mark = "," if has_comma else None
            cell = cell.replace(",", ".")
        else:
            return None, None
        if mark is not None:
            if self.mark is None:
                self.mark, self.first = mark, (row, column)
            elif mark != self.mark:
                name = "comma" if self.mark == "," else "point"
                return None, (
                    f"has a decimal {'point' if mark == '.' else 'comma'} but the "
                    f"file writes decimals with a {name} (first at row "
                    f"{self.first[0]}, {self.first[1]}): a thousands separator? "
                    "Use one decimal mark and no thousands separators"
                )
        return float(cell), None


def read_rows(
    reader, width: int, columns: dict, problems, max_rows: int, table: Table | None = None
):
    """Read the data rows of `columns` (name -> (index, header text, unit)) as floats.

    Returns ({name: values}, the file's row number of each value, {name: cells as written});
    every bad cell, ragged row, CSV error or missing data is added to `problems` with its
    row and column, the value quoted as the file writes it."""
    values: dict[str, list[float]] = {name: [] for name in columns}
    written: dict[str, list[str]] = {name: [] for name in columns}
    row_numbers: list[int] = []
    decimal = _DecimalMark(table)
    separator = table.separator if table else ","
    record = 1  # the header
    try:
        for cells in reader:
            record += 1
            if not cells or all(not c.strip() for c in cells):
                continue  # blank lines (e.g. a trailing newline)
            if len(row_numbers) >= max_rows:
                problems.add(
                    record,
                    None,
                    None,
                    f"the file has more than the limit of {max_rows} data rows",
                    "too_many_rows",
                )
                break
            row_numbers.append(record)
            if len(cells) != width:
                hint = " (a decimal comma or thousands separator?)" if separator == "," else ""
                problems.add(
                    record,
                    None,
                    separator.join(cells)[:80],
                    f"has {len(cells)} cells, the header has {width}{hint}",
                    "ragged_row",
                )
                continue
            for name, (index, cell_name, _) in columns.items():
                cell = cells[index].strip()
                number, conflict = decimal.read(cell, record, cell_name)
                if number is None or not math.isfinite(number):
                    if conflict:
                        rule, code = conflict, "decimal_mark"
                    elif number is not None:
                        rule, code = "must be a finite number", "not_finite"
                    else:
                        rule, code = _cell_problem(cell, decimal.comma_allowed)
                    problems.add(record, cell_name, cell, rule, code)
                    number = math.nan
                values[name].append(number)
                written[name].append(cell)
    except csv.Error as exc:
        problems.add(record + 1, None, None, f"is not valid CSV ({exc})", "csv")
    if not row_numbers and not problems:
        problems.add(2, None, None, "the file has no data rows", "no_rows")
    elif len(row_numbers) == 1 and not problems:
        problems.add(
            row_numbers[0] + 1, None, None, "the file needs at least two data rows", "no_rows"
        )
    return values, row_numbers, written


def in_file_unit(si_value: float, conversion: tuple[float, float], unit: str) -> str:
    """An SI limit written in the file's own unit, e.g. 0 K as '-273.15 degC'."""
    a, b = conversion
    return f"{round((si_value - b) / a, 10):g} {unit}"
