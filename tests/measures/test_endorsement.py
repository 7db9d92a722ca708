"""Endorsement refused while a required measure is missing or not in its status, unless the
approver signs a risk acceptance (issue 17 item 2); measures in the frozen content and the
live barrier checks in the step's indicators."""

from __future__ import annotations

import datetime as dt

import pytest
from django.db import ProgrammingError, transaction

from hazards.models import IndicatorSnapshot, Measure
from hazards.review import errors as E
from hazards.review.audit import verify_signatures
from hazards.review.models import RiskAcceptance
from hazards.review.requirements import unmet_requirements
from hazards.review.services import acceptances, revisions
from hazards.review.signing import acceptance_seal_verifies
from hazards.services import measures as svc
from tests.conftest import PASSWORD
from tests.review.factories import revision_in, sign, signing_request

REDESIGN_EVERYWHERE = {str(c): [{"any_of": ["redesign"], "status": "proven"}] for c in range(1, 6)}


@pytest.fixture
def strict_site(process):
    """Whatever the step's class, the site asks for a proven redesign (a kind without a
    barrier check, so only the status decides)."""
    svc.measure_policy_set(site=process.site, data={"requirements": REDESIGN_EVERYWHERE})
    return process


def checked(process, author, reviewer):
    return revision_in(process, "checked", author=author, reviewer=reviewer)


def test_endorsement_is_refused_while_the_required_measure_is_missing(
    strict_site, author, reviewer, approver
):
    revision = checked(strict_site, author, reviewer)
    with pytest.raises(E.TransitionRefused) as err:
        sign(revision, approver, "approved")
    prefix = E.REQUIRED_MEASURES_MISSING.split("{")[0]
    assert err.value.message.startswith(prefix)
    assert "no such measure is recorded" in err.value.message
    revision.refresh_from_db()
    assert revision.state == "checked"


def test_a_measure_only_proposed_still_blocks_and_a_proven_one_lets_it_through(
    strict_site, author, reviewer, approver
):
    step = strict_site.steps.get()
    m = svc.measure_create(
        step=step,
        data={
            "kind": "redesign",
            "acts_on": "the dosing of the step",
            "owner": author,
            "due_date": dt.date(2027, 1, 31),
        },
    )
    revision = checked(strict_site, author, reviewer)
    assert revision.content["steps"][0]["measures"][0]["status"] == "proposed"
    with pytest.raises(E.TransitionRefused, match="Redesign of the step is proposed"):
        sign(revision, approver, "approved")
    svc.measure_update(
        measure=m,
        data={
            "status": "proven",
            "evidence_reference": "MOC-118",
            "test_date": dt.date(2026, 11, 2),
        },
    )
    # the change replaces the checked revision: the committee signs what is now true
    revisions.revisions_reconcile(process=strict_site)
    revision.refresh_from_db()
    assert revision.state == "replaced"
    draft = strict_site.revisions.get(state="drafting")
    sign(draft, author, "authored")
    sign(draft, reviewer, "reviewed")
    sign(draft, approver, "approved")
    revision = draft
    revision.refresh_from_db()
    assert revision.state == "endorsed"


def test_a_signed_risk_acceptance_lets_the_endorsement_through(
    strict_site, author, reviewer, approver
):
    revision = checked(strict_site, author, reviewer)
    [unmet] = unmet_requirements(
        content=revision.content, site_id=strict_site.site_id, revision_id=revision.pk
    )
    with pytest.raises(E.NotPermitted):
        acceptances.risk_accept(
            revision=revision,
            step_id=unmet["step"],
            requirement_key=unmet["key"],
            reason="x",
            user=reviewer,
            password=PASSWORD,
            request=signing_request(reviewer),
        )
    with pytest.raises(E.Invalid, match="reason"):
        acceptances.risk_accept(
            revision=revision,
            step_id=unmet["step"],
            requirement_key=unmet["key"],
            reason=" ",
            user=approver,
            password=PASSWORD,
            request=signing_request(approver),
        )
    with pytest.raises(E.Invalid, match="Only a requirement this revision does not meet"):
        acceptances.risk_accept(
            revision=revision,
            step_id=unmet["step"],
            requirement_key="class 9 #1",
            reason="why",
            user=approver,
            password=PASSWORD,
            request=signing_request(approver),
        )
    a = acceptances.risk_accept(
        revision=revision,
        step_id=unmet["step"],
        requirement_key=unmet["key"],
        reason="Campaign of two batches before the redesign; operator present throughout.",
        user=approver,
        password=PASSWORD,
        request=signing_request(approver),
    )
    assert acceptance_seal_verifies(a)
    assert not [p for p in verify_signatures() if "risk acceptance" in p.message]
    a.reason = "a different reason"  # what the seal binds: a changed reason fails it
    assert not acceptance_seal_verifies(a)
    a.refresh_from_db()
    assert a.content_sha256 == revision.content_sha256
    sign(revision, approver, "approved")
    revision.refresh_from_db()
    assert revision.state == "endorsed"
    # append-only and in the trail
    assert RiskAcceptance.pgh_event_model.objects.filter(pgh_obj_id=a.pk).count() == 1
    with pytest.raises(ProgrammingError, match="Cannot update or delete"), transaction.atomic():
        RiskAcceptance.objects.filter(pk=a.pk).update(reason="changed later")


def test_a_wrong_password_records_no_acceptance(strict_site, author, reviewer, approver):
    revision = checked(strict_site, author, reviewer)
    [unmet] = unmet_requirements(content=revision.content, site_id=strict_site.site_id)
    with pytest.raises(E.SignatureRefused):
        acceptances.risk_accept(
            revision=revision,
            step_id=unmet["step"],
            requirement_key=unmet["key"],
            reason="why",
            user=approver,
            password="wrong",
            request=signing_request(approver),
        )
    assert not RiskAcceptance.objects.exists()


def test_a_required_measure_whose_check_fails_does_not_count(process, author, reviewer, approver):
    """The site asks for an emergency measure in place; the quench is in place but far too
    slow for the runaway (TMRad against its response time)."""
    svc.measure_policy_set(
        site=process.site,
        data={
            "requirements": {
                str(c): [{"any_of": ["quench"], "status": "in_place"}] for c in range(1, 6)
            }
        },
    )
    step = process.steps.get()
    svc.measure_create(
        step=step,
        data={
            "kind": "quench",
            "acts_on": "the reaction mass",
            "owner": author,
            "status": "in_place",
            "due_date": dt.date(2027, 1, 31),
            "response_time_s": 1e9,
        },
    )
    snap = IndicatorSnapshot.objects.get(step=step, is_current=True)
    [check] = snap.values["barrier_checks"]
    assert check["name"] == "Time for the emergency measure" and check["result"] == "fail"
    revision = checked(process, author, reviewer)
    with pytest.raises(E.TransitionRefused, match="its barrier check does not pass"):
        sign(revision, approver, "approved")


def test_measures_enter_the_inputs_only_when_there_are_some(process, author):
    step = process.steps.get()
    before = IndicatorSnapshot.objects.get(step=step, is_current=True)
    assert "measures" not in before.inputs and "barrier_checks" not in before.values
    m = svc.measure_create(
        step=step,
        data={
            "kind": "dump",
            "acts_on": "catch tank D-7",
            "owner": author,
            "due_date": dt.date(2027, 1, 31),
            "response_time_s": 300.0,
        },
    )
    during = IndicatorSnapshot.objects.get(step=step, is_current=True)
    assert during.inputs["measures"] == [{"id": m.pk, "kind": "dump", "response_time_s": 300.0}]
    assert during.values["barrier_checks"][0]["numbers"]["response_time"] == {
        "value": 300.0,
        "unit": "s",
    }
    # a status change alone leaves the inputs and the snapshot as they are
    svc.measure_update(measure=m, data={"status": "in_place"})
    assert IndicatorSnapshot.objects.get(step=step, is_current=True).pk == during.pk
    Measure.objects.filter(pk=m.pk).delete()
    after = IndicatorSnapshot.objects.get(step=step, is_current=True)
    assert after.inputs_hash == before.inputs_hash


def test_the_change_comparison_lists_a_measure_that_moved(strict_site, author, reviewer,
                                                          approver):
    from hazards.review.selectors import content_diff
    from hazards.web.diff import humanise_diff

    step = strict_site.steps.get()
    m = svc.measure_create(step=step, data={
        "kind": "redesign", "acts_on": "the dosing of the step", "owner": author,
        "due_date": dt.date(2027, 1, 31)})
    before = checked(strict_site, author, reviewer).content
    svc.measure_update(measure=m, data={"status": "in_place"})
    from hazards.review.content import revision_content

    rows = humanise_diff(content_diff(before, revision_content(strict_site)))
    [row] = [r for r in rows if r["label"] == "status"]
    assert (row["where"], row["from"], row["to"]) == (
        f"step {step.pk}, protective measure {m.pk}", "proposed", "in_place")


def test_the_dossier_prints_the_measures_their_checks_and_the_signed_acceptance(
        strict_site, author, reviewer, approver):
    from hazards.dossier.content import dossier_content
    from hazards.dossier.render import DossierMeta, build_pages

    step = strict_site.steps.get()
    svc.measure_create(step=step, data={
        "kind": "quench", "acts_on": "quench tank T-12", "owner": author,
        "due_date": dt.date(2027, 1, 31), "response_time_s": 240.0})
    revision = checked(strict_site, author, reviewer)
    [unmet] = unmet_requirements(content=revision.content, site_id=strict_site.site_id)
    acceptances.risk_accept(
        revision=revision, step_id=unmet["step"], requirement_key=unmet["key"],
        reason="Two supervised batches while the redesign is built.", user=approver,
        password=PASSWORD, request=signing_request(approver))
    sign(revision, approver, "approved")
    revision.refresh_from_db()
    content = dossier_content(strict_site, revision)
    assert content["context"]["risk_acceptances"][0]["reason"].startswith("Two supervised")
    meta = DossierMeta(id=1, version=1, process_id=strict_site.pk, created_at="2026-12-04",
                       content_sha256="0" * 64, context_sha256="0" * 64, seal="")
    job, _ = build_pages(content, meta)
    assert "Risk acceptances (signed)" in job.html and "Two supervised batches" in job.html
    assert "Protective measures and barrier checks" in job.html
    assert "quench tank T-12" in job.html and "Time for the emergency measure" in job.html
    assert "response time 240 s" in job.html
