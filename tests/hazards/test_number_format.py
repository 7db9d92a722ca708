"""One rule for the numbers people read (issue 21 item 8): pages, forms, the what-if page and
the PDF dossier write a value alike; the API carries 12 significant digits without noise.

The rule is the site's own convention (common practice, no source): four significant
digits, trailing zeros dropped, plain decimals from 1e-4 to 1e7, powers of ten beyond."""

from __future__ import annotations

import pytest

from hazards.dossier.view import _number as dossier_number
from hazards.quantities import format_number, format_quantity
from hazards.web.display import number as page_number


@pytest.mark.parametrize(
    ("value", "text"),
    [
        (45.234, "45.23"),
        (45.0, "45"),
        (0.012345, "0.01235"),  # the dossier wrote 0.0123, the pages 0.01235
        (1234.56, "1235"),  # the dossier wrote "1 235", the pages 1235
        (999.96, "1000"),  # rounding carries into the next power of ten
        (1.9000000000000001, "1.9"),  # conversion noise (issue 21 item 8)
        (-273.15, "-273.1"),
        (2.39e10, "2.39·10¹⁰"),  # the pages wrote 2.390e+10
        (1.2e-5, "1.2·10⁻⁵"),
        (0.0, "0"),
        (7, "7"),
        (None, "—"),
        (float("inf"), "not finite"),
    ],
)
def test_pages_and_the_dossier_write_a_number_alike(value, text):
    assert format_number(value) == text
    assert page_number(value) == text
    assert dossier_number(value) == text


def test_a_quantity_is_the_number_and_its_unit():
    assert format_quantity(150.0, "min") == "150 min"
    assert format_quantity(None, "°C") == "—"
    assert format_quantity(0.5, "") == "0.5"
