"""The database side of the audit hash chain: events are linked at COMMIT, in order.

A link is hash = sha256(prev_hash || payload_sha256), payload_sha256 = sha256(table ":" row
JSON), rendered with a fixed time zone and float format so that the verifier renders each row
identically whatever session wrote it.

Linking happens in two rounds of PostgreSQL's deferred triggers at COMMIT:

1. `review_chain_link` (a deferred constraint trigger on every event table) stages each event
   of the transaction in `review_chainpending` with its digest. No lock is taken.
2. Each staged row queues `review_chain_commit` (a deferred constraint trigger on
   `review_chainpending`). PostgreSQL fires deferred triggers in passes: triggers queued
   while a pass runs fire in the next pass, after every deferred check the transaction body
   queued (foreign keys, the recompute guard). The first firing takes
   `pg_advisory_xact_lock(CHAIN_LOCK_KEY)`, appends the transaction's staged events in the
   order they were inserted and deletes them from the stage; the rest find nothing to do.

So the serialised section is the append and the COMMIT itself, not the transaction body
(the indicator recompute, row locks, foreign-key checks): a transaction holding the chain
lock waits for no row lock, which removes the deadlock between the chain lock and a
transaction that locks rows FOR UPDATE before it writes. Nothing commits without its links:
the links are written by the committing transaction itself. Chain order is commit order
between transactions and insertion order within one. A transaction that makes its
constraints IMMEDIATE links at that point and keeps the lock to its COMMIT, as before.

The key of the chain never enters the database: the keyed heads are in `anchors.py`.
"""

from __future__ import annotations

import hashlib

CHAIN_LOCK_KEY = 7_345_012_026
GENESIS = "0" * 64
TRIGGER_NAME = "review_chain_link"
COMMIT_TRIGGER_NAME = "review_chain_commit"
PENDING_TABLE = "review_chainpending"

FUNCTIONS_SQL = f"""
CREATE OR REPLACE FUNCTION review_payload_digest(tbl text, payload json) RETURNS text
LANGUAGE sql IMMUTABLE AS $$
    SELECT encode(sha256(convert_to(tbl || ':' || payload::text, 'UTF8')), 'hex')
$$;

CREATE OR REPLACE FUNCTION review_chain_stage() RETURNS trigger
LANGUAGE plpgsql SET timezone = 'UTC' SET extra_float_digits = 1 AS $$
BEGIN
    INSERT INTO {PENDING_TABLE} (txid, event_table, event_id, payload_sha256)
    VALUES (txid_current(), TG_TABLE_NAME, NEW.pgh_id,
            review_payload_digest(TG_TABLE_NAME, row_to_json(NEW)));
    RETURN NULL;
END
$$;

CREATE OR REPLACE FUNCTION review_chain_commit() RETURNS trigger
LANGUAGE plpgsql AS $$
DECLARE
    prev text;
    staged record;
BEGIN
    IF NOT EXISTS (SELECT 1 FROM {PENDING_TABLE} WHERE txid = txid_current()) THEN
        RETURN NULL;  -- an earlier firing of this transaction linked them all
    END IF;
    PERFORM pg_advisory_xact_lock({CHAIN_LOCK_KEY});
    SELECT hash INTO prev FROM review_chainlink ORDER BY seq DESC LIMIT 1;
    prev := coalesce(prev, repeat('0', 64));
    FOR staged IN
        WITH gone AS (DELETE FROM {PENDING_TABLE} WHERE txid = txid_current()
                      RETURNING id, event_table, event_id, payload_sha256)
        SELECT * FROM gone ORDER BY id
    LOOP
        INSERT INTO review_chainlink (event_table, event_id, payload_sha256, prev_hash, hash,
                                      linked_at)
        VALUES (staged.event_table, staged.event_id, staged.payload_sha256, prev,
                encode(sha256(convert_to(prev || staged.payload_sha256, 'UTF8')), 'hex'),
                clock_timestamp())
        RETURNING hash INTO prev;
    END LOOP;
    RETURN NULL;
END
$$;
"""

DROP_FUNCTIONS_SQL = """
DROP FUNCTION IF EXISTS review_chain_commit() CASCADE;
DROP FUNCTION IF EXISTS review_chain_stage() CASCADE;
"""


def link_hash(prev_hash: str, payload_sha256: str) -> str:
    """What the commit trigger computes for a link, in Python (for the verifier)."""
    return hashlib.sha256((prev_hash + payload_sha256).encode("ascii")).hexdigest()


def _constraint_trigger_sql(table: str, name: str, function: str) -> str:
    return (
        f'CREATE CONSTRAINT TRIGGER {name} AFTER INSERT ON "{table}" '
        f"DEFERRABLE INITIALLY DEFERRED FOR EACH ROW EXECUTE FUNCTION {function}()"
    )


def install_triggers(cursor, tables: list[str]) -> list[str]:
    """The staging trigger on each event table and the commit trigger on the stage; a plain
    trigger of the same name (the chain before it linked at commit) is replaced."""
    cursor.execute("SELECT to_regproc('review_chain_stage') IS NOT NULL")
    if not cursor.fetchone()[0]:
        return []
    wanted = [(t, TRIGGER_NAME, "review_chain_stage") for t in tables]
    wanted.append((PENDING_TABLE, COMMIT_TRIGGER_NAME, "review_chain_commit"))
    for table, name, function in wanted:
        cursor.execute(
            "SELECT t.tgconstraint <> 0 FROM pg_trigger t WHERE t.tgrelid = %s::regclass "
            "AND t.tgname = %s",
            [f'"{table}"', name],
        )
        row = cursor.fetchone()
        if row and row[0]:
            continue
        if row:
            cursor.execute(f'DROP TRIGGER {name} ON "{table}"')
        cursor.execute(_constraint_trigger_sql(table, name, function))
    return tables
