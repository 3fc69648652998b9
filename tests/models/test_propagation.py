"""Swell arrival: deep-water group delay, long periods first, time shifting with provenance."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from models.errors import InvalidInput
from models.propagation import (
    EARTH_MEAN_RADIUS_M,
    arrival_delay,
    deep_group_speed,
    great_circle_distance,
    initial_bearing,
    shift_to_spot,
)

G = 9.80665


@pytest.mark.parametrize(
    ("period", "cg", "hours_per_1000km"),
    # docs/check-values.md §8 check values (Cg0 = gT/4π, computed there with g = 9.81: 14 s -> 10.929 m/s)
    [(10, 7.807, 35.58), (12, 9.368, 29.65), (14, 10.929, 25.42), (16, 12.490, 22.24), (20, 15.613, 17.79)],
)
def test_group_speed_and_delay_check_values(period, cg, hours_per_1000km):
    assert deep_group_speed(1.0 / period, g=9.81) == pytest.approx(cg, abs=6e-4)
    # a component travelling straight at the spot (from the station's side): delay = distance / Cg
    d = arrival_delay([1.0 / period], [270.0], distance_m=1.0e6, bearing_deg=90.0, g=9.81)
    assert d[0, 0] / 3600 == pytest.approx(hours_per_1000km, abs=6e-3)


def test_delay_is_projection_over_cg_and_long_periods_first():
    f = np.array([1 / 20, 1 / 14, 1 / 10, 1 / 6])
    dirs = np.arange(0.0, 360.0, 15.0)
    dist, brg = 500e3, 60.0
    d = arrival_delay(f, dirs, distance_m=dist, bearing_deg=brg)
    along = dist * np.cos(np.radians(dirs + 180 - brg))
    cg = G * (1 / f) / (4 * np.pi)
    arr = along >= -1e-6
    # signed: a component that passes the spot first (projection < 0) has a negative delay
    assert np.allclose(d, along[None, :] / cg[:, None], rtol=1e-12, atol=1e-9)
    assert np.all(d[:, along < -1.0] < 0)
    # long periods first, for every arriving direction
    assert np.all(np.diff(d[:, arr & (along > 1.0)], axis=0) > 0)


def test_dispersion_slope_recovers_distance():
    # Munk 1947 / Snodgrass et al. 1966 (from memory): arrival frequency rises as df/dt = g/(4πΔ);
    # docs/check-values.md §8: 0.01 Hz/day -> 6745 km
    f = np.linspace(0.04, 0.1, 13)
    d = arrival_delay(f, [0.0], distance_m=6745e3, bearing_deg=180.0, g=9.81)[:, 0]  # §8 uses g = 9.81
    slope = np.polyfit(d, f, 1)[0] * 86400
    assert slope == pytest.approx(0.01, rel=2e-4)


def test_haversine_reference_values():
    # a quarter meridian on the sphere: πR/2; one degree of longitude on the equator: R·π/180
    assert great_circle_distance(0, 0, 90, 0) == pytest.approx(np.pi * EARTH_MEAN_RADIUS_M / 2, rel=1e-12)
    assert great_circle_distance(0, 10, 0, 11) == pytest.approx(EARTH_MEAN_RADIUS_M * np.pi / 180, rel=1e-12)
    # antipodes (haversine is ill-conditioned there: ~1e-8 relative from rounding of the inputs)
    assert great_circle_distance(10, 20, -10, -160) == pytest.approx(np.pi * EARTH_MEAN_RADIUS_M, rel=1e-7)
    assert initial_bearing(0, 0, 1, 0) == pytest.approx(0.0, abs=1e-9)
    assert initial_bearing(0, 0, 0, 1) == pytest.approx(90.0)
    assert initial_bearing(0, 0, -1, 0) == pytest.approx(180.0)
    assert initial_bearing(0, 1, 0, 0) == pytest.approx(270.0)


@settings(max_examples=50, deadline=None)
@given(
    st.floats(-80, 80), st.floats(-180, 180), st.floats(-80, 80), st.floats(-180, 180),
)
def test_haversine_symmetric_and_bounded(la1, lo1, la2, lo2):
    a = great_circle_distance(la1, lo1, la2, lo2)
    b = great_circle_distance(la2, lo2, la1, lo1)
    assert a == pytest.approx(b, abs=1e-6)
    assert 0 <= a <= np.pi * EARTH_MEAN_RADIUS_M + 1e-6


T0 = datetime(2031, 3, 1, tzinfo=UTC)


def _pulse_obs(nt=49):
    """Hourly observations: one energetic hour (index 10) at every frequency, single direction."""
    f = np.array([1 / 20, 1 / 14, 1 / 10])
    dirs = np.array([270.0, 90.0])  # from the west (toward the spot, east) and from the east (away)
    e = np.zeros((nt, 3, 2))
    e[min(10, nt - 1)] = 1.0
    times = [T0 + timedelta(hours=i) for i in range(nt)]
    return times, f, dirs, e


def test_shift_moves_each_frequency_by_its_delay_long_periods_first():
    times, f, dirs, e = _pulse_obs()
    dist = 500e3
    target = [T0 + timedelta(minutes=10 * k) for k in range(6 * 48)]
    r = shift_to_spot(times, f, dirs, e, distance_m=dist, bearing_deg=90.0, target_times=target)
    peak_hours = np.array([np.argmax(r.efth[:, j, 0]) / 6 for j in range(3)])
    expected = 10 + dist / (G / (4 * np.pi * f)) / 3600
    assert np.all(np.abs(peak_hours - expected) <= 1 / 6 + 1e-9)
    assert np.all(np.diff(peak_hours) > 0)  # 20 s arrives before 14 s before 10 s
    # components from the east pass the spot first: the spot saw the 20 s pulse |Δt| = 8.9 h before the
    # station (signed delay); the slower ones before the first target time
    assert np.all(r.delay_s[:, 1] < 0)
    assert np.argmax(r.efth[:, 0, 1]) / 6 == pytest.approx(10 - dist / (G / (4 * np.pi * f[0])) / 3600, abs=1 / 6)
    # provenance: at the 20 s peak the source position is observation 10 (to within the grid)
    k = int(np.argmax(r.efth[:, 0, 0]))
    assert abs(r.source_position[k, 0, 0] - 10) <= 1 / 6 * 1.01
    assert r.dominant_observation[k] == 10


def test_shift_interpolates_linearly_and_is_exact_at_zero_distance():
    times, f, dirs, _ = _pulse_obs(5)
    rng = np.random.default_rng(3)
    e = rng.random((5, 3, 2))
    r = shift_to_spot(times, f, dirs, e, distance_m=0.0, bearing_deg=0.0, target_times=times)
    assert np.array_equal(r.efth, e)  # no distance, no delay, every component available
    assert r.first_observation.tolist() == [0, 1, 2, 3, 4]
    mid = [T0 + timedelta(minutes=90)]
    r = shift_to_spot(times, f, dirs, e, distance_m=0.0, bearing_deg=0.0, target_times=mid)
    assert np.allclose(r.efth[0], 0.5 * (e[1] + e[2]))
    assert (r.first_observation[0], r.last_observation[0]) == (1, 2)


def test_outside_observation_span_is_unavailable_not_extrapolated():
    times, f, dirs, e = _pulse_obs(5)
    e = e + 1.0
    r = shift_to_spot(times, f, dirs, e, distance_m=1e6, bearing_deg=90.0, target_times=[T0])
    assert not r.available.any() and r.coverage[0] == 0 and r.first_observation[0] == -1
    assert np.all(r.efth == 0)


def test_energy_coverage_weights_the_latest_observation_by_energy():
    # two westerly components of equal cell count but energy 9:1 (20 s : 10 s); after the last
    # observation the fast 20 s component is the first to run out of observed span, so the
    # coverage by cells is 1/2 while the energy coverage is 1/10 (exact, by construction)
    f = np.array([1 / 20, 1 / 10])
    dirs = np.array([270.0])
    times = [T0 + timedelta(hours=h) for h in range(48)]
    e = np.zeros((48, 2, 1))
    e[:, 0, 0], e[:, 1, 0] = 9.0 / 0.05, 1.0 / 0.05  # energy E·Δf = 9 and 1 (Δf = 0.05 Hz both)
    dist = 300e3
    d20, d10 = dist / (G / (4 * np.pi * f))  # deep-water group delays [s]
    # one target with everything observed, one where only the slow 10 s component still is
    late = times[-1] + timedelta(seconds=0.5 * (d20 + d10))
    r = shift_to_spot(times, f, dirs, e, distance_m=dist, bearing_deg=90.0, target_times=[times[-1], late])
    assert r.available[0].all() and r.energy_coverage[0] == pytest.approx(1.0)
    assert r.available[1].tolist() == [[False], [True]]
    assert r.coverage[1] == pytest.approx(0.5) and r.energy_coverage[1] == pytest.approx(0.1)
    # nothing arriving at all: zero, not NaN
    r = shift_to_spot(times, f, dirs, e, distance_m=dist, bearing_deg=270.0, target_times=[times[-1]])
    assert r.energy_coverage.tolist() == [0.0]


def test_input_validation_names_argument():
    times, f, dirs, e = _pulse_obs(5)
    with pytest.raises(InvalidInput, match="`efth`"):
        shift_to_spot(times, f, dirs, e[:, :2], distance_m=1.0, bearing_deg=0.0, target_times=times)
    bad = e.copy()
    bad[2, 1, 0] = np.nan
    with pytest.raises(InvalidInput, match=r"`efth`.*\(2, 1, 0\)"):
        shift_to_spot(times, f, dirs, bad, distance_m=1.0, bearing_deg=0.0, target_times=times)
    with pytest.raises(InvalidInput, match="`times`.*ascending"):
        shift_to_spot(times[::-1], f, dirs, e, distance_m=1.0, bearing_deg=0.0, target_times=times)
    with pytest.raises(InvalidInput, match="timezone-aware"):
        shift_to_spot([datetime(2031, 1, 1)], f, dirs, e[:1], distance_m=1.0, bearing_deg=0.0, target_times=[0])
    with pytest.raises(InvalidInput, match="`distance_m`"):
        arrival_delay(f, dirs, distance_m=-1.0, bearing_deg=0.0)
    with pytest.raises(InvalidInput, match="`lat1`"):
        great_circle_distance(91, 0, 0, 0)


def test_a_downstream_station_is_read_later_by_the_signed_delay():
    # the station is downstream (the spot 500 km west of it, bearing 270°): a component from the west
    # passes the spot first, so the spot at τ sees what the station saw at τ + |Δt| (Munk 1947: Δt = d/Cg)
    times, f, dirs, e = _pulse_obs()
    e[:] = 0.0
    e[30] = 1.0  # the pulse reaches the station at hour 30
    dist = 500e3
    target = [T0 + timedelta(minutes=10 * k) for k in range(6 * 48)]
    r = shift_to_spot(times, f, dirs, e, distance_m=dist, bearing_deg=270.0, target_times=target)
    lag_h = dist / (G / (4 * np.pi * f)) / 3600  # 8.9, 12.7, 17.8 h
    assert np.all(r.delay_s[:, 0] < 0) and np.allclose(-r.delay_s[:, 0] / 3600, lag_h)
    peak_hours = np.array([np.argmax(r.efth[:, j, 0]) / 6 for j in range(3)])
    assert np.all(np.abs(peak_hours - (30 - lag_h)) <= 1 / 6 + 1e-9)
    # a target time whose station time τ + |Δt| is after the last observation (hour 48) waits for it
    tau_h = np.arange(6 * 48) / 6
    for j in range(3):
        assert np.array_equal(r.available[:, j, 0], tau_h + lag_h[j] <= 48.0 + 1e-9)
    assert np.array_equal(r.awaiting, tau_h + lag_h.max() > 48.0 + 1e-9)
    # every component counts, downstream (from 270°) and upstream (from 90°) alike: the energy coverage
    # is 1 while every station time is observed (both ways), lower where any is not
    steady = shift_to_spot(times, f, dirs, np.ones_like(e), distance_m=dist, bearing_deg=270.0, target_times=target)
    whole = (tau_h + lag_h.max() <= 48.0 + 1e-9) & (tau_h - lag_h.max() >= -1e-9)
    assert whole.any() and np.allclose(steady.energy_coverage[whole], 1.0)
    assert np.all(steady.energy_coverage[~whole] < 1.0)
