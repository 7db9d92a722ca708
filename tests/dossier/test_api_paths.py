"""Malformed dossier ids in paths are answered 404, never 500 (found by schema fuzzing)."""

from __future__ import annotations

import pytest

pytestmark = pytest.mark.django_db


@pytest.mark.parametrize("path", ["/api/v1/dossiers/null,null/pdf/", "/api/v1/dossiers/abc/",
                                  "/api/v1/dossiers/1e3/retry/"])
def test_a_dossier_id_that_is_no_number_is_not_found(api, path):
    method = api.post if path.endswith("retry/") else api.get
    assert method(path).status_code == 404
