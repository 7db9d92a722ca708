"""An approval stays in force until a later revision is endorsed (issue 21 item 2).

Before this change an edit after an endorsement marked the endorsed revision "replaced", and
such a process had no approved assessment at all although nobody had approved anything
newer. For each process without an endorsed revision whose newest approved revision was
replaced that way, the approval is put back in force: its state returns to endorsed, with a
transition row that says why (the audit trail records the update as any other). A revision
replaced because a later one was endorsed stays replaced; so does everything never approved.
The state guard is bypassed for this one update only.
"""

import pgtrigger
from django.db import migrations

RESTORED = (
    "Back in force: an endorsed revision stays in force until a later revision is "
    "endorsed; it had been marked replaced by a change to the process (issue 21)."
)


def restore_in_force(apps, schema_editor):
    ProcessRevision = apps.get_model("review", "ProcessRevision")
    Signature = apps.get_model("review", "Signature")
    Transition = apps.get_model("review", "Transition")
    with_endorsed = set(
        ProcessRevision.objects.filter(state="endorsed").values_list("process_id", flat=True)
    )
    newest_approved = {}
    for revision_id, process_id, _number in (
        Signature.objects.filter(meaning="approved")
        .values_list("revision_id", "revision__process_id", "revision__number")
        .order_by("revision__process_id", "revision__number")
    ):
        newest_approved[process_id] = revision_id
    for process_id, revision_id in sorted(newest_approved.items()):
        if process_id in with_endorsed:
            continue
        revision = ProcessRevision.objects.get(pk=revision_id)
        if revision.state != "replaced":
            continue
        with pgtrigger.ignore("review.ProcessRevision:revision_guard_update"):
            ProcessRevision.objects.filter(pk=revision_id).update(state="endorsed")
        with schema_editor.connection.cursor() as cursor:
            cursor.execute("SELECT statement_timestamp()")
            now = cursor.fetchone()[0]
        Transition.objects.create(
            revision_id=revision_id,
            from_state="replaced",
            to_state="endorsed",
            actor=None,
            reason=RESTORED,
            at=now,
        )


class Migration(migrations.Migration):
    dependencies = [
        ("review", "0007_in_force_until_replaced"),
    ]

    operations = [
        migrations.RunPython(restore_in_force, migrations.RunPython.noop),
    ]
