"""Spot registry: profiles with ESRI ASCII, NetCDF and XYZ bathymetry import and report the right
grid; bad profiles are refused with a message naming the field and leave the database as it was.

The grids are small hand-made planes whose depth at every cell is known exactly.
"""

from __future__ import annotations

import json
from pathlib import Path

import h5netcdf
import numpy as np
import pytest

from app.cli import main
from app.db.session import session_scope
from app.db.tables import Spot
from models.geodesy import to_lonlat

PROFILE = """\
id = "{id}"
name = "Test Reef"
latitude = 10.0
longitude = 20.0
faces_deg = 270
sources = ["buoy-a"]

[bathymetry]
file = "{file}"
format = "{format}"
values = "{values}"
crs = "{crs}"

[[break_points]]
name = "peak"
x = {bx}
y = 0.0

[model]
reference_depth_m = 8.0
"""


def plane_depth(x: np.ndarray) -> np.ndarray:
    """A west-facing planar slope: land east of x = 200 m, 1:20 seaward (deeper to the west)."""
    return (200.0 - x) / 20.0


def write_asc(path: Path, *, nodata_cell: bool = False) -> None:
    # 6 columns x 4 rows, 50 m cells, corner at (-100, -100): centres x = -75..175, y = -75..75
    xs = -75.0 + 50.0 * np.arange(6)
    rows = []
    for _ in range(4):  # every row the same (depth depends on x only)
        vals = [f"{v:.3f}" for v in plane_depth(xs)]
        rows.append(" ".join(vals))
    if nodata_cell:
        rows[0] = "-9999 " + rows[0].split(" ", 1)[1]
    header = "ncols 6\nnrows 4\nxllcorner -100\nyllcorner -100\ncellsize 50\nNODATA_value -9999\n"
    path.write_text(header + "\n".join(rows) + "\n")


def write_profile(folder: Path, *, id: str = "test-reef", file: str = "grid.asc", format: str = "esri-ascii",
                  values: str = "depth", crs: str = "local", bx: float = -50.0, extra: str = "") -> Path:
    p = folder / f"{id}.toml"
    p.write_text(PROFILE.format(id=id, file=file, format=format, values=values, crs=crs, bx=bx) + extra)
    return p


def spot_list(capsys: pytest.CaptureFixture[str]) -> list[dict]:
    capsys.readouterr()
    assert main(["spot", "list", "--json"]) == 0
    return json.loads(capsys.readouterr().out)


def test_esri_ascii_profile_imports(migrated_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    write_asc(tmp_path / "grid.asc")
    assert main(["spot", "add", str(write_profile(tmp_path))]) == 0
    [spot] = spot_list(capsys)
    g = spot["grid"]
    assert (g["nx"], g["ny"], g["dx_m"], g["dy_m"]) == (6, 4, 50.0, 50.0)
    # cell centres x = -75..175 -> depth (200 - x)/20 = 13.75 .. 1.25 m (exact plane)
    assert g["depth_min_m"] == pytest.approx(1.25)
    assert g["depth_max_m"] == pytest.approx(13.75)
    assert g["x_range_m"] == pytest.approx([-75.0, 175.0])
    [bp] = spot["break_points"]
    assert bp["depth_m"] == pytest.approx(plane_depth(np.array(-50.0)), abs=1e-9)  # bilinear is exact on a plane
    assert spot["sources"] == ["buoy-a"]


def test_netcdf_elevation_lonlat_profile_imports(migrated_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # GEBCO-style: elevation (negative below sea level) on 1-D lat/lon cell centres around the origin
    xs = np.linspace(-400.0, 400.0, 9)
    ys = np.linspace(-300.0, 300.0, 7)
    lat0, lon0 = 10.0, 20.0
    lons = np.array([float(to_lonlat(x, 0.0, lat0, lon0)[0]) for x in xs])
    lats = np.array([float(to_lonlat(0.0, y, lat0, lon0)[1]) for y in ys])  # to_lonlat gives (lon, lat)
    elevation = -np.tile((500.0 - xs) / 50.0, (ys.size, 1))  # 18 m at the west edge, 2 m at the east
    with h5netcdf.File(tmp_path / "grid.nc", "w") as f:
        f.dimensions = {"lat": lats.size, "lon": lons.size}
        f.create_variable("lat", ("lat",), data=lats).attrs["units"] = "degrees_north"
        f.create_variable("lon", ("lon",), data=lons).attrs["units"] = "degrees_east"
        v = f.create_variable("elevation", ("lat", "lon"), data=elevation)
        v.attrs["units"] = "m"
    profile = write_profile(tmp_path, file="grid.nc", format="netcdf", values="elevation", crs="lonlat", bx=0.0)
    assert main(["spot", "add", str(profile)]) == 0
    [spot] = spot_list(capsys)
    g = spot["grid"]
    # resampling onto the metric grid may trim an edge column (meridians converge), never extend it
    assert 2.0 - 0.05 <= g["depth_min_m"] <= 4.0 + 0.05
    assert 16.0 - 0.05 <= g["depth_max_m"] <= 18.0 + 0.05
    assert g["dx_m"] == pytest.approx(100.0, rel=0.02)
    assert spot["break_points"][0]["depth_m"] == pytest.approx(10.0, abs=0.05)  # elevation -10 m at x = 0


def test_xyz_soundings_profile_imports(migrated_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    rng = np.random.default_rng(7)
    x = rng.uniform(-300, 300, 400)
    y = rng.uniform(-300, 300, 400)
    z = 5.0 + 0.02 * (100.0 - x)  # a plane: 13 m at x = -300, 1 m at x = 300
    corners = np.array([[-300, -300], [300, -300], [-300, 300], [300, 300]], dtype=float)
    x = np.concatenate([x, corners[:, 0]])
    y = np.concatenate([y, corners[:, 1]])
    z = np.concatenate([z, 5.0 + 0.02 * (100.0 - corners[:, 0])])
    (tmp_path / "sound.xyz").write_text("\n".join(f"{a:.2f},{b:.2f},{c:.3f}" for a, b, c in zip(x, y, z, strict=True)))
    profile = write_profile(tmp_path, file="sound.xyz", format="xyz", bx=0.0, extra="")
    assert main(["spot", "add", str(profile)]) == 0
    [spot] = spot_list(capsys)
    assert spot["break_points"][0]["depth_m"] == pytest.approx(7.0, abs=0.05)  # linear gridding is exact on a plane
    assert spot["grid"]["depth_max_m"] == pytest.approx(13.0, abs=0.1)


def test_readding_replaces_the_spot(migrated_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    write_asc(tmp_path / "grid.asc")
    profile = write_profile(tmp_path)
    assert main(["spot", "add", str(profile)]) == 0
    profile.write_text(profile.read_text().replace('name = "Test Reef"', 'name = "Renamed Reef"'))
    assert main(["spot", "add", str(profile)]) == 0
    spots = spot_list(capsys)
    assert [s["name"] for s in spots] == ["Renamed Reef"]


BAD = {
    "missing field": (dict(), lambda t: t.replace("faces_deg = 270\n", ""), "faces_deg"),
    "mistyped field": (dict(), lambda t: t.replace("faces_deg", "face_deg"), "face_deg"),
    "unknown format": (dict(format="geotiff"), None, "bathymetry.format"),
    "break point on land": (dict(bx=190.0), None, "break_points.0"),
    "break point off the grid": (dict(bx=-5000.0), None, "break_points.0"),
    "path escapes the folder": (dict(file="../grid.asc"), None, "bathymetry.file"),
    "unreadable grid": (dict(file="broken.asc"), None, "bathymetry"),
    "NaN-filled grid": (dict(file="nan.asc"), None, "bathymetry"),
}


@pytest.mark.parametrize("case", list(BAD))
def test_bad_profiles_are_refused_and_change_nothing(
    case: str, migrated_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    write_asc(tmp_path / "grid.asc")
    assert main(["spot", "add", str(write_profile(tmp_path, id="good-spot"))]) == 0
    with session_scope(migrated_db) as s:
        before = [(x.id, x.profile_sha256, x.bathymetry.sha256) for x in s.query(Spot).order_by(Spot.id)]

    (tmp_path / "broken.asc").write_text("ncols 3\nnrows 2\nxllcorner 0\nyllcorner 0\ncellsize 10\n1 2 3\n4 five 6\n")
    (tmp_path / "nan.asc").write_text(
        "ncols 3\nnrows 2\nxllcorner 0\nyllcorner 0\ncellsize 10\nnodata_value -9999\n-9999 -9999 -9999\n-9999 -9999 -9999\n"
    )
    kwargs, edit, field = BAD[case]
    sub = tmp_path / "sub"
    sub.mkdir()
    for f in ("grid.asc", "broken.asc", "nan.asc"):
        (sub / f).write_bytes((tmp_path / f).read_bytes())
    profile = write_profile(sub, id="good-spot", **kwargs)  # same id: a failed replace must keep the old spot
    if edit is not None:
        profile.write_text(edit(profile.read_text()))
    capsys.readouterr()
    assert main(["spot", "add", str(profile)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ")
    assert field in err, err
    with session_scope(migrated_db) as s:
        after = [(x.id, x.profile_sha256, x.bathymetry.sha256) for x in s.query(Spot).order_by(Spot.id)]
    assert after == before
