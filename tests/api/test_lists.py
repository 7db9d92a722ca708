"""Every list filters, orders and paginates, in a number of queries independent of its size."""

from __future__ import annotations

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from hazards import models as m
from tests.factories import (
    CalorimetryRunFactory,
    DecompositionTestFactory,
    ProcessFactory,
    StepFactory,
    VesselFactory,
)

pytestmark = pytest.mark.django_db

LISTS = ["/api/v1/sites/", "/api/v1/processes/", "/api/v1/steps/", "/api/v1/vessels/",
         "/api/v1/solvents/", "/api/v1/calorimetry-runs/", "/api/v1/decomposition-tests/",
         "/api/v1/tokens/"]


def _queries(api, url):
    with CaptureQueriesContext(connection) as ctx:
        resp = api.get(url)
    assert resp.status_code == 200, resp.content
    return len(ctx.captured_queries), resp.json()


def _add_rows(n):
    vessel = VesselFactory()
    for _ in range(n):
        step = StepFactory(vessel=vessel)
        CalorimetryRunFactory(step=step)
        DecompositionTestFactory(step=step)


def test_query_counts_do_not_grow_with_the_number_of_rows(api):
    _add_rows(2)
    small = {url: _queries(api, url + "?limit=200")[0] for url in LISTS}
    _add_rows(8)
    for url in LISTS:
        count, body = _queries(api, url + "?limit=200")
        assert count == small[url], (url, small[url], count)
    assert _queries(api, "/api/v1/steps/?limit=200")[1]["count"] == 10


def test_steps_filter_by_class_process_review_state_and_order(api):
    process = ProcessFactory()
    a = StepFactory(process=process, sequence=2, name="Alpha")
    b = StepFactory(process=process, sequence=1, name="Beta")
    other = StepFactory()
    m.ReactionStep.objects.filter(pk=b.pk).update(needs_review=True)
    classes = {s.pk: s.snapshots.get(is_current=True).criticality_class for s in (a, b, other)}
    chosen = classes[a.pk]

    def ids(query):
        resp = api.get("/api/v1/steps/?" + query)
        assert resp.status_code == 200, resp.json()
        return [r["id"] for r in resp.json()["results"]]

    assert ids(f"process={process.pk}&ordering=sequence") == [b.pk, a.pk]
    assert ids(f"process={process.pk}&ordering=-name") == [b.pk, a.pk]
    assert ids("needs_review=true") == [b.pk]
    if chosen is not None:
        expected = sorted(pk for pk, c in classes.items() if c == chosen)
        assert sorted(ids(f"criticality_class={chosen}")) == expected
        assert sorted(ids(f"criticality_class_min={chosen}")) == sorted(
            pk for pk, c in classes.items() if c is not None and c >= chosen)
    assert ids(f"site={process.site.code}&name=alp") == [a.pk]
    bad = api.get("/api/v1/steps/?criticality_class=9")
    assert bad.status_code == 400 and bad.json()["errors"][0]["field"] == "criticality_class"
    assert api.get("/api/v1/steps/?process=abc").status_code == 400


def test_pagination_is_limit_offset_with_a_count(api):
    for i in range(5):
        StepFactory(name=f"S{i}")
    page = api.get("/api/v1/steps/?limit=2&offset=2&ordering=id").json()
    assert page["count"] == 5 and len(page["results"]) == 2
    assert page["next"] and page["previous"]


def test_runs_filter_by_process_and_series(api):
    run = CalorimetryRunFactory()
    CalorimetryRunFactory()
    resp = api.get(f"/api/v1/calorimetry-runs/?process={run.step.process_id}")
    assert [r["id"] for r in resp.json()["results"]] == [run.pk]
    assert api.get("/api/v1/calorimetry-runs/?has_series=true").json()["count"] == 0
    assert api.get("/api/v1/calorimetry-runs/?has_series=false").json()["count"] == 2
