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


# --------------------------------------------------------------------------- noisy and land edges
# The contours beyond an edge come from a plane fitted over a km-long strip (models.edges), not
# from the gradient at the exit cell: survey noise on the last cells must not move K.


def noisy_short_beach(sigma=0.1, band=100.0, seed=12):
    # the short beach with independent Gaussian noise of `sigma` [m] (0.5 % of the edge depth; an
    # echo-sounder survey's own scatter is of this order, common practice) on its last `band` metres
    g = short_beach()
    d = np.array(g.depth)
    near = g.x >= g.x[-1] - band
    d[:, near] += sigma * np.random.default_rng(seed).standard_normal((d.shape[0], int(near.sum())))
    return DepthGrid(d, g.x0, g.y0, g.dx, g.dy)


@pytest.fixture(scope="module")
def noisy_table():
    # default smoothing (two cells), as a spot's table is built; the exit-cell gradient of this
    # grid turns by up to ~10° from cell to cell, which moved K by up to 23 % (engine 4)
    return build_table(noisy_short_beach(), 200.0, 0.0, periods_s=PERIODS)


@pytest.mark.parametrize("p", range(len(PERIODS)))
def test_noise_near_the_edge_leaves_deep_water_snell(noisy_table, p):
    # Snell + shoaling over straight contours (Dean & Dalrymple 1991 ch. 4; SPM 1984 §2-III) for
    # 0-60° off the normal, within 3 % although the last 100 m of the grid are noisy
    t = noisy_table
    for angle in ANGLES:
        k = int(round((90.0 + angle) / 2.0))
        K, _ = snell_shoaling(PERIODS[p], t.reference_depth_m, angle)
        assert t.coefficient[p, k] == pytest.approx(K, rel=0.03), angle
        assert t.continued_fraction[p, k] == pytest.approx(1.0)


def flat_floor_with_coast(sigma=0.1, seed=3):
    # a flat 25 m floor (noisy by `sigma` m) west of a straight north-south coast at x = -500 m
    # (1:20 shelving face); the grid's north, south and west edges are open ocean, its east edge
    # land. The coast reaches the north and south edges, so beyond them it goes on north-south.
    dx = 50.0
    x = np.arange(-3000.0, 0.0 + dx / 2, dx)
    y = np.arange(-3000.0, 3000.0 + dx / 2, dx)
    X = np.broadcast_to(x[None, :], (y.size, x.size))
    h = np.clip((-500.0 - X) / 20.0, -5.0, 25.0)
    h = np.where(h > 20.0, h + sigma * np.random.default_rng(seed).standard_normal(h.shape), h)
    return DepthGrid(h, x[0], y[0], dx, dx)


def test_continued_directions_over_land_stay_closed():
    # At (-1500, 2000), 25 m deep, 1 km off the coast and 1 km from the north edge. A ray traced
    # back toward the north-north-east leaves the flat north edge in 25 m and would reach deep
    # water (engine 4 opened those directions, K up to 0.9, over the exit cell's noisy gradient),
    # but drawn from its exit point its deep-water direction crosses the coast continued north: the
    # swell would have come over land. Swell from the whole sea side (west half) still arrives.
    g = flat_floor_with_coast()
    t = build_table(g, -1500.0, 2000.0, periods_s=[12.0])
    assert t.meta["open_edges"] == ["south", "north", "west"]
    d = t.directions_deg
    land = (d > 1.0) & (d < 179.0)
    assert np.all(t.coefficient[0, land] == 0.0)
    sea = (d > 200.0) & (d < 340.0)
    assert np.all(t.coefficient[0, sea] > 0.5)


def test_continued_beam_never_narrower_than_at_the_edge():
    # Snell over straight contours only spreads a beam: dθ0/dθe = (C0/Ce)·cos αe / cos α0 > 1
    # (Kr = sqrt(cos θ0 / cos θ) < 1: Dean & Dalrymple 1991 ch. 4). Two continued rays whose
    # deep-water directions lie closer together than their exit directions (contour normals that
    # differ between them) are spread over the exit interval instead: K² ≤ the edge's value.
    from models.rays import OPEN
    from models.transfer import _map_period

    st = np.array([OPEN, OPEN, 1])  # a pair, then a blocked ray closing the cycle
    d_off = np.array([100.0, 100.5, 0.0])  # deep-water FROM directions: 0.5° apart
    d_exit = np.array([95.0, 99.0, 0.0])  # exit directions: 4° apart
    ones = np.ones(3)
    args = (st, d_off, np.array([10.0, 20.0, 30.0]), ones, ones, ones)
    gap = np.array([10.0, 10.0, 340.0])
    cont = np.array([1.0, 1.0, 0.0])
    acc, _ = _map_period(*args, cont, gap, 1.0, 180, 2.0, 10.0, d_exit)
    # 10° of launch measure spread over 4° (98.25-102.25°): 2.5 per degree, never 20 (over 0.5°)
    e = acc[:, 0]
    assert e.sum() == pytest.approx(10.0)
    assert e.max() / 2.0 <= 2.5 + 1e-9
    # not continued: the interval is the deep-water one (refraction on the grid is data)
    acc2, _ = _map_period(*args, np.zeros(3), gap, 1.0, 180, 2.0, 10.0, d_exit)
    assert acc2[:, 0].max() == pytest.approx(10.0)


def test_flat_floor_gives_normal_incidence_shoaling_in_every_direction():
    # A flat 24 m floor whose grid ends short of the wave base (L0/2 = 78 m at 10 s, 200 m at 16 s):
    # no contours on it, so rays go on straight, each meeting the contours beyond square on. Snell
    # then bends nothing and K is the shoaling coefficient alone, Ks = sqrt(Cg0 / Cg(24 m)) (Dean &
    # Dalrymple 1991 ch. 3; SPM 1984 §2-III), from every direction: reading C0·Cg0 without the
    # deep-water spreading would make it sqrt(C0/C) (13-25 %) too large.
    dx = 50.0
    g = DepthGrid(np.full((81, 81), 24.0), -2000.0, -2000.0, dx, dx)
    t = build_table(g, 0.0, 0.0, periods_s=[10.0, 16.0])
    for p, T in enumerate([10.0, 16.0]):
        ks = math.sqrt(0.5 * G * T / (2 * np.pi) / group_velocity(1.0 / T, 24.0))
        np.testing.assert_allclose(t.coefficient[p], ks, rtol=0.01)
        assert t.continued_fraction[p].min() == pytest.approx(1.0)
