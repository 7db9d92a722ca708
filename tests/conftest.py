"""Shared fixtures: named personas and an authenticated API client for each."""

from __future__ import annotations

import pytest

PASSWORD = "correct horse battery staple 42"


def make_user(username: str, *, superuser: bool = False, perms: tuple[str, ...] = ()):
    from django.contrib.auth import get_user_model
    from django.contrib.auth.models import Permission

    User = get_user_model()
    user = User.objects.create_user(
        username=username, password=PASSWORD, first_name=username.title(),
        last_name="Persona", email=f"{username}@example.test",
    )
    if superuser:
        user.is_superuser = user.is_staff = True
        user.save()
    if perms:
        user.user_permissions.set(Permission.objects.filter(codename__in=perms))
    return user


@pytest.fixture
def admin_user(db):
    return make_user("admin", superuser=True)


@pytest.fixture
def outsider(db):
    return make_user("outsider")


@pytest.fixture
def api(admin_user):
    from rest_framework.test import APIClient

    client = APIClient()
    client.force_authenticate(admin_user)
    return client


@pytest.fixture
def anon_api():
    from rest_framework.test import APIClient

    return APIClient()


def pytest_collection_modifyitems(config, items):
    """Browser tests last: Playwright's event loop stays open in the main thread once started,
    and Django then refuses database calls of the tests that follow (async-unsafe check)."""
    items.sort(key=lambda item: item.get_closest_marker("e2e") is not None)
