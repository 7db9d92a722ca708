"""Histories are read a page at a time in SQL: every event once across the pages, newest
first, the same "from → to" as reading the whole trail, in a number of queries that does not
grow with the length of the trail."""

from __future__ import annotations

import json

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from rest_framework.utils.encoders import JSONEncoder

from hazards.models import Process
from hazards.review.selectors import process_history
from tests.review.conftest import client_for

pytestmark = pytest.mark.django_db


def _edit(process, times, start=0):
    for i in range(start, start + times):
        p = Process.objects.get(pk=process.pk)
        p.description = f"Revision of the description number {i}"
        p.save()


def _walk(client, url, link="next"):
    rows, queries = [], []
    while url:
        with CaptureQueriesContext(connection) as ctx:
            resp = client.get(url)
        assert resp.status_code == 200, resp.content
        body = resp.json()
        rows += body["results"]
        queries.append(len(ctx.captured_queries))
        url = body[link]
    return rows, queries


def test_pages_of_a_process_history_hold_every_event_once_with_its_changes(process, auditor):
    _edit(process, 60)
    # Reference: the whole trail read at once (the selector the pages replaced).
    whole = {row["event_id"]: row for row in process_history(process)}
    client = client_for(auditor)
    rows, queries = _walk(client, f"/api/v1/processes/{process.pk}/history/?limit=25")
    assert len(rows) == len(whole) and {r["event_id"] for r in rows} == set(whole)
    assert [r["at"] for r in rows] == sorted((r["at"] for r in rows), reverse=True)
    for row in rows:  # the previous event of a row on the next page still gives "from"
        expected = whole[row["event_id"]]
        assert row["changes"] == json.loads(json.dumps(expected["changes"], cls=JSONEncoder)), row[
            "event_id"
        ]
        assert (row["user"], row["reason"]) == (expected["user"], expected["reason"])
    edits = [r for r in rows if "description" in r["changes"] and r["action"] == "update"]
    assert edits[0]["changes"]["description"] == {
        "from": "Revision of the description number 58",
        "to": "Revision of the description number 59",
    }
    # `previous` walks back to the newest page.
    last = client.get(f"/api/v1/processes/{process.pk}/history/?limit=25").json()
    while last["next"]:
        last = client.get(last["next"]).json()
    back, _ = _walk(client, last["previous"], link="previous")
    assert len(back) + len(last["results"]) == len(rows)


def test_a_history_page_costs_the_same_queries_however_long_the_trail(process, auditor):
    client = client_for(auditor)
    url = f"/api/v1/processes/{process.pk}/history/?limit=10"
    _edit(process, 12)
    _, short = _walk(client, url)
    _edit(process, 40, start=12)
    _, long = _walk(client, url)
    assert len(long) > len(short)
    # Every page (first, middle, last) in the same bounded number of queries.
    assert max(long) <= max(short), (short, long)


def test_the_count_is_exact_up_to_the_bound_and_null_beyond(process, auditor, monkeypatch):
    from hazards import keyset

    client = client_for(auditor)
    body = client.get(f"/api/v1/processes/{process.pk}/history/?limit=5").json()
    assert body["count"] == len(process_history(process))
    monkeypatch.setattr(keyset, "COUNT_BOUND", 3)
    assert client.get(f"/api/v1/processes/{process.pk}/history/").json()["count"] is None


def test_a_foreign_cursor_is_refused_naming_the_field(process, auditor):
    resp = client_for(auditor).get(f"/api/v1/processes/{process.pk}/history/?cursor=older.xyz")
    assert resp.status_code == 400 and resp.json()["errors"][0]["field"] == "cursor"


def test_the_event_before_a_row_is_found_through_the_record_index(process):
    from django.db import transaction

    from hazards.review.selectors import event_model_for

    _edit(process, 3)
    events = event_model_for(Process).objects
    prev = events.filter(pgh_obj_id=process.pk, pgh_id__lt=10**9).order_by("-pgh_id")[:1]
    sql, params = prev.query.sql_with_params()
    with transaction.atomic(), connection.cursor() as cursor:
        for setting in ("enable_seqscan", "enable_bitmapscan", "enable_sort"):
            cursor.execute(f"SET LOCAL {setting} = off")  # as for a record of 50 000 events
        cursor.execute("EXPLAIN " + sql, params)
        plan = "\n".join(row[0] for row in cursor.fetchall())
    # Both conditions bound the index scan (record, event id): no event of the record is
    # read beyond the one wanted, and nothing is sorted.
    cond = [line for line in plan.splitlines() if "Index Cond" in line]
    assert cond and "pgh_obj_id" in cond[0] and "pgh_id <" in cond[0], plan
    assert "Sort" not in plan, plan


def _plan_without_sorting(sql, params) -> str:
    from django.db import transaction

    with transaction.atomic(), connection.cursor() as cursor:
        for setting in ("enable_seqscan", "enable_bitmapscan", "enable_sort"):
            cursor.execute(f"SET LOCAL {setting} = off")  # as for a trail of 50 000 events
        cursor.execute("EXPLAIN " + sql, params)
        return "\n".join(row[0] for row in cursor.fetchall())


@pytest.mark.parametrize("older_than_a_key", [False, True])
def test_a_history_page_reads_each_table_in_the_history_order_from_an_index(
    process, older_than_a_key
):
    """The newest (or next older) rows of the process's own events and of its steps' come from
    the (record, time, event id) and (process, time, event id) indexes: no sort of every
    event of a process with tens of thousands (the bench's long history)."""
    from hazards.models import ReactionStep
    from hazards.review import history
    from hazards.review.selectors import event_model_for

    _edit(process, 3)
    key = None
    if older_than_a_key:
        key = history.decode_key(history.history_page(history.process_sources(process),
                                                      limit=2).older)
    for model, condition in history.process_sources(process):
        if model not in (event_model_for(Process), event_model_for(ReactionStep)):
            continue
        qs = model.objects.filter(condition)
        if key is not None:
            qs = qs.filter(history._beyond(model._meta.label, key, older=True))
        page = qs.order_by("-pgh_created_at", "-pgh_id").values("pgh_id")[:51]
        plan = _plan_without_sorting(*page.query.sql_with_params())
        assert "Sort" not in plan and "Index" in plan, (model, plan)
