"""Upload limits are stated one way everywhere and refused before the body is read
(issue 21 item 8)."""

from __future__ import annotations

import pytest
from django.conf import settings

from hazards.quantities import size_text
from tests.factories import StepFactory


def test_sizes_are_stated_in_binary_prefixes_with_the_exact_byte_count():
    # IEC 80000-13: 1 MiB = 2**20 bytes = 1,048,576 bytes.
    assert size_text(4 * 2**20) == "4 MiB (4,194,304 bytes)"
    assert size_text(5_000_000) == "4.77 MiB (5,000,000 bytes)"


@pytest.mark.django_db
def test_an_api_body_declared_too_large_is_refused_before_it_is_read(api):
    step = StepFactory()
    # The declared length is a gigabyte; the stream holds a few bytes. A server that read the
    # body first would wait for the rest or fail on the short read, not answer 413 at once.
    response = api.generic("POST", f"/api/v1/steps/{step.pk}/what-if/", b"{}",
                           content_type="application/json", CONTENT_LENGTH=str(10**9))
    assert response.status_code == 413
    body = response.json()
    assert body["code"] == "payload_too_large"
    limit = size_text(settings.DATA_UPLOAD_MAX_MEMORY_SIZE)
    assert limit in body["detail"] and "953.67 MiB (1,000,000,000 bytes)" in body["detail"]
    assert body["errors"][0]["field"] == "body"


@pytest.mark.django_db
def test_a_page_upload_declared_too_large_gets_a_page_that_states_the_limit(client, admin_user):
    step = StepFactory()
    client.force_login(admin_user)
    response = client.generic("POST", f"/steps/{step.pk}/calorimetry/upload/", b"x",
                              content_type="multipart/form-data; boundary=b",
                              CONTENT_LENGTH=str(50 * 2**20))
    assert response.status_code == 413
    page = response.content.decode()
    assert size_text(settings.DATA_UPLOAD_MAX_MEMORY_SIZE) in page
    assert "Nothing was saved" in page


@pytest.mark.django_db
def test_the_upload_page_and_the_file_check_state_the_same_file_limit(client, admin_user):
    from hazards.services import series

    step = StepFactory()
    client.force_login(admin_user)
    page = client.get(f"/steps/{step.pk}/calorimetry/upload/").content.decode()
    assert size_text(series.MAX_BYTES) in page
    parsed = series.parse_series(b"x" * (series.MAX_BYTES + 1))
    assert parsed.problems[0].rule == f"is larger than the limit of {size_text(series.MAX_BYTES)}"
