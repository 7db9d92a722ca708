"""Personas of the review: one person per role on their own process, and an outsider."""

from __future__ import annotations

import pytest
from rest_framework.test import APIClient

from tests.conftest import make_user
from tests.review.factories import assessed_process

# What the demo's author group may change (the Django model permissions).
AUTHOR_PERMS = ("add_reactionstep", "change_reactionstep", "delete_reactionstep",
                "add_calorimetryrun", "change_calorimetryrun", "add_decompositiontest",
                "change_decompositiontest", "add_process", "change_process", "add_measure",
                "change_measure", "delete_measure")


@pytest.fixture
def author(db):
    return make_user("author", perms=AUTHOR_PERMS)


@pytest.fixture
def reviewer(db):
    return make_user("reviewer")


@pytest.fixture
def approver(db):
    return make_user("approver")


@pytest.fixture
def auditor(db):
    return make_user("auditor")


@pytest.fixture
def process(author, reviewer, approver, auditor):
    """A measured process on which each persona holds their one role."""
    return assessed_process(author=author, reviewer=reviewer, approver=approver, auditor=auditor)


def client_for(user):
    """A session-authenticated client (signing refuses token authentication)."""
    client = APIClient()
    if user is not None:
        client.force_login(user)
    return client


@pytest.fixture
def as_user():
    return client_for
