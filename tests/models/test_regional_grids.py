"""Nested grids: a fine local grid inside coarse regional grids (models.transfer `regional=`).

Analytic answers used:
- straight parallel contours: deep-water Snell's law and H = H0·Ks·Kr (Dean & Dalrymple 1991
  ch. 4; SPM 1984 §2-III; Coastal Engineering Manual Part II ch. 3). A planar beach cut at 21 m
  and nested in a coarse grid of the same plane that reaches the wave base of every period must
  give the same K as the plane itself: the rays go on from the local grid into the regional one.
- O'Reilly & Guza (1993, Coastal Eng. 19, 263-282) nested a fine local grid in regional
  bathymetry in the same way (the method, from memory).
"""

import math

import numpy as np
import pytest

from models.bathymetry import DepthGrid
from models.errors import InvalidInput
from models.transfer import build_table, input_hash
from models.waves import group_velocity, phase_speed

G = 9.80665

PERIODS = [10.0, 16.0, 22.0]
ANGLES = [0.0, 20.0, 40.0, 60.0, -40.0]


def short_beach(dx=10.0, x_end=420.0, half_width=2500.0):
    # depth 0.05·x on 10 m cells, cut at x = 420 m (21 m): short of every wave base here
    x = np.arange(0.0, x_end + dx / 2, dx)
    y = np.arange(-half_width, half_width + dx / 2, dx)
    return DepthGrid(0.05 * x[None, :] * np.ones((y.size, 1)), 0.0, -half_width, dx, dx)


def snell_shoaling(T, h_ref, angle_deg):
    """Deep-water Snell + shoaling: (K = Ks·Kr, nearshore angle from the normal [deg])."""
    f, c0 = 1.0 / T, G * T / (2 * np.pi)
    th0 = math.radians(angle_deg)
    th = math.asin(math.sin(th0) * phase_speed(f, h_ref) / c0)
    ks = math.sqrt(0.5 * c0 / group_velocity(f, h_ref))
    return ks * math.sqrt(math.cos(th0) / math.cos(th)), math.degrees(th)


def coarse_plane(dx=100.0, x_end=9000.0, half_width=14000.0, cap=450.0):
    # the same 1:20 plane on 100 m cells, to 450 m: beyond the 22 s wave base (378 m)
    x = np.arange(0.0, x_end + dx / 2, dx)
    y = np.arange(-half_width, half_width + dx / 2, dx)
    d = np.minimum(0.05 * x[None, :], cap) * np.ones((y.size, 1))
    return DepthGrid(d, 0.0, -half_width, dx, dx, meta={"smoothing_m": 0.0})


@pytest.fixture(scope="module")
def nested_table():
    return build_table(short_beach(), 200.0, 0.0, periods_s=PERIODS, smoothing_m=0.0, regional=[coarse_plane()])


@pytest.mark.parametrize("p", range(len(PERIODS)))
@pytest.mark.parametrize("angle", ANGLES)
def test_nested_planar_beach_matches_deep_water_snell(nested_table, p, angle):
    t = nested_table
    k = int(round((90.0 + angle) / 2.0))
    K, th = snell_shoaling(PERIODS[p], t.reference_depth_m, angle)
    assert t.coefficient[p, k] == pytest.approx(K, rel=0.03)
    assert t.nearshore_direction_deg[p, k] - 90.0 == pytest.approx(th, abs=0.5)
    # the regional grid reaches the wave base: nothing rests on assumed contours
    assert t.continued_fraction[p, k] == pytest.approx(0.0, abs=1e-9)


def test_regional_grid_is_recorded_and_blocks_like_land(nested_table):
    assert nested_table.meta["regional_grids"][0]["spacing_m"] == [100.0, 100.0]
    # an island in the regional grid, 3 km offshore due east of the reference point: it shadows
    # the shore-normal directions that the local grid alone leaves open (it lies beyond that grid)
    g = coarse_plane()
    X, Y = np.meshgrid(g.x, g.y)
    d = np.where((X - 3000.0) ** 2 + Y**2 < 500.0**2, -5.0, g.depth)
    island = DepthGrid(d, g.x0, g.y0, g.dx, g.dy, meta={"smoothing_m": 0.0})
    t = build_table(short_beach(), 200.0, 0.0, periods_s=[10.0], smoothing_m=0.0, regional=[island])
    assert t.coefficient[0, 45] < 0.05 < nested_table.coefficient[0, 45]
    assert t.coefficient[0, 45 + 20] == pytest.approx(nested_table.coefficient[0, 45 + 20], rel=0.03)  # 40° off: clear


def test_regional_grid_without_overlap_is_refused():
    far = DepthGrid(np.full((5, 5), 100.0), 50000.0, 50000.0, 1000.0, 1000.0)
    with pytest.raises(InvalidInput, match=r"`regional\[0\]`.*does not overlap"):
        build_table(short_beach(), 200.0, 0.0, periods_s=[10.0], regional=[far])


def test_input_hash_covers_every_grid():
    a, b = short_beach(), coarse_plane()
    h0 = input_hash(a, reference_depth_m=10.0)
    h1 = input_hash(a, regional=[b], reference_depth_m=10.0)
    d = b.depth.copy()
    d[3, 3] += 0.01
    h2 = input_hash(a, regional=[DepthGrid(d, b.x0, b.y0, b.dx, b.dy)], reference_depth_m=10.0)
    assert len({h0, h1, h2}) == 3
    assert h1 == input_hash(a, regional=[b], reference_depth_m=10.0)
