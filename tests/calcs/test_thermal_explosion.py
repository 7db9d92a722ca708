"""Semenov and Frank-Kamenetskii criteria reproduce METHODS.md C6.1 and C6.2 ([MEMORY] theory)."""

import math

import pytest

from calcs.errors import CalcInputError
from calcs.thermal_explosion import (
    frank_kamenetskii_critical_size,
    semenov_critical_temperature,
    semenov_critical_temperature_rise_approx,
    semenov_critical_ua,
    semenov_number,
)


def test_semenov_matches_c6_1():
    # METHODS.md C6.1 [COMPUTED]
    assert semenov_critical_temperature_rise_approx(353.15, 100e3) == pytest.approx(10.37,
                                                                                    abs=0.005)
    assert semenov_critical_temperature(353.15, 100e3) - 353.15 == pytest.approx(11.03, abs=0.005)
    ua = semenov_critical_ua(1000.0, 1.0, 100e3, 353.15)
    assert ua == pytest.approx(262.1, abs=0.05)
    assert semenov_number(1000.0, 1.0, 100e3, ua, 353.15) == pytest.approx(1 / math.e)


@pytest.mark.parametrize("geometry, r", [("slab", 0.1169), ("cylinder", 0.1764),
                                         ("sphere", 0.2272)])
def test_frank_kamenetskii_critical_sizes_match_c6_2(geometry, r):
    # METHODS.md C6.2 [COMPUTED]
    size = frank_kamenetskii_critical_size(0.15, 1000.0, 0.1, 353.15, 100e3, geometry)
    assert size == pytest.approx(r, abs=1e-4)


def test_unknown_geometry_is_refused():
    with pytest.raises(CalcInputError, match="geometry = 'torus'"):
        frank_kamenetskii_critical_size(0.15, 1000.0, 0.1, 353.15, 100e3, "torus")
