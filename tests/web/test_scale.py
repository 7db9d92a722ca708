"""The start page and the step list read classes with grouped queries and joins: their query
count does not grow with the number of steps, the class column is a join (no subquery per
row), the class filter a range of the current-snapshot class index."""

from __future__ import annotations

from collections import Counter

import pytest
from django.db import connection, transaction
from django.db.models import F

from hazards.models import IndicatorSnapshot, ReactionStep
from hazards.review.models import ProcessRole
from hazards.web import selectors
from tests.factories import ProcessFactory, StepFactory

pytestmark = pytest.mark.django_db


def _more_processes(people, n, steps_each=2):
    for _ in range(n):
        process = ProcessFactory()
        ProcessRole.objects.create(process=process, user=people["reviewer"], role="reviewer")
        for i in range(1, steps_each + 1):
            StepFactory(process=process, sequence=i)


def _reference_counts(user):
    """The counts the way the page used to make them: every step's class, in Python."""
    steps = {s.pk: s.process_id for s in selectors.visible(user, ReactionStep.objects.all())}
    klass = dict(
        IndicatorSnapshot.objects.filter(step_id__in=steps, is_current=True).values_list(
            "step_id", "criticality_class"
        )
    )
    per_step = Counter(klass.get(pk) for pk in steps)
    worst: dict = {}
    for pk, pid in steps.items():
        k = klass.get(pk)
        if k is not None and (worst.get(pid) is None or k > worst[pid]):
            worst[pid] = k
        else:
            worst.setdefault(pid, None)
    return per_step, Counter(worst.values())


def test_class_counts_are_one_grouped_query_that_agrees_with_counting_in_python(
    people, process, django_assert_max_num_queries
):
    _more_processes(people, 6, steps_each=3)
    user = people["reviewer"]
    per_step, per_process = _reference_counts(user)
    with django_assert_max_num_queries(1) as captured:
        rows = selectors.class_counts(user)
    # read from the per-process counts, not from every step's snapshot
    assert "hazards_processclasstally" in captured[0]["sql"]
    assert "hazards_indicatorsnapshot" not in captured[0]["sql"]
    assert {r["klass"]: r["count"] for r in rows} == {
        k: per_step.get(k, 0) for k in (5, 4, 3, 2, 1, None)
    }
    assert {r["klass"]: r["processes"] for r in rows} == {
        k: per_process.get(k, 0) for k in (5, 4, 3, 2, 1, None)
    }
    assert sum(r["count"] for r in selectors.class_counts(people["outsider"])) == 0


def _truth() -> dict:
    from hazards.services.indicators import CLASS_COUNTS_SQL

    with connection.cursor() as cursor:
        cursor.execute(CLASS_COUNTS_SQL)
        return {(p, k): n for p, k, n in cursor.fetchall()}


def _kept() -> dict:
    from hazards.models import ProcessClassTally

    return {(t.process_id, k): n for t in ProcessClassTally.objects.all()
            for k, n in t.counts().items()}


def test_the_kept_class_counts_follow_every_change_of_a_current_class():
    """Snapshots renewed, classes changing, steps deleted and moved, processes deleted,
    forced recomputes: the counts the trigger keeps equal a recount after each."""
    from hazards.demo import load_demo
    from hazards.models import DecompositionTest, Process
    from hazards.services.indicators import (
        class_counts_rebuild,
        flush_pending,
        recompute_steps,
    )

    load_demo()  # every class 1-5 and one step without a class (tests/indicators)
    truth = _truth()
    assert {k for _, k in truth} == {0, 1, 2, 3, 4, 5} and _kept() == truth
    before = dict(truth)
    # a lower onset moves steps to a higher class
    with transaction.atomic():
        DecompositionTest.objects.update(onset_temperature_k=F("onset_temperature_k") - 80)
        flush_pending()
    assert _truth() != before and _kept() == _truth()
    steps = list(ReactionStep.objects.order_by("pk"))
    with transaction.atomic():
        recompute_steps([s.pk for s in steps], force=True)
    assert _kept() == _truth()
    with transaction.atomic():
        ReactionStep.objects.filter(pk=steps[0].pk).update(process=steps[-1].process,
                                                           sequence=999)
        flush_pending()
    assert _kept() == _truth()
    steps[1].delete()
    assert _kept() == _truth()
    doomed = StepFactory().process  # a process without revisions may be deleted
    StepFactory(process=doomed, sequence=2)
    assert _kept() == _truth() and any(p == doomed.pk for p, _ in _kept())
    Process.objects.filter(pk=doomed.pk).delete()
    assert _kept() == _truth()
    assert class_counts_rebuild() == 0  # nothing to repair
    from hazards.models import ProcessClassTally

    ProcessClassTally.objects.filter(pk=ProcessClassTally.objects.values("pk")[:1]).update(
        class_5=99)
    assert class_counts_rebuild() == 1 and _kept() == _truth()


def _page_queries(client, url):
    from django.test.utils import CaptureQueriesContext

    with CaptureQueriesContext(connection) as ctx:
        resp = client.get(url)
    assert resp.status_code == 200
    return len(ctx.captured_queries)


@pytest.mark.parametrize(
    "url",
    [
        "/",
        "/steps/",
        "/steps/?sort=-klass",
        "/steps/?klass=2",
        "/steps/?sort=-updated",
        "/processes/?sort=state",
    ],
)
def test_the_start_page_and_lists_cost_the_same_queries_with_more_steps(
    people, process, client_as, url
):
    client = client_as(people["reviewer"])
    _more_processes(people, 2)
    small = _page_queries(client, url)
    _more_processes(people, 10)
    assert _page_queries(client, url) <= small, url


def test_the_class_column_and_sort_are_a_join_not_a_subquery_per_row(people):
    qs = selectors.steps_with_class(people["reviewer"]).order_by("-klass")
    sql = str(qs.query)
    assert 'INNER JOIN "hazards_indicatorsnapshot" current' in sql, sql
    # Only the role check is a nested SELECT (a semi-join on the reviewer's roles).
    assert sql.count("SELECT") == 2, sql


def _statistics_tables() -> list[str]:
    from hazards.models import IndicatorSnapshot, Process, ProcessClassTally, ReactionStep
    from hazards.review.models import ProcessListState, ProcessRole

    return [m._meta.db_table for m in (ReactionStep, IndicatorSnapshot, Process,
                                       ProcessClassTally, ProcessRole, ProcessListState)]


def _analyse() -> None:
    """Fresh planner statistics of the tables these plans read: without them the planner's
    default guesses, or an autovacuum ANALYZE of rows earlier tests left, decide between
    plans that cost the same on tables of a test's size, and a plan test passes or fails by
    the order tests ran in."""
    with connection.cursor() as cursor:
        cursor.execute("ANALYZE " + ", ".join(_statistics_tables()))


def _plan(qs) -> str:
    sql, params = qs.query.sql_with_params()
    _analyse()
    with transaction.atomic(), connection.cursor() as cursor:
        for setting in ("enable_seqscan", "enable_bitmapscan"):
            cursor.execute(f"SET LOCAL {setting} = off")  # as on a large table
        cursor.execute("EXPLAIN " + sql, params)
        return "\n".join(row[0] for row in cursor.fetchall())


@pytest.mark.parametrize("sort", ["-klass", "klass"])
def test_a_page_sorted_by_class_reads_the_class_index_and_sorts_nothing(people, process, sort):
    from hazards import keyset
    from hazards.web.lists import STEP_SORTS

    _more_processes(people, 2)
    qs = selectors.steps_with_class(people["reviewer"]).order_by(*STEP_SORTS[sort][1])
    keys = keyset.keys_of(qs)
    page = keyset.annotated(qs, keys).order_by(*(k.order() for k in keys))[:21]
    sql, params = page.query.sql_with_params()
    _analyse()
    with transaction.atomic(), connection.cursor() as cursor:
        for setting in ("enable_seqscan", "enable_bitmapscan", "enable_sort"):
            cursor.execute(f"SET LOCAL {setting} = off")  # as on a large table
        cursor.execute("EXPLAIN " + sql, params)
        plan = "\n".join(row[0] for row in cursor.fetchall())
    assert "snapshot_class_step_idx" in plan and "Sort" not in plan, plan


@pytest.mark.parametrize("klass", [3, None])
def test_the_class_filter_is_a_condition_on_the_joined_current_snapshot(people, process, klass):
    """The step list's class filter (and its bounded count) is a condition on the class of
    the current snapshot already joined for the list: no second semi-join over every
    snapshot of that class. Which index PostgreSQL then reads is the planner's choice by
    the table's size: on a test's few rows it probes per step or scans the current rows,
    equally cheap, and a plan assertion here passed or failed by the statistics earlier
    tests left; at 50 000 steps it reads a range of snapshot_class_step_idx (EXPLAIN in the
    README's Evidence, 0.5 ms), which the scale benchmark measures."""
    _more_processes(people, 2)
    qs = selectors.steps_with_class(people["reviewer"])
    qs = qs.filter(klass__isnull=True) if klass is None else qs.filter(klass=klass)
    sql = str(qs.order_by()[:1001].query)
    wanted = ('current."criticality_class" IS NULL' if klass is None
              else 'current."criticality_class" = 3')
    assert wanted in sql, sql
    assert sql.count('"hazards_indicatorsnapshot"') == 1, sql  # the one join, nothing more
    assert sql.count("SELECT") == 2, sql  # only the role check is nested
    # and the page's rows are those of that class
    rows = list(qs.order_by("pk"))
    assert all(r.klass == klass for r in rows)


def test_the_step_page_draws_its_charts_once_per_set_of_inputs(
    people, step, client_as, monkeypatch
):
    from django.core.cache import caches

    from hazards.dossier import charts

    caches["charts"].clear()
    drawn = []
    real = charts.step_charts
    monkeypatch.setattr(charts, "step_charts", lambda *a, **k: drawn.append(1) or real(*a, **k))
    client = client_as(people["reviewer"])
    first = client.get(f"/steps/{step.pk}/").content.decode()
    assert drawn == [1] and "data:image/svg+xml;base64," in first
    again = client.get(f"/steps/{step.pk}/").content.decode()
    assert drawn == [1] and again.count("data:image/svg+xml") == first.count("data:image/svg+xml")
    step.reaction_mass_kg *= 1.2  # new inputs, new numbers: drawn again
    step.save()
    client.get(f"/steps/{step.pk}/")
    assert drawn == [1, 1]


def test_the_start_page_reads_flagged_steps_and_live_counts_from_their_indexes(people, process):
    """Approvals that no longer hold: only the flagged steps (was a walk over every visible
    step); class counts: an index-only read of a person's processes' rows."""
    _more_processes(people, 2)
    stale = _plan(selectors.stale_approvals(people["reviewer"])[:50])
    assert "step_needs_review_idx" in stale, stale
    # The class counts: one row per process, its counts in columns no index holds, and the
    # person's processes from the (user, role, process) index of the roles.
    with connection.cursor() as cursor:
        cursor.execute("SELECT indexname FROM pg_indexes WHERE tablename = %s",
                       ["hazards_processclasstally"])
        assert [name for (name,) in cursor.fetchall()] == ["hazards_processclasstally_pkey"]
        cursor.execute("SELECT indexdef FROM pg_indexes WHERE indexname = %s",
                       ["role_of_person_idx"])
        (definition,) = cursor.fetchone()
    assert "(user_id, role, process_id)" in definition, definition
    roles = ProcessRole.objects.filter(user=people["reviewer"], role="auditor")
    assert "role_of_person_idx" in _plan(roles.values("process_id")[:1])


def test_a_change_of_class_updates_the_tally_in_place(people, process):
    """Classes change often (every recompute may move a step); the tally's row is updated
    heap-only (no new index entry, so neither table nor index grows with the changes) and
    the site keeps one row per process."""
    from hazards.models import DecompositionTest, ProcessClassTally
    from hazards.services.indicators import flush_pending

    _more_processes(people, 3, steps_each=3)
    before = _kept()

    def updates():
        with connection.cursor() as cursor:
            cursor.execute(
                "SELECT n_tup_upd, n_tup_hot_upd FROM pg_stat_xact_user_tables "
                "WHERE relname = 'hazards_processclasstally'")
            return cursor.fetchone()

    upd0, hot0 = updates()
    for shift in (-120, 120, -120):
        with transaction.atomic():
            DecompositionTest.objects.update(
                onset_temperature_k=F("onset_temperature_k") + shift)
            flush_pending()
    upd, hot = updates()
    assert _kept() != before and _kept() == _truth()
    assert upd - upd0 >= 6, (upd0, upd)  # classes did change, in several processes
    assert hot - hot0 == upd - upd0, ((upd0, hot0), (upd, hot))
    assert ProcessClassTally.objects.count() == len({p for p, _ in _kept()})


def _state_by_subquery() -> dict:
    from hazards.models import Process

    return dict(Process.objects.annotate(s=selectors.review_state_subquery())
                .values_list("pk", "s"))


def _state_kept() -> dict:
    from hazards.review.models import ProcessListState

    return dict(ProcessListState.objects.values_list("process_id", "review_state"))


def test_the_kept_list_state_follows_revisions_and_renames(people, process, lodged):
    """The state row of every process (kept by triggers) is the open revision's, else the
    newest's, else none, through lodging, sending back, a new draft and a rename."""
    from hazards.models import Process
    from hazards.review.models import ProcessRevision, ReviewState

    fresh = ProcessFactory()  # no revision: no state
    assert _state_kept() == _state_by_subquery()
    assert _state_kept()[process.pk] == "lodged" and _state_kept()[fresh.pk] is None
    # Revisions change state only through the review services in the application; the
    # trigger follows any change of the column (the guard trigger allows this transition).
    ProcessRevision.objects.filter(pk=lodged.pk).update(state=ReviewState.SENT_BACK)
    assert _state_kept()[process.pk] == "sent_back" == _state_by_subquery()[process.pk]
    ProcessRevision.objects.create(process=process, number=2)  # a new draft
    assert _state_kept()[process.pk] == "drafting" == _state_by_subquery()[process.pk]
    Process.objects.filter(pk=fresh.pk).update(name="Renamed route")
    from hazards.review.models import ProcessListState

    assert ProcessListState.objects.get(pk=fresh.pk).name == "Renamed route"
    assert _state_kept() == _state_by_subquery()


@pytest.mark.parametrize("state", ["", "lodged"])
def test_processes_by_state_read_the_state_name_index_and_sort_nothing(people, process, state):
    from hazards import keyset
    from hazards.web.lists import PROCESS_SORTS

    qs = selectors.processes_with_state(people["reviewer"])
    if state:
        qs = qs.filter(review_state=state)
    qs = qs.order_by(*PROCESS_SORTS["state"][1], "pk")
    keys = keyset.keys_of(qs)
    page = keyset.annotated(qs, keys).order_by(*(k.order() for k in keys))[:21]
    sql, params = page.query.sql_with_params()
    _analyse()
    with transaction.atomic(), connection.cursor() as cursor:
        for setting in ("enable_seqscan", "enable_bitmapscan", "enable_sort"):
            cursor.execute(f"SET LOCAL {setting} = off")  # as on a large table
        cursor.execute("EXPLAIN " + sql, params)
        plan = "\n".join(row[0] for row in cursor.fetchall())
    assert "process_state_name_idx" in plan and "Sort" not in plan, plan


def test_processes_by_state_page_through_every_process_once_in_order(people, process, lodged,
                                                                       client_as):
    """Next links of the list sorted by state (keys: state, the kept name, id) lead through
    every visible process once: no revision first, then by state and name."""
    import re

    _more_processes(people, 24, steps_each=1)
    client = client_as(people["reviewer"])
    url, names = "/processes/?sort=state", []
    while url:
        html = client.get(url).content.decode()
        names += re.findall(r'href="/processes/\d+/">([^<]+)</a>', html)
        found = re.search(r'href="(\?[^"]+)" rel="next"', html)
        url = "/processes/" + found[1].replace("&amp;", "&") if found else None
    from hazards.models import Process

    expected = sorted(Process.objects.exclude(pk=process.pk).values_list("name", flat=True))
    assert names == [*expected, process.name]  # the lodged one after those without revision
