"""The demo's class 3-5 steps carry measures in different states, one barrier fails its
check, and the Varnholt endorsement waits until its required measures are proven."""

from __future__ import annotations

import datetime as dt

import pytest

from hazards.models import IndicatorSnapshot, Measure, ReactionStep
from hazards.review import errors as E
from hazards.review.models import ProcessRevision
from hazards.review.requirements import unmet_requirements
from hazards.services.measures import measure_update

pytestmark = pytest.mark.django_db


def checks_of(process_name, sequence):
    step = ReactionStep.objects.get(process__name=process_name, sequence=sequence)
    snap = IndicatorSnapshot.objects.get(step=step, is_current=True)
    return snap.criticality_class, {c["kind"]: c for c in snap.values.get("barrier_checks", [])}


def test_the_demo_measures(monkeypatch):
    from hazards.demo import load_demo

    monkeypatch.setenv("EXOLEDGER_DEMO_PASSWORD", "demo password for the tests 1")
    load_demo()
    count = Measure.objects.count()
    load_demo()
    assert Measure.objects.count() == count == 8
    assert set(Measure.objects.values_list("status", flat=True)) == {
        "proposed",
        "in_place",
        "proven",
    }

    cls, checks = checks_of("QX-17 amide intermediate", 2)
    assert cls == 3 and checks["evaporative_cooling"]["result"] == "pass"
    cls, checks = checks_of("Varnholt nitro-aromatic reduction", 1)
    assert cls == 4
    assert checks["emergency_relief"]["result"] == "fail"
    assert "relief specialist" in checks["emergency_relief"]["note"]
    assert checks["evaporative_cooling"]["result"] == "pass"
    cls, checks = checks_of("Varnholt nitro-aromatic reduction", 2)
    assert cls == 5 and checks["quench"]["result"] in ("pass", "fail")

    checked = ProcessRevision.objects.get(
        process__name="Varnholt nitro-aromatic reduction", state="checked"
    )
    unmet = unmet_requirements(
        content=checked.content, site_id=checked.process.site_id, revision_id=checked.pk
    )
    assert {u["step_name"] for u in unmet} == {"Nitro reduction with formate", "Diazotisation hold"}
    from hazards.review.services.revisions import refuse_unmet_measures

    with pytest.raises(E.TransitionRefused, match="Evaporative cooling at MTT .* is in place"):
        refuse_unmet_measures(checked)
    # once the condenser and the quench are proven, nothing of the measures blocks
    for m in Measure.objects.filter(
        step__process=checked.process, kind__in=["evaporative_cooling", "quench"]
    ):
        measure_update(
            measure=m,
            data={
                "status": "proven",
                "evidence_reference": "TR-1",
                "test_date": dt.date(2026, 11, 30),
            },
        )
    from hazards.review.content import revision_content

    assert not unmet_requirements(
        content=revision_content(checked.process), site_id=checked.process.site_id
    )
