"""Protective measures and site policies as records (issue 17 item 1): validation naming the
field, the value and the rule; nothing saved in part; every write in the audit trail."""

from __future__ import annotations

import datetime as dt

import pytest
from django.core.exceptions import ValidationError
from django.db import IntegrityError, transaction

from hazards.models import Measure, MeasurePolicy
from hazards.models.measures import DEFAULT_REQUIREMENTS
from hazards.services import measures as svc
from tests.conftest import make_user
from tests.factories import SiteFactory, StepFactory


@pytest.fixture
def owner(db):
    return make_user("owner")


@pytest.fixture
def step(db):
    return StepFactory()


def interlock(**extra):
    return {
        "kind": "feed_interlock",
        "acts_on": "feed valve XV-101",
        "due_date": dt.date(2027, 3, 31),
        "trip_temperature_k": 318.15,
        "response_time_s": 30.0,
        **extra,
    }


def test_a_measure_is_recorded_and_every_write_is_in_the_trail(step, owner):
    m = svc.measure_create(step=step, data=interlock(owner=owner))
    svc.measure_update(measure=m, data={"status": "in_place"}, expected_version=1)
    events = list(
        Measure.pgh_event_model.objects.filter(pgh_obj_id=m.pk)
        .order_by("pgh_id")
        .values_list("pgh_label", "status")
    )
    assert events == [("insert", "proposed"), ("update", "in_place")]
    pk = m.pk
    svc.measure_delete(measure=m, expected_version=2)
    assert Measure.pgh_event_model.objects.filter(pgh_obj_id=pk, pgh_label="delete").exists()


@pytest.mark.parametrize(
    ("field", "value", "words"),
    [
        ("vent_area_m2", -0.01, "vent_area_m2 must be above zero"),
        ("response_time_s", -5.0, "response_time_s must be above zero"),
        ("response_time_s", 0.0, "response_time_s must be above zero"),
        ("discharge_coefficient", 1.4, "at most 1"),
        # the step's process temperature is 303.15 K (tests.factories.StepFactory)
        ("trip_temperature_k", 298.15, "298.15 K is not above the process temperature 303.15 K"),
        ("set_pressure_pa", 90000.0, "not above the operating pressure"),
    ],
)
def test_bad_design_values_are_refused_naming_field_value_and_rule(
    step, owner, field, value, words
):
    with pytest.raises(ValidationError) as err:
        svc.measure_create(step=step, data=interlock(owner=owner, **{field: value}))
    messages = " ".join(" ".join(v) for v in err.value.message_dict.values())
    assert words in messages
    assert field in err.value.message_dict or field in messages
    assert not Measure.objects.exists()


def test_proven_needs_evidence_and_a_test_date_that_took_place(step, owner):
    with pytest.raises(ValidationError, match="document reference and the test date"):
        svc.measure_create(step=step, data=interlock(owner=owner, status="proven"))
    future = dt.date.today() + dt.timedelta(days=3)
    with pytest.raises(ValidationError) as err:
        svc.measure_create(
            step=step,
            data=interlock(
                owner=owner, status="proven", evidence_reference="TR-2026-014", test_date=future
            ),
        )
    assert "test_date" in err.value.message_dict
    ok = svc.measure_create(
        step=step,
        data=interlock(
            owner=owner,
            status="proven",
            evidence_reference="TR-2026-014",
            test_date=dt.date(2026, 5, 4),
        ),
    )
    assert ok.status == "proven"


def test_the_database_refuses_a_proven_measure_without_evidence_whatever_the_write_path(
    step, owner
):
    m = svc.measure_create(step=step, data=interlock(owner=owner))
    with pytest.raises(IntegrityError, match="measure_proven_has_evidence"), transaction.atomic():
        Measure.objects.filter(pk=m.pk).update(status="proven")


def test_a_warming_coolant_and_a_relief_without_its_system_kind(step, owner):
    with pytest.raises(ValidationError, match="no colder than it enters"):
        svc.measure_create(
            step=step,
            data={
                "kind": "evaporative_cooling",
                "acts_on": "reflux condenser E-102",
                "owner": owner,
                "due_date": dt.date(2027, 1, 1),
                "coolant_inlet_temperature_k": 290.0,
                "coolant_outlet_temperature_k": 285.0,
            },
        )
    with pytest.raises(ValidationError) as err:
        svc.measure_create(
            step=step,
            data={
                "kind": "emergency_relief",
                "acts_on": "bursting disc",
                "owner": owner,
                "due_date": dt.date(2027, 1, 1),
                "vent_area_m2": 0.01,
                "set_pressure_pa": 3e5,
            },
        )
    assert "relief_system" in err.value.message_dict


def test_a_site_without_a_policy_follows_the_documented_default(db):
    site = SiteFactory()
    policy = svc.policy_for(site.pk)
    assert policy.pk is None
    assert policy.requirements_for(4) == DEFAULT_REQUIREMENTS["4"]
    assert policy.requirements_for(1) == []


def test_a_policy_is_set_per_site_validated_and_audited(db):
    site = SiteFactory()
    with pytest.raises(ValidationError) as err:
        svc.measure_policy_set(
            site=site, data={"requirements": {"3": [{"any_of": ["prayer"], "status": "proven"}]}}
        )
    assert "unknown kind 'prayer'" in " ".join(err.value.message_dict["requirements"])
    assert not MeasurePolicy.objects.exists()
    policy = svc.measure_policy_set(site=site, data={"requirements": {"3": []}})
    assert policy.requirements_for(3) == [] and policy.requirements_for(5)
    policy = svc.measure_policy_set(site=site, data={"reminder_days": 30}, expected_version=1)
    assert policy.version == 2
    assert MeasurePolicy.pgh_event_model.objects.filter(pgh_obj_id=policy.pk).count() == 2
    from hazards.services.records import StaleRecord

    with pytest.raises(StaleRecord):
        svc.measure_policy_set(site=site, data={"reminder_days": 1}, expected_version=1)
