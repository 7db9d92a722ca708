"""A spreadsheet file (Office Open XML, ECMA-376) written with the standard library and
streamed: the zip is written to a sink that hands each chunk on as soon as it is written
(zipfile writes data descriptors when it cannot seek), so the whole file is never held.

One worksheet, a bold first row, numbers as numbers, dates as ISO text, other cells as
inline strings (no shared-string table, so rows can be written as they come)."""

from __future__ import annotations

import datetime as dt
import math
import zipfile
from collections.abc import Iterable, Iterator
from xml.sax.saxutils import escape

_CONTENT_TYPES = """<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">
<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>
<Default Extension="xml" ContentType="application/xml"/>
<Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/>
<Override PartName="/xl/worksheets/sheet1.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>
<Override PartName="/xl/styles.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.styles+xml"/>
</Types>"""
_RELS = """<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">
<Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.xml"/>
</Relationships>"""
_WORKBOOK = """<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships">
<sheets><sheet name="{name}" sheetId="1" r:id="rId1"/></sheets>
</workbook>"""
_WORKBOOK_RELS = """<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">
<Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet1.xml"/>
<Relationship Id="rId2" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/styles" Target="styles.xml"/>
</Relationships>"""
_STYLES = """<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">
<fonts count="2"><font><sz val="11"/><name val="Calibri"/></font><font><b/><sz val="11"/><name val="Calibri"/></font></fonts>
<fills count="2"><fill><patternFill patternType="none"/></fill><fill><patternFill patternType="gray125"/></fill></fills>
<borders count="1"><border><left/><right/><top/><bottom/><diagonal/></border></borders>
<cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/></cellStyleXfs>
<cellXfs count="2"><xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/><xf numFmtId="0" fontId="1" fillId="0" borderId="0" xfId="0" applyFont="1"/></cellXfs>
</styleSheet>"""
_SHEET_START = (
    '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<worksheet '
    'xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
    '<sheetViews><sheetView workbookViewId="0"><pane ySplit="1" topLeftCell="A2" '
    'activePane="bottomLeft" state="frozen"/></sheetView></sheetViews><sheetData>'
)
_SHEET_END = "</sheetData></worksheet>"
_CONTROL = {c: None for c in range(32) if c not in (9, 10, 13)}  # not allowed in XML 1.0


def column_name(index: int) -> str:
    """0 -> A, 25 -> Z, 26 -> AA."""
    name = ""
    index += 1
    while index:
        index, rest = divmod(index - 1, 26)
        name = chr(65 + rest) + name
    return name


def _cell(ref: str, value, style: int) -> str:
    s = f' s="{style}"' if style else ""
    if value is None or value == "":
        return ""
    if isinstance(value, bool):
        return f'<c r="{ref}" t="b"{s}><v>{int(value)}</v></c>'
    if isinstance(value, int | float) and math.isfinite(value):
        return f'<c r="{ref}"{s}><v>{value!r}</v></c>'
    if isinstance(value, dt.date):
        value = value.isoformat()
    text = escape(str(value).translate(_CONTROL))
    return f'<c r="{ref}" t="inlineStr"{s}><is><t xml:space="preserve">{text}</t></is></c>'


def row_xml(number: int, values: Iterable, style: int = 0) -> str:
    cells = "".join(_cell(f"{column_name(i)}{number}", v, style) for i, v in enumerate(values))
    return f'<row r="{number}">{cells}</row>'


class _Sink:
    """A write-only file whose written bytes are taken out by `take()`."""

    def __init__(self):
        self.chunks: list[bytes] = []
        self.position = 0

    def write(self, data) -> int:
        self.chunks.append(bytes(data))
        self.position += len(data)
        return len(data)

    def tell(self) -> int:
        return self.position

    def flush(self):
        pass

    def take(self) -> bytes:
        data, self.chunks = b"".join(self.chunks), []
        return data


def stream_xlsx(
    headings: list[str], rows: Iterable[list], *, sheet: str = "Sheet1", rows_per_chunk: int = 200
) -> Iterator[bytes]:
    """The bytes of a one-sheet workbook, yielded as it is written."""
    sink = _Sink()
    with zipfile.ZipFile(sink, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("[Content_Types].xml", _CONTENT_TYPES)
        archive.writestr("_rels/.rels", _RELS)
        archive.writestr("xl/workbook.xml", _WORKBOOK.format(name=escape(sheet[:31])))
        archive.writestr("xl/_rels/workbook.xml.rels", _WORKBOOK_RELS)
        archive.writestr("xl/styles.xml", _STYLES)
        yield sink.take()
        with archive.open("xl/worksheets/sheet1.xml", "w") as part:
            part.write((_SHEET_START + row_xml(1, headings, style=1)).encode())
            for number, row in enumerate(rows, start=2):
                part.write(row_xml(number, row).encode())
                if number % rows_per_chunk == 0:
                    yield sink.take()
            part.write(_SHEET_END.encode())
    yield sink.take()
