"""The hash chain over every audit event, and the checks `manage.py verify` reports.

Every event is linked into one chain by the database at the COMMIT of its transaction
(`chain_sql.py`: hash = sha256(prev_hash || payload_sha256), payload_sha256 =
sha256(table ":" row JSON)). The trigger functions fix the time zone and float format they
render rows in, so the verifier renders each row identically whatever session wrote it.

The chain proves tampering only if its head is anchored outside the database's reach:
`head_hash()` is printed by `verify` and on every dossier.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

from django.apps import apps
from django.db import connection, connections, transaction
from pghistory.models import Event

from hazards.review.anchors import check_heads, dossier_heads, read_head_file
from hazards.review.chain_sql import (  # noqa: F401 - the chain's names live here too
    CHAIN_LOCK_KEY,
    COMMIT_TRIGGER_NAME,
    FUNCTIONS_SQL,
    GENESIS,
    PENDING_TABLE,
    TRIGGER_NAME,
    install_triggers,
    link_hash,
)
from hazards.review.chain_verify import (
    BATCH,
    Walk,
    load_checkpoint,
    save_checkpoint,
    unlinked_events,
    walk_chain,
)
from hazards.review.content import content_sha256
from hazards.review.models import ChainLink, RiskAcceptance, Signature
from hazards.review.signing import acceptance_seal_verifies, seal_verifies


def event_models() -> list:
    """Every concrete pghistory event model (one table each)."""
    return [
        m
        for m in apps.get_models()
        if issubclass(m, Event) and not m._meta.abstract and not m._meta.proxy and m._meta.managed
    ]


def _existing_tables(cursor, tables: list[str]) -> list[str]:
    cursor.execute(
        "SELECT relname FROM pg_class WHERE relkind = 'r' AND relname = ANY(%s)", [tables]
    )
    found = {row[0] for row in cursor.fetchall()}
    return [t for t in tables if t in found]


def existing_event_tables(cursor) -> list[str]:
    return _existing_tables(cursor, [m._meta.db_table for m in event_models()])


def install_chain_triggers(using: str = "default") -> list[str]:
    """(Re)install the chain's triggers on every event table; returns the tables covered."""
    with connections[using].cursor() as cursor:
        return install_triggers(cursor, existing_event_tables(cursor))


def install_chain_triggers_after_migrate(sender, using="default", **kwargs) -> None:
    install_chain_triggers(using=using)


def adopt_unlinked_events(using: str = "default") -> int:
    """Link the events that existed before the chain did (run once, by the migration, on
    the migrating connection: the owner's, which may not be the application's)."""
    count = 0
    with transaction.atomic(using=using), connections[using].cursor() as cursor:
        cursor.execute("SELECT pg_advisory_xact_lock(%s)", [CHAIN_LOCK_KEY])
        cursor.execute("SET LOCAL timezone = 'UTC'; SET LOCAL extra_float_digits = 1")
        for table in _existing_tables(cursor, [m._meta.db_table for m in event_models()]):
            cursor.execute(
                f'SELECT pgh_id, review_payload_digest(%s, row_to_json(e)) FROM "{table}" e '
                "WHERE NOT EXISTS (SELECT 1 FROM review_chainlink l "
                "WHERE l.event_table = %s AND l.event_id = e.pgh_id) ORDER BY pgh_id",
                [table, table],
            )
            for pgh_id, payload in cursor.fetchall():
                cursor.execute("SELECT hash FROM review_chainlink ORDER BY seq DESC LIMIT 1")
                row = cursor.fetchone()
                prev = row[0] if row else GENESIS
                cursor.execute(
                    "INSERT INTO review_chainlink (event_table, event_id, payload_sha256, "
                    "prev_hash, hash, linked_at) VALUES (%s, %s, %s, %s, %s, clock_timestamp())",
                    [table, pgh_id, payload, prev, link_hash(prev, payload)],
                )
                count += 1
    return count


def link_pending_now() -> None:
    """Link the events of the open transaction now rather than at its COMMIT.

    For a check that runs inside the transaction that wrote them (a test, `verify_all()`
    inside an atomic block); the transaction then holds the chain lock until it ends.
    """
    if not connection.in_atomic_block:
        return  # autocommit: every event is linked already
    with connection.cursor() as cursor:
        cursor.execute(f"SET CONSTRAINTS {TRIGGER_NAME} IMMEDIATE")
        cursor.execute(f"SET CONSTRAINTS {COMMIT_TRIGGER_NAME} IMMEDIATE")
        cursor.execute(f"SET CONSTRAINTS {TRIGGER_NAME}, {COMMIT_TRIGGER_NAME} DEFERRED")


def head_hash() -> str:
    """The hash of the newest chain link (hex); the genesis value when nothing is linked."""
    return ChainLink.objects.order_by("-seq").values_list("hash", flat=True).first() or GENESIS


@dataclass(frozen=True)
class Problem:
    kind: str
    message: str

    def __str__(self) -> str:
        return f"{self.kind}: {self.message}"


def verify_chain(
    *,
    head_files: Sequence[Path] = (),
    checkpoint: Path | None = None,
    progress: Callable[[Walk, int], None] | None = None,
    batch: int = BATCH,
) -> list[Problem]:
    """The chain link by link (bounded memory, resumable from `checkpoint`), every event
    linked, and the chain against every head it knows (dossiers and `head_files`)."""
    link_pending_now()
    with connection.cursor() as cursor:
        tables = existing_event_tables(cursor)
    walk = load_checkpoint(checkpoint) if checkpoint and checkpoint.exists() else Walk()

    def after_batch(state: Walk, last_seq: int) -> None:
        if checkpoint is not None:
            save_checkpoint(checkpoint, state)
        if progress is not None:
            progress(state, last_seq)

    walk = walk_chain(tables=tables, walk=walk, batch=batch, after_batch=after_batch)
    found = list(walk.problems)
    if walk.omitted:
        found.append(f"and {walk.omitted} more problems of links not listed")
    unlinked, total = unlinked_events(tables)
    found.extend(unlinked)
    if total > len(unlinked):
        found.append(f"and {total - len(unlinked)} more events not in the chain not listed")
    heads = dossier_heads()
    for path in head_files:
        file_heads, unreadable = read_head_file(Path(path))
        heads.extend(file_heads)
        found.extend(unreadable)
    found.extend(check_heads(heads))
    return [Problem("chain", message) for message in found]


def verify_signatures() -> list[Problem]:
    problems = []
    for sig in Signature.objects.select_related("revision", "signer").order_by("id"):
        rev = sig.revision
        where = (
            f"signature {sig.pk} ({sig.meaning} by {sig.printed_name}) of process "
            f"{rev.process_id} revision {rev.number}"
        )
        if sig.content_sha256 != rev.content_sha256:
            problems.append(Problem("signature", f"{where} is bound to other content"))
        if content_sha256(rev.content) != rev.content_sha256:
            problems.append(
                Problem(
                    "signature",
                    f"{where}: the revision content no longer hashes to what was signed",
                )
            )
        if not seal_verifies(sig):
            problems.append(Problem("seal", f"{where}: the seal does not verify"))
    for a in RiskAcceptance.objects.select_related("revision").order_by("id"):
        where = (f"risk acceptance {a.pk} by {a.printed_name} of process "
                 f"{a.revision.process_id} revision {a.revision.number}")
        if a.content_sha256 != a.revision.content_sha256:
            problems.append(Problem("signature", f"{where} is bound to other content"))
        if not acceptance_seal_verifies(a):
            problems.append(Problem("seal", f"{where}: the seal does not verify"))
    return problems


def _columns(cursor, table: str) -> list[str]:
    cursor.execute(
        "SELECT attname FROM pg_attribute WHERE attrelid = %s::regclass AND attnum > 0 "
        "AND NOT attisdropped ORDER BY attnum",
        [f'"{table}"'],
    )
    return [row[0] for row in cursor.fetchall()]


def verify_records() -> list[Problem]:
    """Records whose current content differs from their last audit event."""
    problems = []
    with connection.cursor() as cursor:
        for event_model in event_models():
            tracked = event_model.pgh_tracked_model
            if tracked is None or not any(f.name == "pgh_obj" for f in event_model._meta.fields):
                continue
            ev, obj = event_model._meta.db_table, tracked._meta.db_table
            pk = tracked._meta.pk.column
            obj_cols = set(_columns(cursor, obj))
            cols = [c for c in _columns(cursor, ev) if not c.startswith("pgh_") and c in obj_cols]
            if not cols:
                continue
            row_o = ", ".join(f'o."{c}"' for c in cols)
            row_e = ", ".join(f'e."{c}"' for c in cols)
            cursor.execute(
                f'SELECT o."{pk}", e.pgh_id FROM "{obj}" o LEFT JOIN LATERAL ('
                f'SELECT * FROM "{ev}" x WHERE x.pgh_obj_id = o."{pk}" '
                f"ORDER BY x.pgh_id DESC LIMIT 1) e ON TRUE "
                f"WHERE e.pgh_id IS NULL OR e.pgh_label = 'delete' "
                f"OR ROW({row_o}) IS DISTINCT FROM ROW({row_e}) ORDER BY 1"
            )
            for obj_pk, pgh_id in cursor.fetchall():
                what = (
                    "has no audit event"
                    if pgh_id is None
                    else (f"differs from its last audit event {pgh_id}")
                )
                problems.append(
                    Problem(
                        "record",
                        f"{tracked._meta.label} {obj_pk} {what} (a change that bypassed the trail)",
                    )
                )
            cursor.execute(
                f"SELECT l.pgh_obj_id FROM (SELECT DISTINCT ON (pgh_obj_id) pgh_obj_id, pgh_label "
                f'FROM "{ev}" ORDER BY pgh_obj_id, pgh_id DESC) l '
                f"WHERE l.pgh_label <> 'delete' AND NOT EXISTS "
                f'(SELECT 1 FROM "{obj}" o WHERE o."{pk}" = l.pgh_obj_id) ORDER BY 1'
            )
            for (obj_pk,) in cursor.fetchall():
                problems.append(
                    Problem(
                        "record",
                        f"{tracked._meta.label} {obj_pk} was deleted without an audit event",
                    )
                )
    return problems


def verify_all(**chain_options) -> list[Problem]:
    """Every check of `manage.py verify`; `chain_options` go to `verify_chain`."""
    link_pending_now()
    return [*verify_chain(**chain_options), *verify_signatures(), *verify_records()]
