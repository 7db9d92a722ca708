"""The lighter review path (issue 10 item 2): a lodged revision may move to endorsed with an
"approved" signature straight after "authored", only when its site's change policy allows it
and every open change record of its process is light. Every other rule of both triggers is
kept. The signature trigger reads the oversight tables, hence the dependency."""

import pgtrigger.compiler
import pgtrigger.migrations
from django.db import migrations


class Migration(migrations.Migration):

    dependencies = [
        ('review', '0002_audit_chain'),
        ('oversight', '0001_initial'),
    ]

    operations = [
        pgtrigger.migrations.RemoveTrigger(
            model_name='processrevision',
            name='revision_guard_update',
        ),
        pgtrigger.migrations.RemoveTrigger(
            model_name='signature',
            name='signature_in_order',
        ),
        pgtrigger.migrations.AddTrigger(
            model_name='processrevision',
            trigger=pgtrigger.compiler.Trigger(name='revision_guard_update', sql=pgtrigger.compiler.UpsertTriggerSql(func="\n                    IF NEW.process_id IS DISTINCT FROM OLD.process_id\n                       OR NEW.number IS DISTINCT FROM OLD.number\n                       OR NEW.created_at IS DISTINCT FROM OLD.created_at\n                       OR NEW.created_by_id IS DISTINCT FROM OLD.created_by_id THEN\n                        RAISE EXCEPTION 'review: revision % keeps its identity', OLD.id;\n                    END IF;\n                    IF OLD.state <> 'drafting'\n                       AND (NEW.content IS DISTINCT FROM OLD.content\n                            OR NEW.content_sha256 IS DISTINCT FROM OLD.content_sha256) THEN\n                        RAISE EXCEPTION 'review: revision % is signed; its content is frozen',\n                            OLD.id;\n                    END IF;\n                    IF NEW.state IS DISTINCT FROM OLD.state\n                       AND (OLD.state, NEW.state) NOT IN (('drafting', 'lodged'), ('lodged', 'checked'), ('checked', 'endorsed'), ('lodged', 'endorsed'), ('lodged', 'sent_back'), ('checked', 'sent_back'), ('lodged', 'replaced'), ('checked', 'replaced'), ('endorsed', 'replaced'), ('drafting', 'replaced')) THEN\n                        RAISE EXCEPTION 'review: revision % cannot move from % to %',\n                            OLD.id, OLD.state, NEW.state;\n                    END IF;\n                    IF OLD.state = 'lodged' AND NEW.state = 'endorsed' AND (\n                        NOT EXISTS (SELECT 1 FROM review_signature\n                                     WHERE revision_id = OLD.id AND meaning = 'approved')\n                        OR EXISTS (SELECT 1 FROM review_signature\n                                    WHERE revision_id = OLD.id AND meaning = 'reviewed')) THEN\n                        RAISE EXCEPTION\n                            'review: revision % is endorsed from lodged only on the light path',\n                            OLD.id;\n                    END IF;\n                    RETURN NEW;\n                ", hash='55a12c5dea61242f837ce2ea1c876d55bdec5d9a', operation='UPDATE', pgid='pgtrigger_revision_guard_update_90825', table='review_processrevision', when='BEFORE')),
        ),
        pgtrigger.migrations.AddTrigger(
            model_name='signature',
            trigger=pgtrigger.compiler.Trigger(name='signature_in_order', sql=pgtrigger.compiler.UpsertTriggerSql(declare='DECLARE expected text; signed text;', func="\n                    SELECT CASE count(*) WHEN 0 THEN 'authored' WHEN 1 THEN 'reviewed'\n                                         WHEN 2 THEN 'approved' END\n                      INTO expected\n                      FROM review_signature WHERE revision_id = NEW.revision_id;\n                    IF expected = 'reviewed' AND NEW.meaning = 'approved'\n                       AND EXISTS (\n                           SELECT 1 FROM review_processrevision r\n                             JOIN hazards_process p ON p.id = r.process_id\n                             JOIN oversight_changepolicy cp ON cp.site_id = p.site_id\n                            WHERE r.id = NEW.revision_id AND r.state = 'lodged'\n                              AND cp.light_review_allowed)\n                       AND EXISTS (\n                           SELECT 1 FROM oversight_changerecord c\n                             JOIN review_processrevision r ON r.process_id = c.process_id\n                            WHERE r.id = NEW.revision_id AND c.state = 'open')\n                       AND NOT EXISTS (\n                           SELECT 1 FROM oversight_changerecord c\n                             JOIN review_processrevision r ON r.process_id = c.process_id\n                            WHERE r.id = NEW.revision_id AND c.state = 'open'\n                              AND (c.review_path <> 'light' OR c.class_changed)) THEN\n                        expected := 'approved';\n                    END IF;\n                    IF NEW.meaning IS DISTINCT FROM expected THEN\n                        RAISE EXCEPTION 'review: revision % expects a signature meaning %',\n                            NEW.revision_id, coalesce(expected, 'nothing more');\n                    END IF;\n                    SELECT content_sha256 INTO signed FROM review_processrevision\n                     WHERE id = NEW.revision_id;\n                    IF signed IS DISTINCT FROM NEW.content_sha256 THEN\n                        RAISE EXCEPTION 'review: a signature must bind the revision content';\n                    END IF;\n                    RETURN NEW;\n                ", hash='bb7180269fa4bdb7ffcd8645bb980e010f15b868', operation='INSERT', pgid='pgtrigger_signature_in_order_80d5f', table='review_signature', when='BEFORE')),
        ),
    ]
