"""Headers every response carries (INTEGRITY.md §2.2; OWASP ASVS 5.0 V3 web frontend)."""

from __future__ import annotations

import re

import pytest

pytestmark = pytest.mark.django_db


def test_api_responses_are_never_cached(api):
    resp = api.get("/api/v1/processes/")
    assert resp.status_code == 200
    assert resp["Cache-Control"] == "no-store"


def test_pages_carry_a_content_security_policy_allowing_only_our_own_scripts(client):
    resp = client.get("/healthz")
    policy = resp["Content-Security-Policy"]
    assert "script-src 'self'" in policy
    assert "frame-ancestors 'none'" in policy
    assert "unsafe-inline" not in policy


def test_the_api_documentation_works_offline_and_carries_the_caution(client, admin_user):
    client.force_login(admin_user)
    page = client.get("/api/v1/docs/")
    assert page.status_code == 200
    html = page.content.decode()
    assert "Local codes, company standards" in html
    # Every script comes from this server (drf-spectacular-sidecar), none inline or remote.
    sources = re.findall(r'<script src="([^"]+)"', html)
    assert sources and all(src.startswith("/") for src in sources), sources
    assert "<script>" not in html
    for src in sources:
        assert client.get(src).status_code == 200, src
