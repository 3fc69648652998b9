"""models.conditions: wind relative to a break's facing, and water over a break point.

Sources: offshore / cross / onshore as trade usage (common practice: offshore wind blows from the
land to the sea); the 45° and 135° limits and the 0.5 m "too shallow" depth are common practice.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from models.conditions import (
    StepConditions,
    depth_state,
    onshore_wind_component,
    relative_wind,
    still_conditions,
)
from models.errors import InvalidInput


def test_wind_from_the_land_side_of_a_west_facing_break_is_offshore() -> None:
    # a west-facing break (seaward normal 270°): land lies to the east
    got = relative_wind([90.0, 70.0, 120.0, 270.0, 250.0, 300.0, 0.0, 180.0, np.nan], 270.0).tolist()
    assert got == ["offshore", "offshore", "offshore", "onshore", "onshore", "onshore", "cross", "cross", ""]


def test_onshore_and_cross_for_other_facings() -> None:
    assert relative_wind([0.0, 180.0, 90.0], 0.0).tolist() == ["onshore", "offshore", "cross"]
    assert relative_wind([350.0, 10.0], 10.0).tolist() == ["onshore", "onshore"]  # across north


@given(d=st.floats(0.0, 359.9), f=st.floats(0.0, 359.9))
def test_turning_the_wind_and_the_break_together_changes_nothing(d: float, f: float) -> None:
    assert relative_wind([d], f)[0] == relative_wind([(d + 123.0) % 360.0], (f + 123.0) % 360.0)[0]
    # the onshore component has the sign the label says
    comp = float(onshore_wind_component(5.0, d, f))
    label = relative_wind([d], f)[0]
    assert (label != "onshore" or comp > 0) and (label != "offshore" or comp < 0)


def test_depth_state_dry_shallow_and_ok() -> None:
    depth, state = depth_state([1.0, 1.0, 1.0, -0.2], [-1.2, -0.7, 0.0, 0.0])
    np.testing.assert_allclose(depth, [-0.2, 0.3, 1.0, -0.2])
    assert state.tolist() == ["dry", "too-shallow", "ok", "dry"]


def test_step_conditions_check_their_shapes() -> None:
    c = still_conditions(3, 0.4)
    assert c.water_level_m.tolist() == [0.4] * 3 and not c.has_wind.any()
    assert c.subset([2]).water_level_m.tolist() == [0.4]
    with pytest.raises(InvalidInput, match="wind_speed_m_s"):
        StepConditions(np.zeros(3), np.zeros(3), np.zeros(2), np.zeros(3))
    with pytest.raises(InvalidInput, match="water_level_m"):
        still_conditions(2, np.nan)
