"""HTML -> PDF/A-3u with WeasyPrint; no Django, so the sandbox process can import it alone.

A render job is plain data (`PdfJob`): the finished HTML, the charts it links as
`chart:<name>`, the attachments and the record's date. The URL fetcher serves the charts
and files under the project's static folder and refuses everything else, failing the render
instead of fetching (no network, no other local file: INTEGRITY.md §4.5).
"""

from __future__ import annotations

import datetime as dt
import gc
import os
from dataclasses import dataclass, field
from pathlib import Path
from urllib.parse import unquote, urlsplit

STATIC_DIR = (Path(__file__).resolve().parent.parent / "static").resolve()
PDF_VARIANT = "pdf/a-3u"


@dataclass
class PdfJob:
    html: str
    charts: dict[str, str] = field(default_factory=dict)
    # name, content (text), description
    attachments: list[dict] = field(default_factory=list)
    record_date: str = "2000-01-01T00:00:00Z"  # ISO 8601, the dates written into the PDF

    def to_json(self) -> dict:
        return {"html": self.html, "charts": self.charts, "attachments": self.attachments,
                "record_date": self.record_date}


def record_datetime(iso: str) -> dt.datetime:
    value = dt.datetime.fromisoformat(iso.replace("Z", "+00:00"))
    return value if value.tzinfo else value.replace(tzinfo=dt.UTC)


class RefusedURL(ValueError):
    pass


def make_fetcher(charts: dict[str, str]):
    from weasyprint.urls import URLFetcher, URLFetcherResponse  # noqa: PLC0415 — see preload

    class DossierFetcher(URLFetcher):
        """Charts of this job and the project's static files; nothing else."""

        def __init__(self):
            super().__init__(fail_on_errors=True, allowed_protocols={"file", "chart"})

        def fetch(self, url, headers=None):
            parts = urlsplit(url)
            if parts.scheme == "chart":
                name = parts.path
                if name not in charts:
                    raise RefusedURL(f"no chart {name!r} in this dossier")
                return URLFetcherResponse(url, charts[name].encode("utf-8"),
                                          {"Content-Type": "image/svg+xml"})
            if parts.scheme == "file" and not parts.netloc:
                path = Path(unquote(parts.path)).resolve()
                if path.is_relative_to(STATIC_DIR) and path.is_file():
                    return URLFetcherResponse(path.as_uri(), path.read_bytes(),
                                              {"Content-Type": _content_type(path)})
            raise RefusedURL(f"refused to fetch {url[:200]!r}: only the project's static files")

    return DossierFetcher()


def _content_type(path: Path) -> str:
    return {".css": "text/css", ".ttf": "font/ttf", ".svg": "image/svg+xml",
            ".png": "image/png"}.get(path.suffix, "application/octet-stream")


def preload() -> None:
    """Import WeasyPrint and its text stack ahead of a render (half a second or more).

    WeasyPrint (Pango through cffi) is imported only by the render child, never by the web
    and worker processes that import this module for PdfJob: hence the imports in functions."""
    import weasyprint.text.fonts  # noqa: F401, PLC0415 — heavy, render child only


def _unique_associated_files(_document, pdf) -> None:
    """One /AF entry per attachment: WeasyPrint 70 lists each twice (Kozea/WeasyPrint#2917)."""
    associated = pdf.catalog.get("AF")
    if associated:
        associated[:] = list(dict.fromkeys(associated))  # references, as pydyf writes them


def write_pdf(job: PdfJob) -> bytes:
    """Render the job; the same job gives the same bytes (fonts shipped, dates from the record)."""
    when = record_datetime(job.record_date)
    # fontTools, when it subsets instead of HarfBuzz, stamps fonts with this time.
    os.environ["SOURCE_DATE_EPOCH"] = str(int(when.timestamp()))
    import weasyprint.text.fonts  # noqa: PLC0415 — see preload

    fetcher = make_fetcher(job.charts)
    fonts = weasyprint.text.fonts.FontConfiguration()
    # In name order: WeasyPrint writes the embedded-files name tree in the order given, and a
    # name tree's keys must be sorted (ISO 32000-1 §7.9.6); qpdf reports unsorted ones.
    attachments = [
        weasyprint.Attachment(string=a["content"], name=a["name"],
                              description=a.get("description"),
                              relationship=a.get("relationship", "Source"), created=when,
                              modified=when, url_fetcher=fetcher)
        for a in sorted(job.attachments, key=lambda a: a["name"].encode("utf-8"))
    ]
    # The cyclic garbage collector is paused for the render. WeasyPrint keeps the whole
    # document (DOM, styles, boxes of every page) alive until the PDF is written, so each full
    # collection re-scans a heap that grows with the page count, and the number of full
    # collections grows too: with it on, the render time grows faster than the number of
    # steps (40 -> 80 steps: 2.2x; 2.0x without it, and 13 % to 30 % faster). Almost nothing it
    # would free is garbage before the end (peak memory within ~3 %); reference counting
    # still frees everything else at once.
    paused = gc.isenabled()
    gc.disable()
    try:
        document = weasyprint.HTML(string=job.html, base_url=STATIC_DIR.as_uri() + "/",
                                   url_fetcher=fetcher)
        return document.write_pdf(font_config=fonts, pdf_variant=PDF_VARIANT,
                                  attachments=attachments, uncompressed_pdf=False,
                                  finisher=_unique_associated_files)
    finally:
        if paused:
            gc.enable()
