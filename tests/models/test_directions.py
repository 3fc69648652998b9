"""Direction conventions: nautical FROM degrees <-> math TOWARD radians, circular helpers."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from models import directions as dr
from models.errors import InvalidInput


@pytest.mark.parametrize(
    ("nautical", "math_rad"),
    [
        (270.0, 0.0),  # from the west -> travelling east (+x)
        (180.0, np.pi / 2),  # from the south -> travelling north (+y)
        (90.0, -np.pi),  # from the east -> travelling west (wrapped to -π)
        (0.0, -np.pi / 2),  # from the north -> travelling south
        (225.0, np.pi / 4),  # from the south-west -> travelling north-east
    ],
)
def test_exact_cases(nautical, math_rad):
    assert float(dr.nautical_from_to_math(nautical)) == pytest.approx(math_rad, abs=1e-15)
    assert float(dr.math_to_nautical_from(math_rad)) == pytest.approx(nautical % 360, abs=1e-12)


@settings(max_examples=100, deadline=None)
@given(st.floats(-1e4, 1e4))
def test_round_trip_and_ranges(deg):
    rad = dr.nautical_from_to_math(deg)
    assert -np.pi <= float(rad) < np.pi
    back = float(dr.math_to_nautical_from(rad))
    assert 0.0 <= back < 360.0
    assert abs(float(dr.circular_difference_deg(back, deg))) < 1e-9
    # the travel direction vector points opposite to where the waves come from
    from_north_vec = np.array([np.sin(np.deg2rad(deg)), np.cos(np.deg2rad(deg))])  # (east, north)
    toward = np.array([np.cos(rad), np.sin(rad)])
    np.testing.assert_allclose(toward, -from_north_vec, atol=1e-9)


def test_circular_difference_and_mean():
    assert float(dr.circular_difference_deg(10.0, 350.0)) == pytest.approx(20.0)
    assert float(dr.circular_difference_deg(350.0, 10.0)) == pytest.approx(-20.0)
    assert float(dr.circular_difference_deg(180.0, 0.0)) == pytest.approx(-180.0)  # [-180, 180)
    assert float(dr.circular_mean_deg([350.0, 10.0])) == pytest.approx(0.0, abs=1e-12)
    assert float(dr.circular_mean_deg([0.0, 90.0], weights=[1.0, 3.0])) == pytest.approx(np.rad2deg(np.arctan2(3, 1)))
    np.testing.assert_allclose(dr.circular_mean_deg([[10.0, 30.0], [200.0, 220.0]], axis=1), [20.0, 210.0])


def test_bad_input():
    with pytest.raises(InvalidInput, match="`deg`"):
        dr.nautical_from_to_math([10.0, np.nan])
    with pytest.raises(InvalidInput, match="`rad`"):
        dr.math_to_nautical_from(np.inf)
    with pytest.raises(InvalidInput, match="undefined"):
        dr.circular_mean_deg([0.0, 180.0])
    with pytest.raises(InvalidInput, match="`weights`"):
        dr.circular_mean_deg([0.0, 10.0], weights=[1.0, -1.0])
