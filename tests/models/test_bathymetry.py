"""DepthGrid: layout, interpolation, gradient, smoothing, edges, contour geometry.

Analytic answers: bilinear interpolation and centred differences are exact on a plane
(depth linear in x and y); a Gaussian filter leaves a plane unchanged away from the edges.
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from models.bathymetry import DepthGrid
from models.errors import InvalidInput


def plane(nx=21, ny=11, dx=10.0, dy=20.0, a=0.02, b=-0.01, c=5.0, x0=-100.0, y0=50.0):
    x = x0 + dx * np.arange(nx)
    y = y0 + dy * np.arange(ny)
    return DepthGrid(c + a * x[None, :] + b * y[:, None], x0, y0, dx, dy), (a, b, c)


def test_layout_row0_is_south():
    d = np.array([[1.0, 2.0], [3.0, 4.0]])
    g = DepthGrid(d, 0.0, 0.0, 10.0, 10.0)
    assert g.depth_at(0.0, 0.0) == 1.0  # south-west
    assert g.depth_at(10.0, 0.0) == 2.0  # south-east
    assert g.depth_at(0.0, 10.0) == 3.0  # north-west
    assert g.depth_at(5.0, 5.0) == pytest.approx(2.5)  # bilinear centre = mean of corners


@settings(max_examples=60, deadline=None)
@given(st.floats(-100, 100), st.floats(50, 250))
def test_plane_is_exact(x, y):
    # bilinear and centred-difference gradient are exact for a linear depth (analytic)
    g, (a, b, c) = plane()
    assert g.depth_at(x, y) == pytest.approx(c + a * x + b * y, abs=1e-9)
    gx, gy = g.gradient_at(x, y)
    assert gx == pytest.approx(a, abs=1e-12)
    assert gy == pytest.approx(b, abs=1e-12)


def test_vectorised_shapes_and_edge_clamp():
    g, (a, b, c) = plane()
    xs = np.linspace(-100, 100, 12).reshape(3, 4)
    assert g.depth_at(xs, 100.0).shape == (3, 4)
    # off-grid points take the nearest edge value
    assert g.depth_at(-1e6, 50.0) == pytest.approx(g.depth_at(-100.0, 50.0))


def test_gradient_continuous_across_cells():
    rng = np.random.default_rng(1)
    g = DepthGrid(10 + rng.random((8, 8)), 0.0, 0.0, 1.0, 1.0)
    e = 1e-9
    gx1, gy1 = g.gradient_at(3.0 - e, 2.5)
    gx2, gy2 = g.gradient_at(3.0 + e, 2.5)
    assert gx1 == pytest.approx(gx2, abs=1e-6) and gy1 == pytest.approx(gy2, abs=1e-6)


def test_validation_names_the_argument():
    with pytest.raises(InvalidInput, match="`depth`"):
        DepthGrid(np.ones(5), 0, 0, 1, 1)
    with pytest.raises(InvalidInput, match="`dx`"):
        DepthGrid(np.ones((3, 3)), 0, 0, -1.0, 1)
    with pytest.raises(InvalidInput, match="`x0`"):
        DepthGrid(np.ones((3, 3)), float("nan"), 0, 1, 1)
    with pytest.raises(InvalidInput, match="no water"):
        DepthGrid(-np.ones((3, 3)), 0, 0, 1, 1)
    with pytest.raises(InvalidInput, match="inf"):
        DepthGrid(np.array([[1.0, np.inf], [1, 1]]), 0, 0, 1, 1)


def test_land_mask_and_nan_as_land():
    d = np.array([[5.0, -2.0], [np.nan, 3.0]])
    g = DepthGrid(d, 0, 0, 1, 1)
    assert g.land_mask.tolist() == [[False, True], [True, False]]
    assert g.depth_at(0.0, 1.0) == 0.0  # no data interpolates as land (depth 0)


def test_smoothing_keeps_plane_keeps_land_and_records_length():
    x = np.arange(60) * 10.0
    d = 2.0 + 0.05 * x[None, :] * np.ones((40, 1))
    d[:, :3] = -1.0  # land strip
    d[20, 30] = 40.0  # a spike
    g = DepthGrid(d, 0, 0, 10.0, 10.0)
    s = g.smoothed(20.0)
    assert s.meta["smoothing_m"] == 20.0
    assert np.array_equal(s.land_mask, g.land_mask)
    assert np.all(s.depth[~s.land_mask] > 0)
    # spike spread out; the plane far from land and spike is unchanged (Gaussian of a linear field)
    assert s.depth[20, 30] < 20.0
    assert s.depth[5, 45] == pytest.approx(d[5, 45], rel=1e-9)
    with pytest.raises(InvalidInput, match="`length_m`"):
        g.smoothed(-1.0)


def test_deep_edges():
    x = np.arange(30) * 10.0
    d = 0.5 * x[None, :] * np.ones((10, 1)) - 20.0  # land in the west, 125 m in the east
    g = DepthGrid(d, 0, 0, 10.0, 10.0)
    e = g.deep_edges(50.0)
    assert e.east.all() and not e.west.any()
    assert e.south.sum() == np.count_nonzero(d[0] >= 50.0)
    assert e.open_edges(min_fraction=0.6) == ["east"]  # 16 of 30 south/north cells are deep


def test_contour_geometry_normal_points_seaward():
    # depth increasing toward the east: the seaward normal bears 90 deg; slope = |grad h|
    g, _ = plane(a=0.03, b=0.0)
    cg = g.contour_geometry(0.0, 100.0)
    assert cg.slope == pytest.approx(0.03)
    assert cg.normal_deg == pytest.approx(90.0)
    g2, _ = plane(a=0.0, b=0.02)  # deeper toward the north: normal bears 0 (360) deg
    assert g2.contour_geometry(0.0, 100.0).normal_deg % 360.0 == pytest.approx(0.0, abs=1e-9)


def test_pickle_roundtrip_drops_caches():
    import pickle

    g, _ = plane()
    g.depth_at(0.0, 100.0)  # builds the cache
    g2 = pickle.loads(pickle.dumps(g))
    assert "_fields" not in g2.__dict__
    assert g2.depth_at(0.0, 100.0) == g.depth_at(0.0, 100.0)
    assert g.to_bytes() == g2.to_bytes()
