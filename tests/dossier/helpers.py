"""Reading dossier PDFs back (pikepdf, pypdf)."""

from __future__ import annotations

import hashlib
import io

import pikepdf
import pypdf


def page_texts(data: bytes) -> list[str]:
    reader = pypdf.PdfReader(io.BytesIO(data))
    return [" ".join((page.extract_text() or "").split()) for page in reader.pages]


def attachments(data: bytes) -> dict[str, bytes]:
    with pikepdf.open(io.BytesIO(data)) as pdf:
        return {name: spec.get_file().read_bytes() for name, spec in pdf.attachments.items()}


def sha(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def fonts(data: bytes) -> list[tuple[str, bool]]:
    """(base font name, has an embedded font file) of every font used on any page."""
    found = {}

    def visit(resources):
        if resources is None:
            return
        for _, font in (resources.get("/Font") or {}).items():
            descendants = font.get("/DescendantFonts")
            target = descendants[0] if descendants else font
            desc = target.get("/FontDescriptor")
            embedded = desc is not None and any(k in desc for k in
                                                ("/FontFile", "/FontFile2", "/FontFile3"))
            found[str(font.get("/BaseFont"))] = embedded
        for _, xobj in (resources.get("/XObject") or {}).items():
            if xobj.get("/Subtype") == "/Form":
                visit(xobj.get("/Resources"))

    with pikepdf.open(io.BytesIO(data)) as pdf:
        for page in pdf.pages:
            visit(page.obj.get("/Resources"))
    return sorted(found.items())
