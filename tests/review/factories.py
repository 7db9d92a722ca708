"""Factories and small builders for the review tests: roles, assessed processes, findings,
and revisions brought to a given state through the real services."""

from __future__ import annotations

import datetime as dt

import factory
from django.test import RequestFactory

from hazards.review.models import Finding, ProcessRole, ReviewState
from hazards.review.services import revisions
from tests.conftest import PASSWORD
from tests.factories import (
    CalorimetryRunFactory,
    DecompositionTestFactory,
    ProcessFactory,
    StepFactory,
)


class RoleFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = ProcessRole

    role = "author"


class FindingFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Finding

    title = factory.Sequence(lambda n: f"Finding {n}")
    kind = "advisory"
    due_date = dt.date(2027, 6, 30)
    status = "open"


def assessed_process(**people):
    """A process with one fully measured step; `people` maps role -> user (or list)."""
    process = ProcessFactory()
    step = StepFactory(process=process, sequence=1)
    CalorimetryRunFactory(step=step)
    DecompositionTestFactory(step=step)
    for role, users in people.items():
        for user in users if isinstance(users, list | tuple) else [users]:
            RoleFactory(process=process, user=user, role=role)
    return process


def signing_request(user):
    request = RequestFactory().post("/sign/")
    request.user = user
    return request


def sign(revision, user, meaning, password=PASSWORD):
    return revisions.revision_sign(revision=revision, user=user, password=password,
                                   meaning=meaning, request=signing_request(user))


def revision_in(process, state, *, author, reviewer=None, approver=None):
    """Open a revision of `process` and sign it up to `state` (drafting ... endorsed)."""
    revision = revisions.revision_open(process=process, user=author)
    steps = [(ReviewState.LODGED, author, "authored"),
             (ReviewState.CHECKED, reviewer, "reviewed"),
             (ReviewState.ENDORSED, approver, "approved")]
    for reached, user, meaning in steps:
        if state == ReviewState.DRAFTING:
            break
        sign(revision, user, meaning)
        if state == reached:
            break
    revision.refresh_from_db()
    assert revision.state == state
    return revision
