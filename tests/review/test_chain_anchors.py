"""A keyed, anchored audit chain (issue 18 item 5): whoever can rewrite the database can
rewrite an event and rehash every later link, or cut the tail, and the chain alone stays
internally consistent; `verify` finds both against the keyed heads it knows (dossiers and
head files written by `manage.py chain_head`), naming the last link up to which they agree.

The attacks run as a database superuser would, with `session_replication_role = replica`
(no triggers fire), as in the probe of issue 18. Common practice, no source: a keyed
hash (HMAC, RFC 2104) over the head of a hash chain, anchored outside the system, is the
usual way to make a log's tail and rewrites evident (Schneier & Kelsey 1999, "Secure audit
logs to support computer forensics", from memory)."""

from __future__ import annotations

import io
import json

import pytest
from django.core.management import call_command
from django.db import connection

from hazards.models import ReactionStep
from hazards.review import audit
from hazards.review.anchors import head_mac
from hazards.review.chain_sql import link_hash
from hazards.review.models import ChainLink

pytestmark = pytest.mark.django_db


def run(command: str, *args) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    try:
        call_command(command, *args, stdout=out, stderr=err)
        code = 0
    except SystemExit as exit_:
        code = exit_.code
    return code, out.getvalue(), err.getvalue()


def rename(step, name: str) -> None:
    step.name = name
    step.save()
    audit.link_pending_now()


def export_head(path) -> dict:
    audit.link_pending_now()
    code, out, _ = run("chain_head", "--append", str(path))
    assert code == 0
    return json.loads(path.read_text().splitlines()[-1])


def rewrite_event_and_rehash(table: str, event_id: int, name: str) -> None:
    """Alter an event and recompute its link and every later one, as an attacker would."""
    with connection.cursor() as cursor:
        cursor.execute("SET session_replication_role = replica")
        cursor.execute(f'UPDATE "{table}" SET name = %s WHERE pgh_id = %s', [name, event_id])
        cursor.execute("SET LOCAL timezone = 'UTC'; SET LOCAL extra_float_digits = 1")
        (seq,) = ChainLink.objects.filter(event_table=table, event_id=event_id).values_list(
            "seq", flat=True
        )
        prev = (
            ChainLink.objects.filter(seq__lt=seq)
            .order_by("-seq")
            .values_list("hash", flat=True)
            .first()
            or audit.GENESIS
        )
        for link in ChainLink.objects.filter(seq__gte=seq).order_by("seq"):
            cursor.execute(
                f"SELECT review_payload_digest(%s, row_to_json(e)) FROM "
                f'"{link.event_table}" e WHERE pgh_id = %s',
                [link.event_table, link.event_id],
            )
            payload = cursor.fetchone()[0]
            digest = link_hash(prev, payload)
            cursor.execute(
                "UPDATE review_chainlink SET payload_sha256 = %s, prev_hash = %s, "
                "hash = %s WHERE seq = %s",
                [payload, prev, digest, link.seq],
            )
            prev = digest
        cursor.execute("SET session_replication_role = DEFAULT")


def cut_tail_after(seq: int) -> None:
    with connection.cursor() as cursor:
        cursor.execute("SET session_replication_role = replica")
        for table, event_id in ChainLink.objects.filter(seq__gt=seq).values_list(
            "event_table", "event_id"
        ):
            cursor.execute(f'DELETE FROM "{table}" WHERE pgh_id = %s', [event_id])
        cursor.execute("DELETE FROM review_chainlink WHERE seq > %s", [seq])
        cursor.execute("SET session_replication_role = DEFAULT")


@pytest.fixture
def step(process):
    return ReactionStep.objects.get(process=process)


def test_a_rewritten_and_rehashed_history_is_found_against_an_exported_head(step, tmp_path):
    heads = tmp_path / "heads.jsonl"
    rename(step, "Nitration, first charge")
    first = export_head(heads)
    rename(step, "Nitration, second charge")
    rename(step, "Nitration, third charge")
    export_head(heads)
    table = step.events.model._meta.db_table
    second = step.events.get(name="Nitration, second charge")  # after the first head
    rewrite_event_and_rehash(table, second.pgh_id, "Rewritten behind the trail")

    # Internally consistent: without the heads, the rewrite is invisible (as before).
    assert audit.verify_chain() == []
    code, _, err = run("verify", "--heads", str(heads))

    assert code == 1
    assert "(rewritten)" in err
    first_link = ChainLink.objects.get(seq=first["seq"])
    assert (
        f"disagree after link {first['seq']} ({first_link.event_table} event {first_link.event_id})"
    ) in err


def test_a_cut_tail_is_found_against_an_exported_head(step, tmp_path):
    heads = tmp_path / "heads.jsonl"
    rename(step, "Before the cut")
    kept = export_head(heads)
    rename(step, "Cut away 1")
    rename(step, "Cut away 2")
    last = export_head(heads)
    cut_tail_after(kept["seq"])
    with connection.cursor() as cursor:  # the record back as it was: only the chain speaks
        cursor.execute("SET session_replication_role = replica")
        cursor.execute(
            "UPDATE hazards_reactionstep SET name = 'Before the cut' WHERE id = %s", [step.pk]
        )
        cursor.execute("SET session_replication_role = DEFAULT")

    assert audit.verify_chain() == []  # the chain alone shows nothing (before this change)
    code, _, err = run("verify", "--heads", str(heads))

    assert code == 1
    assert f"names link {last['seq']} but the chain ends at link {kept['seq']} (a cut tail)" in err
    assert f"disagree after link {kept['seq']} " in err


def test_a_dossier_head_anchors_the_chain_without_any_file(step, author):
    from hazards.dossier.services import dossier_request

    rename(step, "Before the dossier")
    dossier, _ = dossier_request(process=step.process, requested_by=author, enqueue=False)
    head = dossier.content["context"]["audit_head"]
    assert head["hash"] == dossier.content["context"]["audit_head_hash"]
    assert head["mac"] == head_mac(head["seq"], head["hash"])
    assert audit.verify_all() == []
    audit.link_pending_now()
    table = step.events.model._meta.db_table
    early = step.events.order_by("pgh_id").first()
    rewrite_event_and_rehash(table, early.pgh_id, "Rewritten before the dossier")

    problems = [p.message for p in audit.verify_all()]

    assert any(
        f"the head of dossier {dossier.pk} " in p and "(rewritten)" in p for p in problems
    ), problems


def test_a_head_without_this_systems_key_mark_is_refused(step, tmp_path):
    heads = tmp_path / "heads.jsonl"
    good = export_head(heads)
    forged = {**good, "mac": "0" * 64}
    heads.write_text(json.dumps(forged) + "\nnot a head\n")

    problems = [p.message for p in audit.verify_chain(head_files=[heads])]

    assert any("does not carry this system's key mark" in p for p in problems), problems
    assert any(p.endswith("line 2 is not a head") for p in problems), problems


def test_the_head_printed_and_exported_is_keyed_and_verifies(step, tmp_path, settings):
    heads = tmp_path / "heads.jsonl"
    head = export_head(heads)
    assert head["mac"] == head_mac(head["seq"], head["hash"])
    code, out, _ = run("verify", "--heads", str(heads))
    assert code == 0
    assert f"head {head['hash']} (link {head['seq']}, key mark {head['mac']})" in out
    # Another installation's key (or none) cannot vouch for this chain.
    settings.SIGNATURE_SEAL_KEY = "another installation's key"
    code, _, err = run("verify", "--heads", str(heads))
    assert code == 1 and "does not carry this system's key mark" in err
