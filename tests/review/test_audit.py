"""The audit trail: every write path leaves an event with old and new values; events are
append-only; the hash chain and `manage.py verify` report what bypassed or altered it."""

from __future__ import annotations

import io

import pghistory
import pgtrigger
import pytest
from django.core.management import call_command
from django.db import connection, transaction
from django.db.utils import DatabaseError

from hazards.models import ReactionStep
from hazards.review import audit
from hazards.review.models import ChainLink, ProcessRevision, Signature
from hazards.review.selectors import event_model_for, record_history
from tests.review.factories import revision_in

pytestmark = pytest.mark.django_db


def run_verify() -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    try:
        call_command("verify", stdout=out, stderr=err)
        code = 0
    except SystemExit as exit_:
        code = exit_.code
    return code, out.getvalue(), err.getvalue()


def masses(step) -> list[tuple]:
    rows = [r for r in record_history(step) if "reaction_mass_kg" in r["changes"]]
    return [
        (
            r["changes"]["reaction_mass_kg"]["from"],
            r["changes"]["reaction_mass_kg"]["to"],
            r["reason"],
        )
        for r in rows
    ]


def test_orm_saves_queryset_updates_and_raw_sql_all_appear_with_old_and_new_values(process):
    step = ReactionStep.objects.get(process=process)
    with pghistory.context(reason="orm save"):
        step.reaction_mass_kg = 4000.0
        step.save()
    with pghistory.context(reason="bulk update"):
        ReactionStep.objects.filter(pk=step.pk).update(reaction_mass_kg=3000.0)
    with pghistory.context(reason="raw sql"), connection.cursor() as cursor:
        cursor.execute(
            "UPDATE hazards_reactionstep SET reaction_mass_kg = 2000 WHERE id = %s", [step.pk]
        )
        cursor.execute("SELECT 1")
    from hazards.services.indicators import flush_pending

    flush_pending()

    assert masses(step) == [
        (None, 5000.0, ""),
        (5000.0, 4000.0, "orm save"),
        (4000.0, 3000.0, "bulk update"),
        (3000.0, 2000.0, "raw sql"),
    ]


def test_audit_events_cannot_be_updated_or_deleted(process):
    event_model = event_model_for(ReactionStep)
    event = event_model.objects.first()
    audit.link_pending_now()  # links are written at COMMIT; this test's transaction never ends
    with pytest.raises(DatabaseError), transaction.atomic():
        event_model.objects.filter(pk=event.pk).update(name="rewritten")
    with pytest.raises(DatabaseError), transaction.atomic():
        event_model.objects.filter(pk=event.pk).delete()
    with pytest.raises(DatabaseError), transaction.atomic():
        ChainLink.objects.filter(seq=ChainLink.objects.first().seq).update(hash="0" * 64)


def test_every_event_is_linked_into_one_chain_whose_head_verify_prints(process, author):
    revision_in(process, "lodged", author=author)

    code, out, err = run_verify()

    assert code == 0, err
    head = audit.head_hash()
    assert len(head) == 64 and head != audit.GENESIS
    assert f"head {head}" in out
    tables = {m._meta.db_table for m in audit.event_models()}
    counted = sum(m.objects.count() for m in audit.event_models())
    assert ChainLink.objects.filter(event_table__in=tables).count() == counted


def test_raw_sql_on_a_signed_revision_with_its_trigger_ignored_is_reported(process, author):
    lodged = revision_in(process, "lodged", author=author)
    with pgtrigger.ignore("review.ProcessRevision:revision_guard_update"):
        with connection.cursor() as cursor:
            cursor.execute(
                "UPDATE review_processrevision SET content = jsonb_set(content, "
                "'{process,name}', '\"Edited behind the trail\"') WHERE id = %s",
                [lodged.pk],
            )

    code, out, err = run_verify()

    assert code == 1
    assert (
        f"process {process.pk} revision {lodged.number}: the revision content no longer "
        "hashes to what was signed" in err
    )


def test_a_table_with_its_triggers_disabled_is_reported_as_bypassing_the_trail(process, author):
    lodged = revision_in(process, "lodged", author=author)
    with connection.cursor() as cursor:
        cursor.execute("SET CONSTRAINTS ALL IMMEDIATE")  # no pending FK checks
        cursor.execute("ALTER TABLE review_processrevision DISABLE TRIGGER ALL")
        cursor.execute(
            "UPDATE review_processrevision SET content_sha256 = %s WHERE id = %s",
            ["f" * 64, lodged.pk],
        )
        cursor.execute("ALTER TABLE review_processrevision ENABLE TRIGGER ALL")

    code, _, err = run_verify()

    assert code == 1
    assert f"review.ProcessRevision {lodged.pk} differs from its last audit event" in err
    assert "is bound to other content" in err


def test_a_signature_edited_outside_the_application_fails_its_seal(process, author):
    signature = revision_in(process, "lodged", author=author).signatures.get()
    with connection.cursor() as cursor:
        cursor.execute("SET session_replication_role = replica")  # no triggers fire
        cursor.execute(
            "UPDATE review_signature SET printed_name = 'Someone Else' WHERE id = %s",
            [signature.pk],
        )
        cursor.execute("SET session_replication_role = DEFAULT")

    code, _, err = run_verify()

    assert code == 1
    assert f"signature {signature.pk} (authored by Someone Else)" in err
    assert "the seal does not verify" in err
    assert f"review.Signature {signature.pk} differs from its last audit event" in err


def test_an_altered_event_row_breaks_its_chain_link(process):
    step = ReactionStep.objects.get(process=process)
    table = event_model_for(ReactionStep)._meta.db_table
    with connection.cursor() as cursor:
        cursor.execute("SET CONSTRAINTS ALL IMMEDIATE")
        cursor.execute(f"ALTER TABLE {table} DISABLE TRIGGER ALL")
        cursor.execute(f"UPDATE {table} SET name = 'rewritten' WHERE pgh_obj_id = %s", [step.pk])
        cursor.execute(f"ALTER TABLE {table} ENABLE TRIGGER ALL")

    code, _, err = run_verify()

    assert code == 1
    assert f"({table} event" in err and "the event row was altered" in err


def test_an_event_inserted_with_the_chain_trigger_disabled_is_not_in_the_chain(process):
    step = ReactionStep.objects.get(process=process)
    table = event_model_for(ReactionStep)._meta.db_table
    with connection.cursor() as cursor:
        cursor.execute("SET CONSTRAINTS ALL IMMEDIATE")
        cursor.execute(f"ALTER TABLE {table} DISABLE TRIGGER {audit.TRIGGER_NAME}")
        cursor.execute("SET CONSTRAINTS ALL DEFERRED")
    step.name = "Renamed while the chain looked away"
    step.save()

    code, _, err = run_verify()

    assert code == 1
    assert f"table {table} has no enabled chain trigger" in err
    assert "is not in the chain" in err


def test_verify_passes_on_an_untouched_trail_and_counts_signatures(
    process, author, reviewer, approver
):
    revision_in(process, "endorsed", author=author, reviewer=reviewer, approver=approver)
    assert Signature.objects.count() == 3
    assert ProcessRevision.objects.get().state == "endorsed"

    assert audit.verify_all() == []
