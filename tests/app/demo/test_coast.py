"""The fictional demo coast: files readable as a user's, profiles valid, each spot kind has its feature."""

from __future__ import annotations

import hashlib
import math
import tomllib

import numpy as np
import pytest
from scipy import ndimage
from scipy.interpolate import RegularGridInterpolator

from app.demo import coast
from app.formats.grids import read_esri_ascii, read_netcdf_grid, to_depth_grid
from app.schemas.profile import SpotProfile

SPOT = {s.kind: s for s in coast.SPOTS}


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    directory = tmp_path_factory.mktemp("coast")
    return directory, coast.write_coast(directory)


@pytest.fixture(scope="module")
def grids():
    return {s.kind: coast.spot_grid(s) for s in coast.SPOTS}


def _sampler(grid):
    return RegularGridInterpolator((grid.y, grid.x), grid.depth)


def test_four_kinds_with_invented_slugs():
    assert sorted(SPOT) == ["bay", "beach", "point", "ridge"]
    assert len({s.id for s in coast.SPOTS}) == 4


def test_profiles_parse_and_validate(written):
    directory, profiles = written
    assert [p.name for p in profiles] == [f"{s.id}.toml" for s in coast.SPOTS]
    for path, spot in zip(profiles, coast.SPOTS, strict=True):
        data = tomllib.loads(path.read_text())
        for key in ("id", "name", "latitude", "longitude", "faces_deg", "timezone", "bathymetry", "break_points",
                    "model", "sources"):
            assert key in data, (path.name, key)
        profile = SpotProfile.model_validate(data)  # the project's strict schema (unknown fields refused)
        assert profile.id == spot.id
        assert profile.sources == list(coast.DEMO_SOURCE_IDS)
        assert 1 <= len(profile.break_points) <= 5
        assert (directory / profile.bathymetry.file).is_file()
        assert profile.bathymetry.datum == "MSL"


def test_grid_sizes_keep_table_builds_small(grids):
    for kind, g in grids.items():
        span_x, span_y = g.x[-1] - g.x[0], g.y[-1] - g.y[0]
        assert 4000 <= span_x <= 8000 and 4000 <= span_y <= 8000, kind
        assert 25.0 <= g.spacing <= 50.0, kind


def test_open_ocean_edges_are_deep(grids):
    # the west edge is open ocean everywhere; 60-110 m keeps rays leaving through open water
    for kind, g in grids.items():
        if kind == "bay":
            # the bay lies on a flat floor: its open sea edges (west and north water cells) are as
            # deep as the floor, above the 20 m the ray tracer needs to count an edge as open sea
            edges = np.concatenate([g.depth[:, 0], g.depth[-1, :]])
            water = edges[edges > 0.0]
            assert water.size > 100 and np.mean(water > 20.0) > 0.95 and water.max() < 30.0  # but where the coast meets the edge
            continue
        west = g.depth[:, 0]
        # the point's and the ridge's shelves shoal gently (1:100 and 1:150 at the shore), so their
        # west edges are shallower but still well above the 20 m an open edge needs
        floor = {"point": 25.0, "ridge": 40.0}.get(kind, 60.0)
        assert west.min() > floor and west.max() <= coast.SHELF_DEPTH_M, kind


def test_esri_files_read_back_with_the_project_reader(written, grids):
    directory, _ = written
    for kind in ("point", "bay", "beach"):
        spot = SPOT[kind]
        gd = read_esri_ascii(directory / spot.file_name)
        dg = to_depth_grid(gd, values="depth")
        np.testing.assert_allclose(dg.depth, grids[kind].depth, atol=0.006)  # two decimals in the file
        assert dg.x0 == pytest.approx(grids[kind].x[0]) and dg.y0 == pytest.approx(grids[kind].y[0])


def test_netcdf_is_gebco_style_and_places_the_peak(written):
    directory, _ = written
    spot = SPOT["ridge"]
    gd = read_netcdf_grid(directory / spot.file_name)
    assert gd.crs == "lonlat"
    assert np.all(np.diff(gd.x) > 0) and np.all(np.diff(gd.y) > 0)  # 1-D ascending lon / lat
    assert np.nanmin(gd.values) < -45.0 and np.nanmax(gd.values) > 0.0  # elevation: negative at sea
    dg = to_depth_grid(gd, values="elevation", origin=(spot.latitude, spot.longitude), spacing_m=spot.spacing_m)
    xs = dg.x0 + dg.dx * np.arange(dg.depth.shape[1])
    ys = dg.y0 + dg.dy * np.arange(dg.depth.shape[0])
    at = RegularGridInterpolator((ys, xs), dg.depth)
    for _, x, y in coast.break_points(spot):
        # resampled lon/lat -> local grid still puts each break point on its 2.5 m contour
        assert at([y, x])[0] == pytest.approx(coast.BREAK_DEPTH_M, abs=0.4)


def test_break_points_sit_on_the_break_contour(grids):
    for kind, spot in SPOT.items():
        at = _sampler(grids[kind])
        for name, x, y in coast.break_points(spot):
            assert at([y, x])[0] == pytest.approx(coast.BREAK_DEPTH_M, abs=0.3), (kind, name)


def test_write_is_deterministic(tmp_path, written):
    directory, _ = written
    coast.write_coast(tmp_path)
    for path in sorted(directory.iterdir()):
        assert hashlib.sha256(path.read_bytes()).digest() == hashlib.sha256((tmp_path / path.name).read_bytes()).digest(), path.name


def test_headland_protrudes_and_point_breaks_along_its_flank(grids):
    g = grids["point"]
    land = g.depth <= 0.0
    first_land_x = np.array([g.x[np.argmax(row)] if row.any() else np.inf for row in land])
    shore_far = np.median(first_land_x[np.abs(g.y + 1000.0) > 2000.0])
    shore_tip = first_land_x.min()
    assert shore_far - shore_tip > 2000.0  # the headland reaches > 2 km out from the coast
    assert abs(g.y[np.argmin(first_land_x)] + 1000.0) < 200.0
    pts = coast.break_points(SPOT["point"])
    xs = [x for _, x, _ in pts]
    ys = [y for _, _, y in pts]
    assert xs == sorted(xs) and ys == sorted(ys)  # strung out from the tip toward the inside, along the flank
    assert math.dist((xs[0], ys[0]), (xs[-1], ys[-1])) > 1000.0


def test_ridge_crest_is_shallower_than_its_flanks(grids):
    g = grids["ridge"]
    at = _sampler(g)
    # a finite, low ridge offshore (its crest at 80 % of the depth round it, the salient's bulging
    # contours adding to that nearer shore): above its flanks over its middle, gone before the 10 m contour
    for x in (-2600.0, -2000.0, -1400.0):
        crest = at([0.0, x])[0]
        flanks = 0.5 * (at([-1200.0, x])[0] + at([1200.0, x])[0])
        assert crest < 0.87 * flanks, x
    for x in (-4300.0,):  # (nearer shore the contours bulge seaward round the salient behind it)
        crest = at([0.0, x])[0]
        flanks = 0.5 * (at([-1200.0, x])[0] + at([1200.0, x])[0])
        assert crest > 0.9 * flanks, x
    peak, south, north = (dict((n, x) for n, x, _ in coast.break_points(SPOT["ridge"]))[k]
                          for k in ("peak", "south shoulder", "north shoulder"))
    assert peak < south and peak < north  # the shoal at the head of the ridge breaks first: a peak


def test_bay_has_an_island_that_is_land(grids):
    g = grids["bay"]
    land = g.depth <= 0.0
    labels, n = ndimage.label(land)
    edge = set(np.unique(np.concatenate([labels[0], labels[-1], labels[:, 0], labels[:, -1]]))) - {0}
    islands = [k for k in range(1, n + 1) if k not in edge]
    assert len(islands) == 1
    area_km2 = (labels == islands[0]).sum() * g.spacing**2 / 1e6
    assert area_km2 > 1.0
    ys, xs = np.nonzero(labels == islands[0])
    assert g.x[xs].max() < 0.0  # offshore of the bay (the bay's shore is at x > 1400 m)


def _first_land_along(grid, x0, y0, bearing_deg, step=20.0):
    """Distance to the first land cell along a straight line toward `bearing_deg`, or None at the edge."""
    at = _sampler(grid)
    b = math.radians(bearing_deg)
    d = 0.0
    while True:
        d += step
        x, y = x0 + d * math.sin(b), y0 + d * math.cos(b)
        if not (grid.x[0] <= x <= grid.x[-1] and grid.y[0] <= y <= grid.y[-1]):
            return None
        if at([y, x])[0] <= 0.0:
            return d


def test_bay_is_shut_to_the_west_and_open_to_the_north_west(grids):
    g = grids["bay"]
    at = _sampler(g)
    # from each break point's seaward side (about the 10 m reference depth, found along its
    # break line), straight lines toward where swell comes FROM (geometry only; refraction bends
    # real rays: the built tables are checked in test_demo_run.py)
    spot = SPOT["bay"]
    for name, (xs, ys), (xe, ye) in spot.break_lines:
        t = np.linspace(0.0, 1.0, 2001)
        px, py = xs + t * (xe - xs), ys + t * (ye - ys)
        h = at(np.stack([py, px], axis=-1))
        k = np.flatnonzero(h <= 10.0)[0]
        x0, y0 = px[k], py[k]
        for bearing in (200.0, 230.0, 255.0, 265.0, 275.0, 285.0):
            assert _first_land_along(g, x0, y0, bearing) is not None, (name, bearing)
        for bearing in (315.0, 322.0, 328.0, 340.0):
            assert _first_land_along(g, x0, y0, bearing) is None, (name, bearing)


def test_beach_deepens_monotonically_offshore_with_straight_contours(grids):
    g = grids["beach"]
    assert np.all(np.diff(g.depth, axis=1) <= 0.0)  # x east: depth never increases toward the shore
    xs = [x for _, x, _ in coast.break_points(SPOT["beach"])]
    assert max(xs) - min(xs) < 10.0  # the break contour is straight: normal swell breaks all at once
    sea = g.depth[:, g.x < 0.0]
    slope = -np.diff(sea, axis=1).mean() / g.spacing
    assert slope == pytest.approx(coast.BEACH_SLOPE, rel=0.02)


def test_open_coast_has_a_regional_grid_reaching_the_wave_base(written):
    # the regional grid (GEBCO-style NetCDF) is accepted beside each open-coast local grid (overlap,
    # no holes, same datum, depths that agree), and reaches the wave base L0/2 = gT²/4π (linear
    # theory) of the demo's longest period (20 s: 312 m) along its open edges
    from app.services.spots import load_profile
    from models.transfer import wave_base_period_s

    directory, profiles = written
    gd = read_netcdf_grid(directory / coast.REGION_FILE)
    assert gd.crs == "lonlat" and gd.variable == "elevation" and not np.isnan(gd.values).any()
    assert -gd.values.min() > 600.0  # down the continental slope
    for path, spot in zip(profiles, coast.SPOTS, strict=True):
        loaded = load_profile(path)
        if spot.id in coast.REGION_SPOTS:
            [region] = loaded.regional
            assert region.dx == pytest.approx(coast.REGION_SPACING_M)
            assert wave_base_period_s([loaded.grid, region]) > coast.PERIOD_MAX_S
        else:
            assert loaded.regional == ()
