"""Rays that leave the grid short of the wave base, and the deep-water invariant.

Analytic answers used:
- straight parallel contours: Snell's law sin θ / C = sin θ0 / C0 and H = H0·Ks·Kr with
  Ks = sqrt(Cg0/Cg), Kr = sqrt(cos θ0 / cos θ) (Dean & Dalrymple 1991 ch. 4; SPM 1984 §2-III;
  Coastal Engineering Manual Part II ch. 3). Over a planar beach whose grid ends in intermediate
  depth the engine continues each ray over straight contours beyond the edge, so the table must
  reproduce deep-water Snell + shoaling for every period, not only those whose wave base is on
  the grid.
- the invariant E·C·Cg along rays (Longuet-Higgins 1957) read in deep water: C0·Cg0 = g²/(2ω²).
  At the wave base L0/2 linear theory gives C·Cg = 1.016·C0·Cg0 (computed here with
  models.waves), so a table that used the local value there would be about 0.8 % high in K.
"""

import math

import numpy as np
import pytest

from models.bathymetry import DepthGrid
from models.transfer import TransferTable, build_table
from models.waves import group_velocity, phase_speed

G = 9.80665
PERIODS = [10.0, 14.0, 18.0, 22.0]
ANGLES = [0.0, 16.0, 30.0, 44.0, 60.0, -30.0, -60.0]  # on 2° bin centres


def short_beach(dx=10.0, x_end=420.0, half_width=2500.0):
    # depth 0.05·x, shore along x = 0, sea to the east; the grid ends at x_end (21 m): short of the
    # wave base of every period here (L0/2 = 78 m at 10 s, 378 m at 22 s)
    x = np.arange(0.0, x_end + dx / 2, dx)
    y = np.arange(-half_width, half_width + dx / 2, dx)
    return DepthGrid(0.05 * x[None, :] * np.ones((y.size, 1)), 0.0, -half_width, dx, dx)


def snell_shoaling(T, h_ref, angle_deg):
    """Deep-water Snell + shoaling: (K = Ks·Kr, nearshore angle from the normal [deg])."""
    f = 1.0 / T
    c0 = G * T / (2 * np.pi)
    th0 = math.radians(angle_deg)
    th = math.asin(math.sin(th0) * phase_speed(f, h_ref) / c0)
    ks = math.sqrt(0.5 * c0 / group_velocity(f, h_ref))
    return ks * math.sqrt(math.cos(th0) / math.cos(th)), math.degrees(th)


@pytest.fixture(scope="module")
def short_table():
    return build_table(short_beach(), 200.0, 0.0, periods_s=PERIODS, smoothing_m=0.0)


@pytest.mark.parametrize("p", range(len(PERIODS)))
@pytest.mark.parametrize("angle", ANGLES)
def test_grid_ending_at_20m_matches_deep_water_snell(short_table, p, angle):
    t = short_table
    assert t.meta["open_edges"] == ["east"]  # the 21 m edge is the only open one
    k = int(round((90.0 + angle) / 2.0))  # offshore FROM bearing 90 + angle, 2° bins
    K, th = snell_shoaling(PERIODS[p], t.reference_depth_m, angle)
    assert t.coefficient[p, k] == pytest.approx(K, rel=0.03)
    assert t.nearshore_direction_deg[p, k] - 90.0 == pytest.approx(th, abs=0.5)
    # every ray that brings this swell was continued beyond the edge, and the table says so
    assert t.continued_fraction[p, k] == pytest.approx(1.0)


def test_long_period_window_is_not_cut_at_the_edge(short_table):
    # the case: 16 s-like swell 40° off the normal used to get K = 0 (the edge direction
    # was kept, so offshore directions beyond asin(C_edge/C0) received nothing). Now the window
    # spans the whole sea side, up to 80° off the normal, for every period.
    t = short_table
    d = t.directions_deg
    sea = (d > 11.0) & (d < 169.0)
    assert np.all(t.coefficient[:, sea] > 0.3)
    land = (d > 181.0) & (d < 359.0)
    assert np.all(t.coefficient[:, land] == 0.0)


def test_rays_past_the_wave_base_use_deep_water_invariant():
    # planar slope to 400 m: 10 s rays cross L0/2 = 78 m on the grid. Normal incidence: K = Ks at
    # the reference depth. Reading C·Cg at L0/2 (1.6 % above C0·Cg0) would make K 0.8 % high; the
    # wave-base convention itself leaves C0/C(L0/2) - 1 = 0.37 % in K² (0.2 % in K).
    dx = 50.0
    x = np.arange(0, 8000 + dx, dx)
    y = np.arange(-4000, 4000 + dx, dx)
    g = DepthGrid(np.minimum(0.05 * x[None, :], 400.0) * np.ones((y.size, 1)), 0.0, -4000.0, dx, dx)
    t = build_table(g, 200.0, 0.0, periods_s=[10.0], smoothing_m=0.0)
    f, hb = 0.1, 0.5 * G * 100 / (2 * np.pi)
    c0 = G * 10.0 / (2 * np.pi)
    assert phase_speed(f, hb) * group_velocity(f, hb) / (0.5 * c0 * c0) == pytest.approx(1.016, abs=0.001)
    K, _ = snell_shoaling(10.0, t.reference_depth_m, 0.0)
    assert t.coefficient[0, 45] == pytest.approx(K, rel=0.003)
    assert t.continued_fraction[0, 45] == 0.0  # deep before the edge: nothing continued


def test_trapped_rays_along_the_coast_stay_blocked():
    # a ray leaving the east edge almost along the coast (sin α > C_edge/C0) cannot have come from
    # deep water over straight contours (Snell has no real angle): directions 80°+ off the normal
    # that reach the reference point only that way stay shut; nothing arrives from land either
    t = build_table(short_beach(), 200.0, 0.0, periods_s=[22.0], smoothing_m=0.0)
    assert t.meta["blocked_fraction_by_period"][0] > 0.5  # the landward half and trapped rays
    assert np.all(t.continued_fraction[0][t.coefficient[0] > 0] > 0.99)


def test_continued_fraction_roundtrips_and_defaults_to_zero(short_table):
    d = short_table.to_arrays()
    back = TransferTable.from_arrays(d)
    np.testing.assert_array_equal(back.continued_fraction, short_table.continued_fraction)
    old = TransferTable.from_arrays({k: v for k, v in d.items() if k != "continued_fraction"})
    assert old.continued_fraction.shape == short_table.coefficient.shape
    assert not old.continued_fraction.any()
