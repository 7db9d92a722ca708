"""The Inbox badge is readable on the top bar (issue 21 item 8), measured in Chromium."""

from __future__ import annotations

import pytest

from tests.e2e.conftest import sign_in

pytestmark = pytest.mark.e2e


def _luminance(rgb: str) -> float:
    # WCAG 2.1, definition of relative luminance (sRGB).
    parts = [int(p) / 255 for p in rgb[rgb.index("(") + 1:rgb.index(")")].split(",")[:3]]
    lin = [c / 12.92 if c <= 0.03928 else ((c + 0.055) / 1.055) ** 2.4 for c in parts]
    return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]


def contrast(a: str, b: str) -> float:
    # WCAG 2.1, definition of contrast ratio: (L1 + 0.05) / (L2 + 0.05).
    la, lb = sorted((_luminance(a), _luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def test_contrast_formula_matches_the_wcag_extremes():
    # WCAG 2.1: black on white is 21:1; a colour on itself is 1:1.
    assert contrast("rgb(0, 0, 0)", "rgb(255, 255, 255)") == pytest.approx(21.0)
    assert contrast("rgb(17, 78, 100)", "rgb(17, 78, 100)") == pytest.approx(1.0)


def test_the_unread_count_on_the_top_bar_meets_wcag_aa(world, live_server, page):
    from hazards.oversight.models import Notification

    author = world["people"]["author"]
    for n in range(3):
        Notification.objects.create(recipient=author, kind="finding_assigned",
                                    object_key=f"review.finding:{n}", subject="A finding",
                                    body="Look at it.", link="/")
    sign_in(page, live_server.url, "author")
    badge = page.locator(".topbar .count")
    assert badge.inner_text().strip() == "3"
    colour, background = badge.evaluate(
        "e => [getComputedStyle(e).color, getComputedStyle(e).backgroundColor]")
    # WCAG 2.1 SC 1.4.3 (AA): at least 4.5:1 for text of this size.
    assert contrast(colour, background) >= 4.5, (colour, background)
