"""The dossier seal and the verification of a PDF against this system's records.

The seal is an HMAC-SHA256, keyed with settings.SIGNATURE_SEAL_KEY (kept outside the
database), over the dossier's id, process, version and the SHA-256 of both attachments. It is
written into the PDF's keywords (Info and XMP pdf:Keywords). A PDF cannot hold the hash of
its own bytes, so the issued file's SHA-256 is kept in the Dossier row instead.
"""

from __future__ import annotations

import hashlib
import hmac
import io
import re
from dataclasses import asdict, dataclass, field

import pikepdf
from django.conf import settings

from hazards.dossier.content import content_hashes, current_state_record
from hazards.dossier.models import Dossier, DossierStatus
from hazards.dossier.review_bridge import latest_revision
from hazards.services.indicators import canonical_json, sha256_hex

KEYWORD_RE = re.compile(r"(\w[\w-]*)=([0-9a-fA-F]+|\d+)")
RECORD_NAME, CONTEXT_NAME = "revision.json", "dossier-context.json"


def seal_for(*, dossier_id: int, process_id: int, version: int, content_sha256: str,
             context_sha256: str) -> str:
    message = (f"exoledger-dossier|{dossier_id}|{process_id}|{version}|{content_sha256}|"
               f"{context_sha256}").encode()
    key = settings.SIGNATURE_SEAL_KEY.encode()
    return hmac.new(key, message, hashlib.sha256).hexdigest()


@dataclass
class Verification:
    """What verify_dossier reports; `valid` only when every check holds."""

    valid: bool = False
    is_dossier: bool = False
    seal_valid: bool = False
    attachments_match_seal: bool = False
    file_unaltered: bool = False
    data_match_database: bool = False
    revision_current: bool | None = None
    dossier_id: int | None = None
    process_id: int | None = None
    process: str = ""
    version: int | None = None
    revision: str = ""
    status: str = ""
    sha256: str = ""
    problems: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        return asdict(self)


def _attachments(pdf) -> dict[str, bytes]:
    out = {}
    for name, spec in pdf.attachments.items():
        try:
            out[name] = spec.get_file().read_bytes()
        except Exception:  # noqa: BLE001 - a damaged attachment is reported, not raised
            out[name] = b""
    return out


def _keywords(pdf) -> str:
    text = ""
    try:
        with pdf.open_metadata() as meta:
            text = str(meta.get("pdf:Keywords") or "")
    except Exception:  # noqa: BLE001
        text = ""
    if not text and pdf.docinfo is not None and "/Keywords" in pdf.docinfo:
        text = str(pdf.docinfo["/Keywords"])
    return text


NOT_HERE = ("dossier {id} is not in this database, or not one you may see: nothing more is "
            "said about it (its seal is not checked)")


def verify_pdf(data: bytes, *, dossiers=None) -> Verification:
    """Check a PDF: ours? sealed? unaltered? attachments as issued and as in the database?

    `dossiers`: the dossiers the caller may see (None: all, for the command line). A PDF
    naming any other dossier gets exactly the answer a foreign PDF gets: what the file
    itself says, and no word from the database (not even whether the seal holds), so a
    relabelled PDF reveals nothing of a process the caller cannot see.
    """

    v = Verification(sha256=hashlib.sha256(data).hexdigest())
    try:
        pdf = pikepdf.open(io.BytesIO(data))
    except Exception as exc:  # noqa: BLE001
        v.problems.append(f"not a readable PDF ({type(exc).__name__})")
        return v
    with pdf:
        words = _keywords(pdf)
        found = dict(KEYWORD_RE.findall(words))
        files = _attachments(pdf)
    if "exoledger-dossier" not in words or not {"id", "process", "version", "content-sha256",
                                                "context-sha256", "seal"} <= set(found):
        v.problems.append("no Exoledger dossier seal in the PDF metadata")
        return v
    if not all(found[k].isdigit() and len(found[k]) <= 18 for k in ("id", "process", "version")):
        v.problems.append("the dossier seal in the PDF metadata is malformed")
        return v
    v.is_dossier = True
    v.dossier_id, v.process_id, v.version = int(found["id"]), int(found["process"]), \
        int(found["version"])
    scope = Dossier.objects.all() if dossiers is None else dossiers
    dossier = (Dossier.objects.select_related("process")
               .filter(pk=v.dossier_id, pk__in=scope.values("pk")).first())
    if dossier is None:
        v.problems.append(NOT_HERE.format(id=v.dossier_id))
        return v
    expected = seal_for(dossier_id=v.dossier_id, process_id=v.process_id, version=v.version,
                        content_sha256=found["content-sha256"],
                        context_sha256=found["context-sha256"])
    v.seal_valid = hmac.compare_digest(expected, found["seal"].lower())
    if not v.seal_valid:
        v.problems.append("the seal does not match: not issued by this system, or its metadata "
                          "was edited")
    record, context = files.get(RECORD_NAME), files.get(CONTEXT_NAME)
    if record is None or context is None:
        v.problems.append("the attached revision.json or dossier-context.json is missing")
    else:
        v.attachments_match_seal = (hashlib.sha256(record).hexdigest() == found["content-sha256"]
                                    and hashlib.sha256(context).hexdigest()
                                    == found["context-sha256"])
        if not v.attachments_match_seal:
            v.problems.append("an attachment differs from the one the seal covers")
    v.process, v.status = dossier.process.name, dossier.status
    rev = dossier.content.get("context", {}).get("revision")
    v.revision = (f"revision {rev['number']} ({rev['state']})" if rev
                  else "current state at request (no revision)")
    if dossier.status != DossierStatus.DONE:
        v.problems.append(f"dossier {dossier.pk} is {dossier.status}, not issued")
    v.file_unaltered = bool(dossier.sha256) and hmac.compare_digest(dossier.sha256, v.sha256)
    if not v.file_unaltered:
        v.problems.append("the file differs from the issued PDF (its SHA-256 is not the one "
                          "recorded)")
    db_hashes = content_hashes(dossier.content)
    v.data_match_database = (
        record is not None and context is not None
        and db_hashes == (dossier.content_sha256, dossier.context_sha256)
        and (sha256_hex(record.decode("utf-8", "replace")), sha256_hex(
            context.decode("utf-8", "replace"))) == db_hashes
        and found["content-sha256"] == dossier.content_sha256
    )
    if not v.data_match_database:
        v.problems.append("the attached data do not match the database record of this dossier")
    v.revision_current = _revision_current(dossier)
    if v.revision_current is False:
        v.problems.append("note: the process has changed since (a newer revision or new "
                          "inputs); this dossier is not the latest")
    v.valid = (v.is_dossier and v.seal_valid and v.attachments_match_seal and v.file_unaltered
               and v.data_match_database and dossier.status == DossierStatus.DONE)
    return v


def _revision_current(dossier) -> bool:
    """Whether the dossier still shows what the process is now."""
    rev = dossier.content.get("context", {}).get("revision")
    if rev is not None:
        latest = latest_revision(dossier.process)
        return latest is not None and latest.pk == rev["id"]
    now = canonical_json(current_state_record(dossier.process))
    return sha256_hex(now) == dossier.content_sha256
