"""Keyset pages of the API lists: every row once, in the order offset paging gives, the cost of
page 1 on page 1000, a bounded count, a bounded offset, refused foreign cursors."""

from __future__ import annotations

import datetime as dt
from urllib.parse import parse_qs, urlsplit

import pytest
from django.db import connection, transaction

from hazards import keyset
from hazards import models as m
from hazards.api.pagination import MAX_OFFSET
from tests.factories import ProcessFactory, StepFactory

pytestmark = pytest.mark.django_db


@pytest.fixture
def steps():
    process = ProcessFactory()
    made = [StepFactory(process=process, sequence=i, name=f"Step {i % 4}") for i in range(1, 12)]
    # Ties in updated_at (as bulk writes make them): the primary key must break them.
    base = dt.datetime(2026, 1, 1, tzinfo=dt.UTC)
    for i, step in enumerate(made):
        m.ReactionStep.objects.filter(pk=step.pk).update(
            updated_at=base + dt.timedelta(minutes=i // 3)
        )
    return made


def _walk(api, url, link="next"):
    seen, pages = [], 0
    while url:
        resp = api.get(url)
        assert resp.status_code == 200, resp.content
        body = resp.json()
        seen += [row["id"] for row in body["results"]]
        url, pages = body[link], pages + 1
        assert pages < 50
    return seen


@pytest.mark.parametrize(
    "ordering", ["updated_at", "-updated_at", "name", "-name", "process,sequence", "-id"]
)
def test_following_next_visits_every_row_once_in_the_offset_order(api, steps, ordering):
    # Reference: the same list read in one page with an offset (the order DRF always gave).
    whole = api.get(f"/api/v1/steps/?ordering={ordering}&limit=100&offset=0").json()
    expected = [row["id"] for row in whole["results"]]
    assert len(expected) == 11
    first = api.get(f"/api/v1/steps/?ordering={ordering}&limit=4").json()
    assert "cursor=" in first["next"] and "offset=" not in first["next"]
    assert first["previous"] is None and first["count"] == 11
    assert _walk(api, f"/api/v1/steps/?ordering={ordering}&limit=4") == expected
    # And back: from the last page, `previous` walks to the first, every row once.
    last = api.get(f"/api/v1/steps/?ordering={ordering}&limit=4").json()
    while last["next"]:
        last = api.get(last["next"]).json()
    backwards = [row["id"] for row in last["results"]]
    url = last["previous"]
    while url:
        body = api.get(url).json()
        backwards = [row["id"] for row in body["results"]] + backwards
        url = body["previous"]
    assert backwards == expected


def test_a_cursor_of_another_ordering_or_a_forged_one_is_refused_naming_the_field(api, steps):
    nxt = api.get("/api/v1/steps/?ordering=name&limit=3").json()["next"]
    cursor = parse_qs(urlsplit(nxt).query)["cursor"][0]
    for query in (
        f"ordering=updated_at&cursor={cursor}",
        "cursor=bm90IGEgY3Vyc29y",
        "cursor=%%%",
        f"ordering=name&cursor={cursor}&offset=3",
    ):
        resp = api.get(f"/api/v1/steps/?{query}")
        assert resp.status_code == 400, query
        assert resp.json()["errors"][0]["field"] == "cursor", resp.json()


def test_offset_is_kept_for_clients_that_ask_but_bounded(api, steps):
    page = api.get("/api/v1/steps/?ordering=id&limit=4&offset=4").json()
    assert [r["id"] for r in page["results"]] == sorted(s.pk for s in steps)[4:8]
    assert "offset=8" in page["next"] and page["previous"]
    assert api.get(f"/api/v1/steps/?offset={MAX_OFFSET}").status_code == 200
    resp = api.get(f"/api/v1/steps/?offset={MAX_OFFSET + 1}")
    assert resp.status_code == 400 and resp.json()["errors"][0]["field"] == "offset"


def test_the_count_is_exact_up_to_the_bound_and_null_beyond(api, steps, monkeypatch):
    assert api.get("/api/v1/steps/?limit=2").json()["count"] == 11
    monkeypatch.setattr(keyset, "COUNT_BOUND", 10)
    body = api.get("/api/v1/steps/?limit=2").json()
    assert body["count"] is None and body["next"]
    assert api.get("/api/v1/steps/?limit=2&name=Step%201").json()["count"] == 3


def _plan(sql, params) -> str:
    with transaction.atomic(), connection.cursor() as cursor:
        # Discourage what a large table makes unattractive (reading it all, sorting it):
        # a Sort node then remains only where no index gives the ordering.
        for setting in ("enable_seqscan", "enable_bitmapscan", "enable_sort"):
            cursor.execute(f"SET LOCAL {setting} = off")
        cursor.execute("EXPLAIN " + sql, params)
        return "\n".join(row[0] for row in cursor.fetchall())


@pytest.mark.parametrize(
    ("ordering", "index"),
    [
        ("updated_at", "step_updated_idx"),
        ("-updated_at", "step_updated_idx"),
        ("name", "step_name_idx"),
        ("-name", "step_name_idx"),
    ],
)
def test_a_keyset_page_reads_the_index_of_its_ordering_without_sorting(steps, ordering, index):
    qs = m.ReactionStep.objects.order_by(ordering)
    keys = keyset.keys_of(qs)
    row = keyset.annotated(qs, keys).order_by(*(k.order() for k in keys))[3]
    after = keyset.values_of(row, keys)
    page_qs = (
        keyset.annotated(qs, keys)
        .filter(keyset.after_q(keys, after))
        .order_by(*(k.order() for k in keys))[:21]
    )
    plan = _plan(*page_qs.query.sql_with_params())
    assert index in plan, plan
    assert "Sort" not in plan, plan


def _list_views():
    """(path, view class) of every API list operation (a view answering GET with a list)."""
    from django.urls import get_resolver

    found = []

    def walk(patterns, prefix=""):
        for entry in patterns:
            if hasattr(entry, "url_patterns"):
                walk(entry.url_patterns, prefix + str(entry.pattern))
                continue
            cls = getattr(entry.callback, "cls", None)
            actions = getattr(entry.callback, "actions", None) or {}
            if cls is not None and actions.get("get") == "list":
                found.append((prefix + str(entry.pattern), cls))

    walk(get_resolver().url_patterns)
    return found


def test_every_api_list_pages_by_key_with_a_bounded_offset():
    """No list falls back to DRF's plain LimitOffsetPagination (an unbounded OFFSET and a
    COUNT of the whole table on every page)."""
    from django.conf import settings

    from hazards.api.pagination import StrictLimitOffsetPagination

    views = _list_views()
    assert len({cls for _, cls in views}) >= 12, views  # records, review, oversight, dossiers
    plain = sorted(
        {path for path, cls in views
         if cls.pagination_class is None
         or not issubclass(cls.pagination_class, StrictLimitOffsetPagination)}
    )
    assert plain == [], plain
    assert settings.REST_FRAMEWORK["DEFAULT_PAGINATION_CLASS"] == (
        "hazards.api.pagination.StrictLimitOffsetPagination")


def test_a_list_that_used_the_default_now_gives_a_cursor_and_refuses_a_far_offset(
    api, admin_user
):
    from hazards.review.models import ProcessRole

    for _ in range(3):
        ProcessRole.objects.create(process=ProcessFactory(), user=admin_user, role="reviewer")
    first = api.get("/api/v1/process-roles/?limit=2")
    assert first.status_code == 200, first.content
    assert "cursor=" in first.json()["next"]
    second = api.get(first.json()["next"])
    assert len(first.json()["results"]) + len(second.json()["results"]) >= 3
    far = api.get(f"/api/v1/process-roles/?offset={MAX_OFFSET + 1}")
    assert far.status_code == 400 and far.json()["errors"][0]["field"] == "offset"
