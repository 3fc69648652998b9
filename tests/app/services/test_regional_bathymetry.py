"""Regional bathymetry in a spot profile (`[[regional_bathymetry]]`): import, the wave-base reach,
tables that use it (input hash over every grid, continued directions marked), bad grids refused
naming the file and field with the database left as it was.

The grids are hand-made planes whose depth is known at every cell: the local ESRI ASCII grid of
test_spots (1:20, 1.25-13.75 m) and a GEBCO-style NetCDF (elevation, lon/lat) of the same plane
around it, capped at 80 m. Wave base L0/2 = gT²/(4π) (linear theory, Dean & Dalrymple 1991 ch. 3):
80 m is the wave base of T = sqrt(4π·80/g) = 10.13 s.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import h5netcdf
import numpy as np
import pytest

from app.cli import main
from app.db.session import session_scope
from app.db.tables import Spot
from models.geodesy import to_lonlat
from tests.app.services.test_spots import plane_depth, write_asc, write_profile

G = 9.80665
CAP_M = 80.0
MODEL = "period_min_s = 6.0\nperiod_max_s = 16.0\nperiod_count = 3\nlaunch_spacing_deg = 1.0\n"


def regional_block(file: str = "region.nc", datum: str | None = None, values: str = "elevation") -> str:
    extra = f'datum = "{datum}"\n' if datum else ""
    return f'\n[[regional_bathymetry]]\nfile = "{file}"\nformat = "netcdf"\nvalues = "{values}"\ncrs = "lonlat"\n{extra}'


def write_region(path: Path, *, shift_x: float = 0.0, offset_m: float = 0.0, hole: bool = False, spacing: float = 250.0) -> None:
    # GEBCO-style: elevation (negative below the datum) on 1-D lat/lon cell centres about the origin
    xs = np.arange(-3000.0, 1000.0 + spacing / 2, spacing) + shift_x
    ys = np.arange(-2000.0, 2000.0 + spacing / 2, spacing)
    lat0, lon0 = 10.0, 20.0
    lons = np.array([float(to_lonlat(x, 0.0, lat0, lon0)[0]) for x in xs])
    lats = np.array([float(to_lonlat(0.0, y, lat0, lon0)[1]) for y in ys])
    depth = np.minimum(plane_depth(xs - shift_x), CAP_M) + offset_m
    elevation = -np.tile(depth, (ys.size, 1))
    if hole:
        elevation[5, 3] = np.nan
    with h5netcdf.File(path, "w") as f:
        f.dimensions = {"lat": lats.size, "lon": lons.size}
        f.create_variable("lat", ("lat",), data=lats).attrs["units"] = "degrees_north"
        f.create_variable("lon", ("lon",), data=lons).attrs["units"] = "degrees_east"
        v = f.create_variable("elevation", ("lat", "lon"), data=elevation, fillvalue=np.nan)
        v.attrs["units"] = "m"


def _json(capsys: pytest.CaptureFixture[str], argv: list[str]) -> dict:
    capsys.readouterr()
    assert main(argv) == 0
    return json.loads(capsys.readouterr().out)


def test_regional_grid_imports_builds_and_marks_continued_directions(
    migrated_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    write_asc(tmp_path / "grid.asc")
    write_region(tmp_path / "region.nc")
    profile = write_profile(tmp_path, extra=MODEL + regional_block())
    spot = _json(capsys, ["spot", "add", "--json", str(profile)])
    [reg] = spot["regional_grids"]
    assert reg["dx_m"] == pytest.approx(250.0, rel=0.02) and reg["depth_max_m"] == pytest.approx(CAP_M, abs=0.1)
    # the outermost grid's open edges are 80 m deep: the wave base of 10.13 s (L0/2 = gT²/4π)
    assert spot["wave_base_period_s"] == pytest.approx(math.sqrt(4 * math.pi * CAP_M / G), abs=0.1)
    shown = _json(capsys, ["spot", "show", "test-reef"])
    assert shown["wave_base_period_s"] == spot["wave_base_period_s"]

    built = _json(capsys, ["tables", "build", "--workers", "1", "--json"])
    assert len(built["built"]) == 1 and not built["failed"]
    win = _json(capsys, ["window", "test-reef", "--json"])
    assert win["wave_base_period_s"] == spot["wave_base_period_s"]  # the window says the reach too
    [p] = win["points"]
    assert p["periods_s"] == [6.0, 9.798, 16.0]
    # 6 s and 9.8 s reach their wave base inside the regional grid: within 45° of the shore normal
    # (270°) nothing is continued (grazing rays still leave its north and south edges short of it); 16 s leaves its 80 m edges short of the 200 m wave base, so its
    # open directions there rest on assumed contours
    def covers(arcs, d):
        return any((d - a) % 360.0 <= (b - a) % 360.0 for a, b in arcs)

    normal_fan = range(226, 316, 4)
    assert not any(covers(p["continued_arcs_deg"][i], d) for i in (0, 1) for d in normal_fan)
    assert all(covers(p["continued_arcs_deg"][2], d) for d in normal_fan)
    west = p["directions_deg"].index(270.0)
    assert p["coefficient"][0][west] > 0.5  # the west swell reaches the point through both grids

    # the input hash covers the regional grid: a changed regional file makes the table stale
    assert _json(capsys, ["tables", "build", "--workers", "1", "--json"])["skipped"] == 1
    write_region(tmp_path / "region.nc", spacing=200.0)
    _json(capsys, ["spot", "add", "--json", str(profile)])
    again = _json(capsys, ["tables", "build", "--workers", "1", "--json"])
    assert len(again["built"]) == 1


def test_refraction_diffraction_tables_get_the_regional_grids(
    migrated_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # the table service hands the regional grids to the refraction-diffraction build as to the
    # rays (its ray part and the rays that bring the wave to its start lines): the table records
    # the regional grid it traced on, and its computed bins exist
    from sqlalchemy import select

    from app.db.tables import BreakPoint
    from app.services.tables import load_table

    write_asc(tmp_path / "grid.asc")
    write_region(tmp_path / "region.nc")
    model = 'method = "refraction-diffraction"\nperiod_min_s = 12.0\nperiod_max_s = 16.0\nperiod_count = 2\nlaunch_spacing_deg = 1.0\n'
    profile = write_profile(tmp_path, extra=model + regional_block())
    _json(capsys, ["spot", "add", "--json", str(profile)])
    built = _json(capsys, ["tables", "build", "--workers", "1", "--json"])
    assert [b["method"] for b in built["built"]] == ["refraction-diffraction"] and not built["failed"]
    with session_scope(migrated_db) as session:
        bp = session.scalars(select(BreakPoint).where(BreakPoint.spot_id == "test-reef")).one()
        t = load_table(bp.table)
    assert t.meta["method"] == "refraction-diffraction"
    [reg] = t.meta["regional_grids"]
    assert reg["spacing_m"][0] == pytest.approx(250.0, rel=0.02)
    assert sum(t.meta["refraction_diffraction_bins"]) > 0


BAD = {
    "no overlap": (dict(shift_x=-20000.0), {}, "regional_bathymetry.0.file", "does not overlap"),
    "holes": (dict(hole=True), {}, "regional_bathymetry.0.file", "no-data"),
    "other datum": ({}, dict(datum="LAT"), "regional_bathymetry.0.datum", "datum"),
    "depth offset": (dict(offset_m=40.0), {}, "regional_bathymetry.0.datum", "deeper than the local grid"),
    "sign swapped": ({}, dict(values="depth"), "regional_bathymetry.0.values", "elevation"),
    "missing file": ({}, dict(file="nowhere.nc"), "regional_bathymetry.0.file", "no such file"),
}


@pytest.mark.parametrize("case", list(BAD))
def test_bad_regional_grids_are_refused_naming_file_and_field(
    case: str, migrated_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    write_asc(tmp_path / "grid.asc")
    assert main(["spot", "add", str(write_profile(tmp_path))]) == 0  # the good spot, without regional grids
    with session_scope(migrated_db) as s:
        before = [(x.id, x.profile_sha256, x.bathymetry.sha256, len(x.regional_grids)) for x in s.query(Spot)]
    region_kw, block_kw, field, words = BAD[case]
    write_region(tmp_path / "region.nc", **region_kw)
    profile = write_profile(tmp_path, extra=MODEL + regional_block(**block_kw))
    capsys.readouterr()
    assert main(["spot", "add", str(profile)]) == 2
    err = capsys.readouterr().err
    assert field in err and words in err, err
    assert block_kw.get("file", "region.nc") in err  # names the file
    with session_scope(migrated_db) as s:
        after = [(x.id, x.profile_sha256, x.bathymetry.sha256, len(x.regional_grids)) for x in s.query(Spot)]
    assert after == before
