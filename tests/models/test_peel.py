"""Peel: direction by the surfer's view, peel angle from break times, speeds (docs/check-values.md §5).

Break times are made independently of the code's formula: a straight crest travelling at Cb
reaches a point p at t = (p · k̂) / Cb (plane-wave kinematics); the expected peel angle is then the
geometric angle between the line of break points and the crest.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from models.errors import InvalidInput
from models.peel import (
    CLOSEOUT_ANGLE_DEG,
    crest_speed,
    peel_from_break_times,
    peel_from_breaking_angle,
    peel_speeds,
)

CB = 4.429  # ≈ √(g · 2 m), docs/check-values.md §5


def _times(x, y, wave_from_deg, cb=CB):
    h = np.radians(wave_from_deg + 180.0)  # heading clockwise from north
    k = np.array([np.sin(h), np.cos(h)])  # unit heading in (x east, y north)
    return (np.asarray(x) * k[0] + np.asarray(y) * k[1]) / cb


# A straight beach along y (x = 0 the shoreline, sea to the west): seaward normal is FROM 270°.
Y = np.linspace(-200.0, 200.0, 9)
X = np.full_like(Y, -50.0)


def test_peel_speed_check_values():
    # docs/check-values.md §5 (definition from memory, Hutt, Black & Mead 2001; values computed there with
    # g = 9.81): hb = 2 m
    cb = float(crest_speed(2.0, g=9.81))
    assert cb == pytest.approx(4.429, abs=5e-4)
    for a, vp, vs in [(45, 4.429, 6.264), (60, 2.557, 5.115), (30, 7.672, 8.859)]:
        got_vp, got_vs = peel_speeds(a, cb)
        assert (float(got_vp), float(got_vs)) == pytest.approx((vp, vs), abs=1e-3)
    vp, vs = peel_speeds([0.0, 90.0], cb)
    assert np.isinf(vp[0]) and np.isinf(vs[0]) and vp[1] == 0.0 and vs[1] == pytest.approx(cb)


def test_oblique_crest_on_straight_beach_sweeps_right_and_is_a_closeout():
    # wave from 280° (10° north of the beach normal) travels ESE: the crest meets the north end
    # first and sweeps south; a surfer facing the shore (east) has south on their right.
    r = peel_from_break_times(X, Y, _times(X, Y, 280.0), wave_from_deg=280.0, crest_speed_m_s=CB)
    assert r.sweep == "right"
    assert r.angle_deg == pytest.approx(10.0, abs=1e-9)  # peel line = beach, crest at 10° to it
    assert r.direction == "closeout"  # 10° < 20° threshold (common practice)
    assert r.first_point == len(Y) - 1  # northernmost point breaks first
    # mirror: from 260° it sweeps north = the surfer's left; the caller's order does not matter
    r = peel_from_break_times(X[::-1], Y[::-1], _times(X, Y, 260.0)[::-1], wave_from_deg=260.0, crest_speed_m_s=CB)
    assert (r.sweep, r.direction) == ("left", "closeout")


def test_normal_incidence_is_a_closeout_with_no_sweep():
    t = np.full_like(Y, 12.5)  # a crest parallel to the beach reaches every point at once
    r = peel_from_break_times(X, Y, t, wave_from_deg=270.0, crest_speed_m_s=CB)
    assert (r.direction, r.sweep, r.angle_deg) == ("closeout", "none", 0.0)
    assert np.isinf(r.peel_rate_m_s)


def test_symmetric_ridge_at_normal_incidence_peels_both_ways_from_its_crest():
    # V-shaped ridge: breaking position 150 m further seaward at the apex (y = 0) than at ±200 m
    x = -50.0 - 150.0 * (1 - np.abs(Y) / 200.0)
    r = peel_from_break_times(x, Y, _times(x, Y, 270.0), wave_from_deg=270.0, crest_speed_m_s=CB,
                              breaker_height_m=[1, 1, 1, 2, 1.5, 1, 1, 1, 1])
    assert r.direction == "both" and r.sweep == "both"
    assert r.first_point == 4  # the apex
    assert r.largest_point == 3
    expected = np.degrees(np.arctan(150.0 / 200.0))  # angle between the ridge line and the crest
    assert r.left_angle_deg == pytest.approx(expected, abs=1e-9)
    assert r.right_angle_deg == pytest.approx(expected, abs=1e-9)


def test_point_where_crest_wraps_along_the_break_gives_a_large_angle():
    # break line 20° off the direction of travel (the crest has wrapped around a point): α = 70°
    s = np.linspace(0, 400, 11)
    ang = np.radians(90.0 + 20.0)  # break line heading 110° from north; wave travels toward 090°
    x, y = s * np.sin(ang), s * np.cos(ang)
    r = peel_from_break_times(x, y, _times(x, y, 270.0), wave_from_deg=270.0, crest_speed_m_s=CB)
    assert r.angle_deg == pytest.approx(70.0, abs=1e-9)
    # travelling east, the break moves south-east: to the right of a surfer heading east
    assert r.direction == "right" and r.first_point == 0
    assert r.surfer_speed_m_s == pytest.approx(CB / np.sin(np.radians(70)), rel=1e-12)


@given(st.floats(-85, 85), st.floats(200, 340))
def test_multi_point_agrees_with_single_point_on_a_straight_beach(theta, normal):
    # invariant: on straight contours the break-time method and the breaking-angle method agree
    rad = np.radians(normal + 90.0)  # beach line heading: perpendicular to the normal
    s = np.linspace(-300, 300, 7)
    x, y = s * np.sin(rad), s * np.cos(rad)
    wave_from = normal + theta
    multi = peel_from_break_times(x, y, _times(x, y, wave_from), wave_from_deg=wave_from, crest_speed_m_s=CB)
    single = peel_from_breaking_angle(wave_from_deg=wave_from, contour_normal_from_deg=normal, crest_speed_m_s=CB)
    assert multi.angle_deg == pytest.approx(single.angle_deg, abs=1e-6)
    if abs(theta) > 1e-6:
        assert multi.sweep == single.sweep
    if abs(abs(theta) - CLOSEOUT_ANGLE_DEG) > 1e-6:  # rounding may fall either side at the threshold
        assert multi.direction == single.direction


def test_single_point_limits():
    r = peel_from_breaking_angle(wave_from_deg=270.0, contour_normal_from_deg=270.0, crest_speed_m_s=CB)
    assert (r.direction, r.sweep, r.angle_deg) == ("closeout", "none", 0.0)
    r = peel_from_breaking_angle(wave_from_deg=340.0, contour_normal_from_deg=270.0, crest_speed_m_s=CB)
    assert (r.direction, r.angle_deg) == ("right", pytest.approx(70.0))
    r = peel_from_breaking_angle(wave_from_deg=270.0 - CLOSEOUT_ANGLE_DEG, contour_normal_from_deg=270.0,
                                 crest_speed_m_s=CB)
    assert r.direction == "left"  # the threshold itself peels (>=)
    with pytest.raises(InvalidInput, match="does not travel shoreward"):
        peel_from_breaking_angle(wave_from_deg=90.0, contour_normal_from_deg=270.0, crest_speed_m_s=CB)


def test_validation_names_argument():
    with pytest.raises(InvalidInput, match="`y_m`"):
        peel_from_break_times([0, 1], [0], [0, 1], wave_from_deg=0, crest_speed_m_s=1)
    with pytest.raises(InvalidInput, match="`break_time_s`"):
        peel_from_break_times([0, 1], [0, 1], [0, np.nan], wave_from_deg=0, crest_speed_m_s=1)
    with pytest.raises(InvalidInput, match="coincide"):
        peel_from_break_times([0, 0], [1, 1], [0, 1], wave_from_deg=0, crest_speed_m_s=1)
    with pytest.raises(InvalidInput, match="`crest_speed_m_s`"):
        peel_from_break_times([0, 1], [0, 1], [0, 1], wave_from_deg=0, crest_speed_m_s=0)
    with pytest.raises(InvalidInput, match="`breaker_depth_m`"):
        crest_speed(-1.0)


def test_crest_speed_per_point_uses_each_segments_mean():
    # a straight break line 30° off the crest (plane-wave kinematics as above), the crest slowing
    # as it goes: between two points it moves at the mean of their local Cb (a linear change of
    # speed along the line), so times built that way give back the geometric angle exactly
    s = np.linspace(0.0, 300.0, 7)
    ang = np.radians(30.0)  # break line heading 30° east of north, the crest runs north-south
    x, y = s * np.sin(ang), s * np.cos(ang)
    cb = np.linspace(5.0, 3.5, 7)
    seg_cb = 0.5 * (cb[1:] + cb[:-1])
    t = np.concatenate([[0.0], np.cumsum(np.diff(x) / seg_cb)])  # the crest (heading east) advances Δx
    r = peel_from_break_times(x, y, t, wave_from_deg=270.0, crest_speed_m_s=cb)
    assert r.angle_deg == pytest.approx(30.0, abs=1e-9)
    np.testing.assert_allclose(r.segment_angles_deg, 30.0, atol=1e-9)
    assert r.crest_speed_m_s == pytest.approx(float(np.mean(seg_cb)), rel=1e-12)  # equal segments
    # one value for all points is the same as that value repeated
    a = peel_from_break_times(x, y, t, wave_from_deg=270.0, crest_speed_m_s=4.0)
    b = peel_from_break_times(x, y, t, wave_from_deg=270.0, crest_speed_m_s=np.full(7, 4.0))
    assert (a.angle_deg, a.direction, a.peel_rate_m_s) == (b.angle_deg, b.direction, b.peel_rate_m_s)
    with pytest.raises(InvalidInput, match="`crest_speed_m_s`"):
        peel_from_break_times(x, y, t, wave_from_deg=270.0, crest_speed_m_s=np.full(6, 4.0))
