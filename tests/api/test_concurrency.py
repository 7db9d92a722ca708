"""Optimistic locking: ETag out, If-Match in, and no lost update under real concurrency."""

from __future__ import annotations

import threading

import pytest
from django.db import connection
from rest_framework.test import APIClient

from hazards import models as m
from hazards.services.records import StaleRecord, record_update
from tests.conftest import make_user
from tests.factories import SiteFactory


def _etag(resp):
    return resp["ETag"]


@pytest.mark.django_db
def test_get_returns_the_etag_and_writes_need_it(api):
    site = SiteFactory(code="north")
    url = f"/api/v1/sites/{site.pk}/"
    first = api.get(url)
    assert first["ETag"] == f'"site-{site.pk}-v1"'
    assert first.json()["version"] == 1

    missing = api.patch(url, {"name": "Renamed"}, format="json")
    assert missing.status_code == 428 and missing.json()["code"] == "precondition_required"
    assert api.patch(url, {"name": "x"}, format="json", HTTP_IF_MATCH="*").status_code == 428
    assert api.delete(url).status_code == 428

    ok = api.patch(url, {"name": "Renamed"}, format="json", HTTP_IF_MATCH=_etag(first))
    assert ok.status_code == 200, ok.json()
    assert ok["ETag"] == f'"site-{site.pk}-v2"' and ok.json()["version"] == 2

    stale = api.patch(url, {"name": "Lost"}, format="json", HTTP_IF_MATCH=_etag(first))
    assert stale.status_code == 412
    assert stale.json()["current_etag"] == ok["ETag"]
    weak = api.patch(url, {"name": "Lost"}, format="json", HTTP_IF_MATCH="W/" + ok["ETag"])
    assert weak.status_code == 412  # If-Match compares strongly (RFC 9110 §13.1.1)
    assert api.delete(url, HTTP_IF_MATCH=_etag(first)).status_code == 412
    site.refresh_from_db()
    assert site.name == "Renamed"

    listed = api.patch(url, {"name": "Listed"}, format="json",
                       HTTP_IF_MATCH=f'"other-1-v9", {ok["ETag"]}')
    assert listed.status_code == 200
    assert api.delete(url, HTTP_IF_MATCH=listed["ETag"]).status_code == 204
    assert not m.Site.objects.filter(pk=site.pk).exists()


@pytest.mark.django_db
def test_the_service_refuses_a_stale_version_for_the_browser_forms():
    site = SiteFactory(code="north", name="A")
    other = m.Site.objects.get(pk=site.pk)
    record_update(instance=other, data={"name": "B"}, expected_version=1)
    with pytest.raises(StaleRecord) as info:
        record_update(instance=site, data={"name": "C"}, expected_version=1)
    assert (info.value.expected, info.value.current) == (1, 2)
    assert m.Site.objects.get(pk=site.pk).name == "B"
    record_update(instance=site, data={"name": "C"}, expected_version=2)
    assert m.Site.objects.get(pk=site.pk).name == "C"


def _run_threads(n, target):
    barrier = threading.Barrier(n)
    results: list = [None] * n

    def work(i):
        try:
            barrier.wait()
            results[i] = target(i)
        finally:
            connection.close()

    threads = [threading.Thread(target=work, args=(i,)) for i in range(n)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(60)
    return results


@pytest.mark.django_db(transaction=True)
def test_two_writers_with_one_etag_give_one_200_and_one_412():
    admin = make_user("admin", superuser=True)
    site = SiteFactory(code="north", name="Start")
    etag = f'"site-{site.pk}-v1"'

    def patch(i):
        client = APIClient()
        client.force_authenticate(admin)
        return client.patch(f"/api/v1/sites/{site.pk}/", {"name": f"writer {i}"},
                            format="json", HTTP_IF_MATCH=etag)

    responses = _run_threads(2, patch)
    codes = sorted(r.status_code for r in responses)
    assert codes == [200, 412], [r.content for r in responses]
    winner = next(r for r in responses if r.status_code == 200).json()
    site.refresh_from_db()
    assert site.name == winner["name"] and site.version == 2


@pytest.mark.django_db(transaction=True)
def test_concurrent_read_modify_write_loses_no_update():
    # INTEGRITY.md §3.1/§3.6: 4 threads × N increments through GET + PATCH/If-Match with
    # retry on 412 must end at exactly 4·N (a naive read-modify-write loses most of them).
    admin = make_user("admin", superuser=True)
    site = SiteFactory(code="north", revalidation_interval_months=0)
    per_thread, conflicts = 15, []

    def work(i):
        client = APIClient()
        client.force_authenticate(admin)
        url = f"/api/v1/sites/{site.pk}/"
        done = 0
        while done < per_thread:
            read = client.get(url)
            value = read.json()["revalidation_interval_months"]
            resp = client.patch(url, {"revalidation_interval_months": value + 1}, format="json",
                                HTTP_IF_MATCH=read["ETag"])
            if resp.status_code == 412:
                conflicts.append(i)
                continue
            assert resp.status_code == 200, resp.content
            done += 1
        return done

    assert _run_threads(4, work) == [per_thread] * 4
    site.refresh_from_db()
    assert site.revalidation_interval_months == 4 * per_thread
    assert site.version == 1 + 4 * per_thread
