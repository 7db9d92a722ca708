"""Keyed heads of the audit chain, and the check of the chain against every head it knows.

The links are SHA-256 computed by the database at COMMIT; the key never enters the database
(whoever administers it could read it there). The key marks heads instead: a head is
(seq, hash, mac) with mac = HMAC-SHA256(chain key, "head:" seq ":" hash), the chain key
derived from EXOLEDGER_SEAL_KEY, which is kept outside the database as for signature seals.
Because every link hashes its predecessor, a keyed head vouches for every link up to it:
rewriting an event and rehashing the links after it changes the hash at every later head,
and nobody without the key can mark a new one; cutting the tail leaves heads that name links
which no longer exist.

Heads come from every dossier (frozen in its sealed content when it was requested) and from
head files that `manage.py chain_head --append FILE` writes for an operator to keep apart.
Dossiers requested before heads were keyed carry the hash alone; `verify` looks those up
by hash.
"""

from __future__ import annotations

import hashlib
import hmac
import json
from dataclasses import dataclass
from pathlib import Path

from django.apps import apps
from django.conf import settings
from django.db import connection

from hazards.review.chain_sql import GENESIS

HEAD_FORMAT = "exoledger-chain-head/1"


def _chain_key() -> bytes:
    seal_key = settings.SIGNATURE_SEAL_KEY.encode("utf-8")
    return hmac.new(seal_key, b"exoledger audit chain key v1", hashlib.sha256).digest()


def chain_mac(kind: str, text: str) -> str:
    return hmac.new(_chain_key(), f"{kind}:{text}".encode(), hashlib.sha256).hexdigest()


def head_mac(seq: int, hash_: str) -> str:
    return chain_mac("head", f"{seq}:{hash_}")


@dataclass(frozen=True)
class Head:
    seq: int | None  # None: a head from before heads were keyed (hash only)
    hash: str
    mac: str | None
    source: str

    def keyed_ok(self) -> bool:
        return (
            self.seq is not None
            and self.mac is not None
            and hmac.compare_digest(self.mac, head_mac(self.seq, self.hash))
        )


def current_head() -> dict:
    """The newest committed link as a keyed head: {"seq", "hash", "mac"} (seq 0: empty)."""
    with connection.cursor() as cursor:
        cursor.execute("SELECT seq, hash FROM review_chainlink ORDER BY seq DESC LIMIT 1")
        row = cursor.fetchone()
    seq, hash_ = row if row else (0, GENESIS)
    return {"seq": seq, "hash": hash_, "mac": head_mac(seq, hash_)}


def head_line(head: dict, at: str) -> str:
    return json.dumps({"format": HEAD_FORMAT, **head, "at": at}, sort_keys=True)


def read_head_file(path: Path) -> tuple[list[Head], list[str]]:
    """Heads of a file written by `chain_head`; unreadable lines are problems."""
    heads, problems = [], []
    try:
        lines = path.read_text(encoding="utf-8").splitlines()
    except OSError as exc:
        return [], [f"head file {path} cannot be read: {exc.strerror or exc}"]
    for number, line in enumerate(lines, 1):
        if not line.strip():
            continue
        try:
            data = json.loads(line)
            heads.append(
                Head(int(data["seq"]), str(data["hash"]), str(data["mac"]), f"{path} line {number}")
            )
        except (ValueError, KeyError, TypeError):
            problems.append(f"head file {path} line {number} is not a head")
    return heads, problems


def dossier_heads() -> list[Head]:
    """The head frozen in each dossier's content when it was requested."""
    heads: list[Head] = []
    if not apps.is_installed("hazards.dossier"):
        return heads
    Dossier = apps.get_model("dossier", "Dossier")
    rows = Dossier.objects.order_by("pk").values_list(
        "pk",
        "process_id",
        "version",
        "content__context__audit_head",
        "content__context__audit_head_hash",
    )
    for pk, process_id, version, keyed, bare in rows.iterator():
        source = f"dossier {pk} (process {process_id} version {version})"
        if isinstance(keyed, dict) and {"seq", "hash", "mac"} <= keyed.keys():
            heads.append(Head(int(keyed["seq"]), str(keyed["hash"]), str(keyed["mac"]), source))
        elif bare:
            heads.append(Head(None, str(bare), None, source))
    return heads


def _link(cursor, seq: int) -> str:
    cursor.execute("SELECT event_table, event_id FROM review_chainlink WHERE seq = %s", [seq])
    row = cursor.fetchone()
    return f"link {seq} ({row[0]} event {row[1]})" if row else f"link {seq}"


def check_heads(heads: list[Head], chunk: int = 5000) -> list[str]:
    """Every head against the chain; when any disagrees, the last link after which they do.

    A head agrees when the chain holds its hash at its link. The report names each head that
    does not, and the last link up to which every head agrees: the chain was rewritten or
    cut after that link (a cut tail leaves heads beyond the chain's end)."""
    problems: list[str] = []
    keyed, legacy = [], []
    for head in heads:
        if head.seq is None:
            legacy.append(head)
        elif head.keyed_ok():
            keyed.append(head)
        else:
            problems.append(
                f"the head of {head.source} (link {head.seq}) does not carry this "
                "system's key mark: forged, altered or from another installation"
            )
    agree: list[int] = []
    first_bad: int | None = None
    with connection.cursor() as cursor:
        cursor.execute("SELECT coalesce(max(seq), 0) FROM review_chainlink")
        (end,) = cursor.fetchone()
        seqs = sorted({h.seq for h in keyed})
        at: dict[int, str] = {}
        for i in range(0, len(seqs), chunk):
            cursor.execute(
                "SELECT seq, hash FROM review_chainlink WHERE seq = ANY(%s)", [seqs[i : i + chunk]]
            )
            at.update(cursor.fetchall())
        for head in keyed:
            found = at.get(head.seq, GENESIS if head.seq == 0 else None)
            if found == head.hash:
                agree.append(head.seq)
                continue
            if found is None and head.seq > end:
                why = f"names link {head.seq} but the chain ends at link {end} (a cut tail)"
            elif found is None:
                why = f"names link {head.seq}, which is missing from the chain"
            else:
                why = (
                    f"names link {head.seq} with hash {head.hash[:16]}…, the chain has "
                    f"{found[:16]}… there (rewritten)"
                )
            problems.append(f"the head of {head.source} {why}")
            first_bad = head.seq if first_bad is None else min(first_bad, head.seq)
        if legacy:
            cursor.execute(
                "SELECT hash, seq FROM review_chainlink WHERE hash = ANY(%s)",
                [[h.hash for h in legacy]],
            )
            by_hash = dict(cursor.fetchall())
            for head in legacy:
                if head.hash in by_hash:
                    agree.append(by_hash[head.hash])
                else:
                    problems.append(
                        f"the head hash of {head.source} ({head.hash[:16]}…, "
                        "from before heads were keyed) is not in the chain"
                    )
        if first_bad is not None:
            last_good = max((s for s in agree if s < first_bad), default=0)
            after = _link(cursor, last_good) if last_good else "the start of the chain"
            problems.append(
                f"the chain and its heads disagree after {after}: every head up "
                f"to there agrees, the first that does not names link {first_bad}"
            )
    return problems
