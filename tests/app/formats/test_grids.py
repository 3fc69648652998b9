"""Bathymetry grid readers (app.formats.grids) on small hand-made files with known values."""

from __future__ import annotations

import math
from dataclasses import replace

import h5netcdf
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp
from scipy.io import netcdf_file

from app.formats.grids import (
    GridData,
    GridError,
    format_esri_ascii,
    parse_esri_ascii,
    parse_xyz,
    read_esri_ascii,
    read_netcdf_grid,
    read_xyz,
    to_depth_grid,
)
from models.bathymetry import DepthGrid
from models.geodesy import to_lonlat

# 3 rows x 4 columns; file row 1 is the north row (ESRI "ASCII to Raster" layout, docs/formats.md §5).
ASC_BODY = """\
1 2 3 4
5 6 -9999 8
9 10 11 12
"""
ASC_CORNER = "NCOLS 4\nNROWS 3\nXLLCORNER 100\nYLLCORNER 200\nCELLSIZE 10\nNODATA_VALUE -9999\n" + ASC_BODY
ASC_CENTRE = "ncols 4\nnrows 3\nxllcenter 105\nyllcenter 205\ncellsize 10\nnodata_value -9999\n" + ASC_BODY


# --- ESRI ASCII --------------------------------------------------------------------------------


def test_corner_and_centre_registration_give_identical_cell_centres():
    # Centre = corner + cellsize/2 (Esri "ASCII raster format" header definition, docs/formats.md §5).
    a = parse_esri_ascii(ASC_CORNER, name="corner.asc")
    b = parse_esri_ascii(ASC_CENTRE, name="centre.asc")
    np.testing.assert_array_equal(a.x, [105.0, 115.0, 125.0, 135.0])
    np.testing.assert_array_equal(a.y, [205.0, 215.0, 225.0])
    np.testing.assert_array_equal(a.x, b.x)
    np.testing.assert_array_equal(a.y, b.y)
    np.testing.assert_array_equal(a.values, b.values)


def test_first_row_is_north_and_nodata_is_masked():
    g = parse_esri_ascii(ASC_CORNER, name="corner.asc")
    assert g.shape == (3, 4)
    assert g.y[-1] == g.y.max()
    np.testing.assert_array_equal(g.values[-1], [1, 2, 3, 4])  # first file row -> northernmost y
    np.testing.assert_array_equal(g.values[0], [9, 10, 11, 12])  # last file row -> row 0 (south)
    assert np.isnan(g.values[1, 2]) and np.count_nonzero(np.isnan(g.values)) == 1
    assert g.crs == "local" and g.source == "corner.asc"


def test_line_breaks_are_optional_and_keys_any_case():
    text = "NCols 4\nnRows 3\nXllCorner 100\nyllCORNER 200\nCellSize 10\nnodata_VALUE -9999\n" + " ".join(
        ASC_BODY.split()
    )
    np.testing.assert_array_equal(parse_esri_ascii(text).values, parse_esri_ascii(ASC_CORNER).values)
    ragged = ASC_CORNER.replace("1 2 3 4\n5 6", "1 2\n3 4 5\n6")
    np.testing.assert_array_equal(parse_esri_ascii(ragged).values, parse_esri_ascii(ASC_CORNER).values)


def test_dx_dy_header_for_rectangular_cells():
    text = "ncols 4\nnrows 3\nxllcorner 0\nyllcorner 0\ndx 10\ndy 4\n" + ASC_BODY
    g = parse_esri_ascii(text)
    np.testing.assert_array_equal(g.x, [5.0, 15.0, 25.0, 35.0])
    np.testing.assert_array_equal(g.y, [2.0, 6.0, 10.0])
    assert g.spacing() == (10.0, 4.0)


def test_read_from_file(tmp_path):
    p = tmp_path / "reef.asc"
    p.write_text(ASC_CENTRE)
    g = read_esri_ascii(p)
    assert g.source == str(p) and g.shape == (3, 4) and g.crs == "local"
    assert read_esri_ascii(p, crs="lonlat").crs == "lonlat"
    with pytest.raises(GridError, match=r"missing\.asc: cannot open file"):
        read_esri_ascii(tmp_path / "missing.asc")
    (tmp_path / "bin.asc").write_bytes(b"\xff\xfe\x00\x81")
    with pytest.raises(GridError, match=r"bin\.asc: not a UTF-8 text file"):
        read_esri_ascii(tmp_path / "bin.asc")


def test_lonlat_asc_projected_to_local_metres():
    # 0.001 deg cells about (lat0, lon0) = (0.0045, 0.0045), elevation positive up.
    text = "ncols 10\nnrows 10\nxllcorner 0\nyllcorner 0\ncellsize 0.001\n" + "\n".join(
        " ".join(str(-10 - c) for c in range(10)) for _ in range(10)
    )
    d = to_depth_grid(parse_esri_ascii(text, crs="lonlat"), values="elevation", origin=(0.0045, 0.0045))
    # 0.001 deg of longitude near the equator = 111.32 m (N cos φ Δλ, a = 6378137 m; WGS 84).
    assert d.dx == pytest.approx(111.319, abs=1e-3)
    assert d.depth_at(0.0, 0.0) == pytest.approx(14.0, abs=1e-6)  # origin = centre of column 4 (0.0005 + 4 * 0.001)
    assert d.depth[:, -1].mean() > d.depth[:, 0].mean()  # deeper to the east


@pytest.mark.parametrize(
    "text, line, reason",
    [
        (
            ASC_CORNER.replace("9 10 11 12\n", "9 10 11\n"),
            9,
            "expected NROWS×NCOLS = 3×4 = 12 values, found 11",
        ),
        (ASC_CORNER.replace("9 10 11 12\n", "9 10 11 12 13\n"), 9, "found 13"),
        (ASC_CORNER.replace("5 6 -9999 8", "5 six -9999 8"), 8, "'six' is not a number"),
        (ASC_CORNER.replace("5 6 -9999 8", "5 6 inf 8"), 8, "'inf' is not finite"),
        (ASC_CORNER.replace("NROWS 3\n", ""), 6, "missing header key NROWS"),
        (ASC_CORNER.replace("YLLCORNER 200\n", ""), 6, "missing header key YLLCORNER or YLLCENTER"),
        (ASC_CORNER.replace("CELLSIZE 10\n", ""), 6, "missing header key CELLSIZE"),
        (ASC_CORNER.replace("CELLSIZE 10", "CELLSIZE 0"), 5, "CELLSIZE must be positive"),
        (ASC_CORNER.replace("CELLSIZE 10", "CELLSIZE -2.5"), 5, "CELLSIZE must be positive"),
        (ASC_CORNER.replace("NCOLS 4", "NCOLS 4.5"), 1, "NCOLS must be a positive integer"),
        (
            ASC_CORNER.replace("XLLCORNER", "XLLCORNR"),
            3,
            "unknown header key or non-numeric token 'XLLCORNR'",
        ),
        (ASC_CORNER.replace("CELLSIZE 10\n", "CELLSIZE 10\nCELLSIZE 10\n"), 6, "given twice"),
        (ASC_CORNER.split("1 2 3 4")[0], 6, "no values after the header"),
    ],
)
def test_bad_esri_ascii_names_file_line_and_reason(text, line, reason):
    with pytest.raises(GridError) as err:
        parse_esri_ascii(text, name="bad.asc")
    assert err.value.file == "bad.asc" and err.value.line == line
    assert reason in str(err.value) and str(err.value).startswith(f"bad.asc:{line}: ")
    assert isinstance(err.value, ValueError)


_finite = st.floats(-1e4, 1e4, allow_nan=False, width=64).filter(lambda v: v != -9999.0)  # NODATA


@settings(max_examples=60, deadline=None)
@given(
    values=hnp.arrays(
        np.float64,
        st.tuples(st.integers(2, 6), st.integers(2, 6)),
        elements=st.one_of(_finite, st.just(np.nan)),
    ),
    x0=st.floats(-1e5, 1e5),
    y0=st.floats(-1e5, 1e5),
    cell=st.floats(0.01, 1000.0),
)
def test_written_asc_parses_back_identical(values, x0, y0, cell):
    ny, nx = values.shape
    grid = GridData(values, x0 + cell * np.arange(nx), y0 + cell * np.arange(ny), "local", "h.asc")
    # Values come back bit for bit (shortest round-trip repr; NaN <-> NODATA); coordinates to
    # rounding, since the cell size is re-derived from the cell centres.
    for registration in ("center", "corner"):
        back = parse_esri_ascii(format_esri_ascii(grid, registration=registration), name="h.asc")
        np.testing.assert_array_equal(back.values, grid.values)  # NaN positions compare equal too
        assert back.x[0] == pytest.approx(grid.x[0], rel=1e-12, abs=1e-9)
        np.testing.assert_allclose(back.x, grid.x, rtol=1e-12, atol=1e-9)
        np.testing.assert_allclose(back.y, grid.y, rtol=1e-12, atol=1e-9)


# --- NetCDF --------------------------------------------------------------------------------------


LON = np.round(np.arange(-0.02, 0.0201, 0.005), 6)  # 9 columns
LAT_DESC = np.round(np.arange(0.03, -0.0301, -0.005), 6)  # 13 rows, north-up as GEBCO tiles often are


def elevation_field(lon, lat):
    """A planar sea floor: sea to the west (deeper), rising to the north; metres, positive up."""
    return -50.0 + 2000.0 * lon + 500.0 * lat


def write_gebco_like(path, *, fill_at=None):
    # GEBCO layout: elevation(lat, lon) int16 m, negative below sea level, 1-D cell-centre lat/lon
    # (gebco.net data formats page, per docs/formats.md §5).
    elev = elevation_field(LON[None, :], LAT_DESC[:, None])
    raw = np.round(elev / 0.25).astype(np.int16)  # packed: elevation = 0.25 * raw
    if fill_at is not None:
        raw[fill_at] = -32767
    with h5netcdf.File(path, "w") as f:
        f.dimensions = {"lat": LAT_DESC.size, "lon": LON.size}
        v = f.create_variable("lat", ("lat",), "f8")
        v[:] = LAT_DESC
        v.attrs["units"] = "degrees_north"
        v.attrs["standard_name"] = "latitude"
        v = f.create_variable("lon", ("lon",), "f8")
        v[:] = LON
        v.attrs["units"] = "degrees_east"
        v.attrs["standard_name"] = "longitude"
        v = f.create_variable("elevation", ("lat", "lon"), "i2", fillvalue=np.int16(-32767))
        v[:] = raw
        v.attrs["units"] = "m"
        v.attrs["scale_factor"] = 0.25
    return 0.25 * raw


def test_gebco_style_netcdf4_orientation_fill_and_scale(tmp_path):
    p = tmp_path / "tile.nc"
    expected = write_gebco_like(p, fill_at=(0, 8))  # file row 0 = north-east corner
    g = read_netcdf_grid(p)
    assert g.crs == "lonlat" and g.variable == "elevation"
    np.testing.assert_array_equal(g.y, LAT_DESC[::-1])  # flipped to ascending latitude
    np.testing.assert_array_equal(g.x, LON)
    np.testing.assert_array_equal(g.values[::-1][1:], expected[1:])
    assert np.isnan(g.values[-1, 8]) and np.count_nonzero(np.isnan(g.values)) == 1  # north-east cell
    assert g.values[0, 0] == pytest.approx(elevation_field(LON[0], LAT_DESC[-1]), abs=0.125)


def test_gebco_elevation_becomes_depth_in_local_metres(tmp_path):
    p = tmp_path / "tile.nc"
    write_gebco_like(p)
    lat0, lon0 = 0.0, 0.0
    d = to_depth_grid(read_netcdf_grid(p), values="elevation", origin=(lat0, lon0))
    assert isinstance(d, DepthGrid)
    # Default spacing = native cell in metres at the origin: Δλ·N·cosφ and Δφ·ρ at the equator,
    # N = a = 6378137 m and ρ = a(1-e²) = 6335439.3 m (WGS 84, TR8350.2; closed forms, Snyder 1987 §4).
    assert d.dx == pytest.approx(math.radians(0.005) * 6378137.0, rel=1e-7)
    assert d.dy == pytest.approx(math.radians(0.005) * 6335439.327, rel=1e-6)
    # Sign and orientation: depth = -elevation at each node's own lon/lat (bilinear is exact for a
    # plane up to the 0.125 m int16 packing).
    gx, gy = np.meshgrid(d.x, d.y)
    lon, lat = to_lonlat(gx, gy, lat0, lon0)
    np.testing.assert_allclose(d.depth, -elevation_field(lon, lat), atol=0.13)
    assert d.depth[:, 0].mean() > d.depth[:, -1].mean()  # deeper to the west
    assert d.depth[0, :].mean() > d.depth[-1, :].mean()  # deeper to the south
    assert d.meta["origin"] == (lat0, lon0)


def test_netcdf4_bbox_reads_a_window(tmp_path):
    p = tmp_path / "tile.nc"
    write_gebco_like(p)
    g = read_netcdf_grid(p, bbox=(-0.01, -0.01, 0.01, 0.015))
    np.testing.assert_allclose(g.x, [-0.01, -0.005, 0.0, 0.005, 0.01])
    np.testing.assert_allclose(g.y, [-0.01, -0.005, 0.0, 0.005, 0.01, 0.015])
    full = read_netcdf_grid(p)
    np.testing.assert_array_equal(g.values, full.values[4:10, 2:7])


def write_nc3_local(path, *, transpose=False, y_descending=True):
    x = np.array([0.0, 25.0, 50.0, 75.0])
    y = np.array([-50.0, 0.0, 50.0])
    depth = 10.0 + 0.1 * x[None, :] - 0.02 * y[:, None]  # known depths, metres positive down
    raw = np.round((depth - 5.0) / 0.01).astype(np.int16)  # depth = 0.01*raw + 5
    raw[1, 2] = -1  # missing
    yy = y[::-1] if y_descending else y
    rr = raw[::-1] if y_descending else raw
    with netcdf_file(path, "w") as f:
        f.createDimension("y", y.size)
        f.createDimension("x", x.size)
        vx = f.createVariable("x", "d", ("x",))
        vx[:] = x
        vx.units = "m"
        vy = f.createVariable("y", "d", ("y",))
        vy[:] = yy
        vy.units = "m"
        if transpose:
            v = f.createVariable("depth", "h", ("x", "y"))
            v[:] = rr.T
        else:
            v = f.createVariable("depth", "h", ("y", "x"))
            v[:] = rr
        v.units = "m"
        v.scale_factor = np.float64(0.01)  # a bare Python float would be stored as float32 by scipy
        v.add_offset = np.float64(5.0)
        v.missing_value = np.int16(-1)
    expected = 0.01 * raw + 5.0
    expected[1, 2] = np.nan
    return x, y, expected


@pytest.mark.parametrize("transpose", [False, True])
def test_netcdf3_local_depth_via_scipy(tmp_path, transpose):
    p = tmp_path / "survey.nc"
    x, y, expected = write_nc3_local(p, transpose=transpose)
    assert p.read_bytes()[:3] == b"CDF"
    g = read_netcdf_grid(p)
    assert g.crs == "local" and g.variable == "depth"
    np.testing.assert_array_equal(g.x, x)
    np.testing.assert_array_equal(g.y, y)
    np.testing.assert_allclose(g.values, expected, rtol=0, atol=1e-12)
    d = to_depth_grid(g, values="depth")
    assert (d.x0, d.y0, d.dx, d.dy) == (0.0, -50.0, 25.0, 50.0)
    assert d.depth_at(75.0, -50.0) == pytest.approx(10.0 + 7.5 + 1.0)


def test_netcdf_named_variable_and_errors(tmp_path):
    p = tmp_path / "survey.nc"
    write_nc3_local(p)
    assert read_netcdf_grid(p, variable="depth").variable == "depth"
    with pytest.raises(GridError, match=r"survey\.nc: no variable 'height'; 2-D variables: depth"):
        read_netcdf_grid(p, variable="height")
    with pytest.raises(GridError, match="bbox selects fewer than 2 cells"):
        read_netcdf_grid(p, bbox=(1000.0, 1000.0, 2000.0, 2000.0))


def test_not_a_netcdf_file(tmp_path):
    p = tmp_path / "notes.nc"
    p.write_text("just some text\n")
    with pytest.raises(GridError, match=r"notes\.nc: not a NetCDF file"):
        read_netcdf_grid(p)
    with pytest.raises(GridError, match="cannot open file"):
        read_netcdf_grid(tmp_path / "missing.nc")


def test_netcdf_coordinates_must_be_monotonic_and_known(tmp_path):
    p = tmp_path / "odd.nc"
    with h5netcdf.File(p, "w") as f:
        f.dimensions = {"row": 3, "lon": 3}
        v = f.create_variable("row", ("row",), "f8")
        v[:] = [0, 1, 2]
        v.attrs["units"] = "furlongs"
        v = f.create_variable("lon", ("lon",), "f8")
        v[:] = [0.0, 0.2, 0.1]
        v.attrs["units"] = "degrees_east"
        f.create_variable("elevation", ("row", "lon"), "f4")[:] = -np.ones((3, 3))
    with pytest.raises(GridError, match="coordinate 'row' is neither latitude/longitude"):
        read_netcdf_grid(p)


# --- XYZ soundings -----------------------------------------------------------------------------


def plane(x, y):
    return 12.0 + 0.02 * x - 0.005 * y


def xyz_text(x, y, z, sep=" "):
    return "\n".join(f"{a:.6f}{sep}{b:.6f}{sep}{c:.6f}" for a, b, c in zip(x, y, z, strict=True)) + "\n"


def test_xyz_plane_round_trip_and_convex_hull():
    # Linear interpolation on a triangulation reproduces a plane exactly (barycentric weights
    # sum to one) -> only the 6-decimal text rounding remains.
    rng = np.random.default_rng(7)
    x = rng.uniform(0.0, 500.0, 400)
    y = rng.uniform(0.0, 300.0, 400)
    x[:4], y[:4] = [0, 500, 0, 500], [0, 0, 300, 300]  # pin the corners so the hull is the box
    g = parse_xyz(xyz_text(x, y, plane(x, y)), name="survey.xyz", spacing_m=20.0)
    assert g.spacing() == (20.0, 20.0) and g.x[0] == 0.0 and g.y[0] == 0.0
    inside = ~np.isnan(g.values)
    assert inside.all()
    np.testing.assert_allclose(g.values, plane(g.x[None, :], g.y[:, None]), atol=1e-5)

    # A triangle of soundings: cells outside its convex hull are NaN.
    tri = parse_xyz(
        xyz_text([0, 100, 0, 20], [0, 0, 100, 20], plane(np.array([0, 100, 0, 20]), 0)), spacing_m=10
    )
    assert np.isnan(tri.values[-1, -1]) and not np.isnan(tri.values[0, 0])


def test_xyz_spacing_inferred_from_nearest_neighbours_comma_and_comments():
    gx, gy = np.meshgrid(np.arange(0.0, 100.1, 5.0), np.arange(0.0, 60.1, 5.0))
    text = "# survey, 5 m lines\n" + xyz_text(gx.ravel(), gy.ravel(), plane(gx, gy).ravel(), sep=",")
    g = parse_xyz(text, name="lines.xyz")
    assert g.spacing() == pytest.approx((5.0, 5.0))
    assert g.shape == (13, 21)
    np.testing.assert_allclose(g.values, plane(gx, gy), atol=1e-5)


def test_xyz_bad_lines_are_rejected_with_line_numbers_and_good_kept():
    gx, gy = np.meshgrid(np.arange(0.0, 50.1, 5.0), np.arange(0.0, 50.1, 5.0))  # 121 points
    lines = xyz_text(gx.ravel(), gy.ravel(), plane(gx, gy).ravel()).splitlines()
    lines[12] = "10.0 twenty 3.0"  # interior points, so the hull stays the full box
    lines[40] = "1.0 2.0"
    g = parse_xyz("\n".join(lines), name="s.xyz")
    assert [(r.line, r.reason) for r in g.rejects] == [
        (13, "'twenty' is not a number"),
        (41, "expected 3 values, found 2"),
    ]
    assert str(g.rejects[0]).startswith("s.xyz:13: ")
    assert not np.isnan(g.values).any()


def test_xyz_too_many_bad_lines_raise():
    lines = [f"{i} {i % 7} {i}" for i in range(40)]
    for k in (3, 9, 20):
        lines[k] = "x y z"
    with pytest.raises(GridError, match=r"^s\.xyz:4: 3 of 40 lines are bad \(more than 5%\)"):
        parse_xyz("\n".join(lines), name="s.xyz")


@pytest.mark.parametrize(
    "text, reason",
    [
        ("1 2 3\n4 5 6\n", "need at least 3 soundings"),
        ("0 0 1\n1 1 2\n2 2 3\n3 3 4\n", "cannot triangulate"),
        ("0 0 1\n0 0 2\n0 0 3\n", "3 distinct sounding positions"),
    ],
)
def test_xyz_degenerate_inputs(text, reason):
    with pytest.raises(GridError, match=reason):
        parse_xyz(text, name="d.xyz", spacing_m=0.5)


def test_xyz_lonlat_projected_about_origin(tmp_path):
    lon0, lat0 = 10.0, -20.0
    lon, lat = np.meshgrid(lon0 + np.linspace(-0.005, 0.005, 11), lat0 + np.linspace(-0.004, 0.004, 9))
    p = tmp_path / "ll.xyz"
    p.write_text(xyz_text(lon.ravel(), lat.ravel(), np.full(lon.size, 7.0)))
    g = read_xyz(p, crs="lonlat", origin=(lat0, lon0), spacing_m=50.0)
    assert g.crs == "local"
    assert g.x[0] == pytest.approx(
        -0.005 * math.radians(1) * 6378137.0 * math.cos(math.radians(20)), rel=2e-3
    )
    assert np.nanmax(np.abs(g.values - 7.0)) < 1e-9


# --- to_depth_grid -------------------------------------------------------------------------------


def local_grid(values, source="g.asc"):
    values = np.asarray(values, dtype=float)
    ny, nx = values.shape
    return GridData(values, 10.0 * np.arange(nx), 10.0 * np.arange(ny), "local", source)


def test_elevation_sign_and_local_passthrough():
    g = local_grid([[-5.0, -2.0, 1.0], [-6.0, -3.0, 2.0]])
    d = to_depth_grid(g, values="elevation")
    np.testing.assert_array_equal(d.depth, [[5.0, 2.0, -1.0], [6.0, 3.0, -2.0]])
    assert (d.x0, d.y0, d.dx, d.dy) == (0.0, 0.0, 10.0, 10.0)
    same = to_depth_grid(g, values="depth")
    np.testing.assert_array_equal(same.depth, g.values)


def test_local_resample_to_given_spacing():
    g = local_grid(plane(10.0 * np.arange(6)[None, :], 10.0 * np.arange(5)[:, None]))
    d = to_depth_grid(g, values="depth", spacing_m=(5.0, 2.5))
    assert d.shape == (17, 11) and (d.dx, d.dy) == (5.0, 2.5)
    np.testing.assert_allclose(d.depth, plane(d.x[None, :], d.y[:, None]), atol=1e-12)


@pytest.mark.parametrize(
    "values, kind, reason",
    [
        ([[np.nan, np.nan], [np.nan, np.nan]], "depth", "grid has no data"),
        ([[np.nan, np.nan, 3.0], [np.nan, np.nan, 4.0]], "depth", "67% of the cells are no-data"),
        ([[-1.0, -2.0], [0.0, -3.0]], "depth", "no water: no cell with depth > 0 (is `values` right?"),
        ([[1.0, 2.0], [0.0, 3.0]], "elevation", "no water"),
    ],
)
def test_unusable_grids_are_refused_naming_the_file(values, kind, reason):
    with pytest.raises(GridError) as err:
        to_depth_grid(local_grid(values, "bay.asc"), values=kind)
    assert str(err.value).startswith("bay.asc: ") and reason in str(err.value)


def test_lonlat_needs_origin_and_values_kind_is_checked():
    g = replace(
        local_grid([[1.0, 2.0], [3.0, 4.0]]), x=np.array([0.0, 0.01]), y=np.array([0.0, 0.01]), crs="lonlat"
    )
    with pytest.raises(ValueError, match="`origin`"):
        to_depth_grid(g, values="depth")
    with pytest.raises(ValueError, match="`values` must be 'depth' or 'elevation'"):
        to_depth_grid(g, values="height", origin=(0.0, 0.0))  # type: ignore[arg-type]
