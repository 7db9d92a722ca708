"""Walking the audit chain in bounded memory, with progress and a resumable checkpoint.

The chain is read in keyset batches (`seq > last ORDER BY seq LIMIT n`); for each batch the
linked event rows are digested by the database and compared, then dropped. Completeness
(every event has a link) is one anti-join per event table on the chain's unique index,
whose rows are problems only. Nothing grows with the number of events except the count.

A checkpoint records how far the walk got (the last link checked and its hash) and the
problems found before it, sealed with the chain key so that an altered checkpoint is
refused; resuming from it gives the verdict a walk from the start would give.
"""

from __future__ import annotations

import hmac
import json
import os
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

from django.db import connection, transaction

from hazards.review.anchors import chain_mac
from hazards.review.chain_sql import (
    COMMIT_TRIGGER_NAME,
    GENESIS,
    PENDING_TABLE,
    TRIGGER_NAME,
    link_hash,
)

BATCH = 5000
MAX_PROBLEMS = 1000  # kept in full; beyond it only counted
CHECKPOINT_VERSION = 1


class CheckpointRefused(Exception):
    """A checkpoint file that this system did not write, or that was altered."""


@dataclass
class Walk:
    """State of a walk along the chain: where it is and what it found so far."""

    seq: int = 0
    prev: str = GENESIS
    checked: int = 0
    problems: list[str] = field(default_factory=list)
    omitted: int = 0

    def report(self, message: str) -> None:
        if len(self.problems) < MAX_PROBLEMS:
            self.problems.append(message)
        else:
            self.omitted += 1

    def as_dict(self) -> dict:
        return {
            "version": CHECKPOINT_VERSION,
            "seq": self.seq,
            "prev": self.prev,
            "checked": self.checked,
            "problems": self.problems,
            "omitted": self.omitted,
        }


def _checkpoint_mac(state: dict) -> str:
    return chain_mac("checkpoint", json.dumps(state, sort_keys=True, separators=(",", ":")))


def save_checkpoint(path: Path, walk: Walk) -> None:
    state = walk.as_dict()
    tmp = path.with_name(path.name + ".tmp")
    tmp.write_text(json.dumps({**state, "mac": _checkpoint_mac(state)}), encoding="utf-8")
    os.replace(tmp, path)  # a crash mid-write leaves the previous checkpoint whole


def load_checkpoint(path: Path) -> Walk:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
        mac = data.pop("mac")
    except (OSError, ValueError, KeyError, AttributeError) as exc:
        raise CheckpointRefused(f"checkpoint {path} cannot be read: {exc}") from exc
    if not hmac.compare_digest(str(mac), _checkpoint_mac(data)):
        raise CheckpointRefused(
            f"checkpoint {path} was not written by this system's verify "
            "or was altered (its key mark does not verify)"
        )
    if data.get("version") != CHECKPOINT_VERSION:
        raise CheckpointRefused(f"checkpoint {path} has version {data.get('version')!r}")
    return Walk(
        seq=data["seq"],
        prev=data["prev"],
        checked=data["checked"],
        problems=list(data["problems"]),
        omitted=data["omitted"],
    )


def _digests(cursor, table: str, ids: list[int]) -> dict[int, str]:
    cursor.execute(
        f'SELECT pgh_id, review_payload_digest(%s, row_to_json(e)) FROM "{table}" e '
        "WHERE pgh_id = ANY(%s)",
        [table, ids],
    )
    return dict(cursor.fetchall())


def walk_chain(
    *,
    tables: list[str],
    walk: Walk | None = None,
    batch: int = BATCH,
    after_batch: Callable[[Walk, int], None] | None = None,
) -> Walk:
    """Check every link after `walk.seq`: it follows its predecessor, its hash is right, and
    its event row exists unaltered. `after_batch(walk, last_seq)` is called after each batch
    (progress, checkpoint); it may raise to stop the walk."""
    walk = walk or Walk()
    known = set(tables)
    with connection.cursor() as cursor:
        cursor.execute("SELECT coalesce(max(seq), 0) FROM review_chainlink")
        (last_seq,) = cursor.fetchone()
    while True:
        with transaction.atomic(), connection.cursor() as cursor:
            cursor.execute("SET LOCAL timezone = 'UTC'; SET LOCAL extra_float_digits = 1")
            cursor.execute(
                "SELECT seq, event_table, event_id, payload_sha256, prev_hash, hash "
                "FROM review_chainlink WHERE seq > %s ORDER BY seq LIMIT %s",
                [walk.seq, batch],
            )
            links = cursor.fetchall()
            if not links:
                break
            by_table: dict[str, list[int]] = {}
            for _, table, event_id, *_ in links:
                by_table.setdefault(table, []).append(event_id)
            current = {t: _digests(cursor, t, ids) for t, ids in by_table.items() if t in known}
        for seq, table, event_id, payload, prev_hash, hash_ in links:
            where = f"link {seq} ({table} event {event_id})"
            if prev_hash != walk.prev:
                walk.report(f"{where} does not follow link {walk.seq}")
            if hash_ != link_hash(prev_hash, payload):
                walk.report(f"{where} has a wrong hash")
            digest = current.get(table, {}).get(event_id)
            if digest is None:
                walk.report(f"{where}: the event row is missing")
            elif digest != payload:
                walk.report(f"{where}: the event row was altered")
            walk.seq, walk.prev = seq, hash_
        walk.checked += len(links)
        del links, current, by_table
        if after_batch is not None:
            after_batch(walk, max(last_seq, walk.seq))
    return walk


def unlinked_events(tables: list[str]) -> tuple[list[str], int]:
    """Disarmed chain triggers, events with no link, staged events never linked: the first
    MAX_PROBLEMS of them, and how many there are in all."""
    found: list[str] = []
    total = 0
    with connection.cursor() as cursor:
        cursor.execute(
            "SELECT c.relname, t.tgname FROM pg_trigger t JOIN pg_class c ON c.oid = t.tgrelid "
            "WHERE t.tgname IN (%s, %s) AND t.tgenabled <> 'D'",
            [TRIGGER_NAME, COMMIT_TRIGGER_NAME],
        )
        armed = set(cursor.fetchall())
        disarmed = [
            f"table {t} has no enabled chain trigger"
            for t in tables
            if (t, TRIGGER_NAME) not in armed
        ]
        if (PENDING_TABLE, COMMIT_TRIGGER_NAME) not in armed:
            disarmed.append(f"table {PENDING_TABLE} has no enabled chain commit trigger")
        found.extend(disarmed)
        total += len(disarmed)
        for table in tables:
            cursor.execute(
                f'SELECT count(*) OVER (), pgh_id FROM "{table}" e WHERE NOT EXISTS '
                "(SELECT 1 FROM review_chainlink l WHERE l.event_table = %s "
                "AND l.event_id = e.pgh_id) ORDER BY pgh_id LIMIT %s",
                [table, MAX_PROBLEMS],
            )
            rows = cursor.fetchall()
            total += rows[0][0] if rows else 0
            found.extend(f"{table} event {pgh_id} is not in the chain" for _, pgh_id in rows)
        cursor.execute(
            f"SELECT count(*) OVER (), event_table, event_id FROM {PENDING_TABLE} "
            "WHERE txid <> txid_current() ORDER BY id LIMIT %s",
            [MAX_PROBLEMS],
        )
        rows = cursor.fetchall()
        total += rows[0][0] if rows else 0
        found.extend(
            f"{table} event {event_id} was staged but never linked (its commit trigger did not run)"
            for _, table, event_id in rows
        )
    return found[:MAX_PROBLEMS], total
