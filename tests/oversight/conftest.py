"""Personas of oversight: one person per role on a measured process (two reviewers, so that a
notification reaches exactly the right ones), a person with roles elsewhere only, and an
outsider; the background tasks run at once (django-tasks' ImmediateBackend)."""

from __future__ import annotations

import pytest
from django.test import override_settings

from hazards.models import ReactionStep
from tests.conftest import make_user
from tests.review.conftest import AUTHOR_PERMS
from tests.review.factories import assessed_process, revision_in

IMMEDIATE = {"default": {"BACKEND": "django_tasks.backends.immediate.ImmediateBackend",
                         "QUEUES": ["default"]}}


@pytest.fixture(autouse=True)
def immediate_tasks():
    with override_settings(TASKS=IMMEDIATE):
        yield


@pytest.fixture
def people(db):
    names = ("author", "reviewer", "reviewer2", "approver", "auditor", "elsewhere", "outsider")
    author_perms = (*AUTHOR_PERMS, "add_calorimetryseries")
    return {name: make_user(name, perms=author_perms if name == "author" else ())
            for name in names}


@pytest.fixture
def process(people):
    p = people
    process = assessed_process(author=p["author"], reviewer=[p["reviewer"], p["reviewer2"]],
                               approver=p["approver"], auditor=p["auditor"])
    # Someone with a role on another process only must never hear of this one.
    assessed_process(author=p["elsewhere"])
    return process


@pytest.fixture
def endorsed(process, people):
    """Revision 1 of the process, endorsed (its one step is approved)."""
    return revision_in(process, "endorsed", author=people["author"],
                       reviewer=people["reviewer"], approver=people["approver"])


@pytest.fixture
def step(process):
    return ReactionStep.objects.get(process=process)
