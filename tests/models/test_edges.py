"""Contours beyond a grid edge (models.edges): plane fits over strips, coasts continued beyond.

Checks against exact geometry: least squares recovers a plane's gradient, with independent noise
to within a small error (ordinary least squares is unbiased under independent noise, the
Gauss–Markov theorem; Draper & Smith 1998 ch. 2, from memory); a flat noisy strip has no contours
and a flat bottom does not refract (Snell with C constant: the direction is kept); Snell's law at
the edge (Munk & Arthur 1952).
"""

import math

import numpy as np
import pytest

from models.bathymetry import DepthGrid
from models.edges import EDGES, continue_to_deep, edge_contours


def plane_grid(bearing_deg, slope=0.01, h0=30.0, sigma=0.0, n=121, dx=50.0, seed=5):
    # depth increasing toward nautical `bearing_deg` (the seaward normal), centred on the grid
    x = dx * (np.arange(n) - n // 2)
    X, Y = np.meshgrid(x, x)
    b = math.radians(bearing_deg)
    h = h0 + slope * (X * math.sin(b) + Y * math.cos(b))
    h = h + sigma * np.random.default_rng(seed).standard_normal(h.shape)
    return DepthGrid(h, x[0], x[0], dx, dx)


def bearing(v):
    return (math.degrees(math.atan2(v[0], v[1]))) % 360.0


@pytest.mark.parametrize("b", [250.0, 270.0, 300.0])
def test_plane_normal_is_recovered_on_every_edge_it_leaves(b):
    ec = edge_contours(plane_grid(b, sigma=0.3))
    for side, name in enumerate(EDGES):
        out = {"south": 180.0, "north": 0.0, "west": 270.0, "east": 90.0}[name]
        if abs(((b - out + 180.0) % 360.0) - 180.0) < 90.0:  # the bottom deepens out through this edge
            assert ec.fitted[side].all(), name
            for v in ec.normals[side][::10]:
                assert bearing(v) == pytest.approx(b, abs=1.0), name


def test_flat_noisy_floor_takes_the_edge_normal():
    ec = edge_contours(plane_grid(270.0, slope=0.0, sigma=0.3))
    for side, name in enumerate(EDGES):
        assert not ec.fitted[side].any(), name
        out = {"south": 180.0, "north": 0.0, "west": 270.0, "east": 90.0}[name]
        assert bearing(ec.normals[side][0]) == pytest.approx(out)
    # a ray leaving such an edge goes on straight, even at 60° off the edge normal
    g = plane_grid(270.0, slope=0.0, sigma=0.3)
    th = np.array([math.radians(180.0 - 60.0)])
    reach, th0, straight = continue_to_deep(g, np.array([g.x0]), np.array([0.0]), np.array([30.0]), th, np.array([0.6]),
                                  np.array([2]))  # fmt: skip
    assert reach[0] and straight[0] and th0[0] == pytest.approx(th[0])


def test_snell_at_the_edge():
    # contours along the west edge (normal 270°): sin α0 = sin αe · C0/Ce (Munk & Arthur 1952)
    g = plane_grid(270.0)
    th_e = math.radians(180.0 - 20.0)  # travelling west-north-west: 20° from the normal (math angle)
    ratio = 0.6
    reach, th0, _ = continue_to_deep(g, np.array([g.x0]), np.array([0.0]), np.array([30.0]),
                                  np.array([th_e]), np.array([ratio]), np.array([2]))  # fmt: skip
    assert reach[0]
    # 20° north of west at the edge -> further north of west in deep water
    assert math.sin(math.pi - th0[0]) == pytest.approx(math.sin(math.radians(20.0)) / ratio, abs=1e-9)
    # beyond asin(Ce/C0) the ray is trapped
    reach, _, _ = continue_to_deep(g, np.array([g.x0]), np.array([0.0]), np.array([30.0]),
                                np.array([math.radians(180.0 - 40.0)]), np.array([ratio]), np.array([2]))  # fmt: skip
    assert not reach[0]
