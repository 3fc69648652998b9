"""PUT /v1/spots/{id} with `[[regional_bathymetry]]`: each regional grid comes as a `regional` file
part named as its entry's `file`, and the spot is the one `shoalcast spot add` makes of the same
files. The grids are those of tests/app/services/test_regional_bathymetry.py: a 1:20 plane and a
GEBCO-style NetCDF of it capped at 80 m, whose open edges are the wave base of
T = sqrt(4π·80/g) = 10.13 s (L0/2 = gT²/4π, linear theory, Dean & Dalrymple 1991 ch. 3)."""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from app.cli import main
from tests.app.api.conftest import Api
from tests.app.api.test_api import assert_problem
from tests.app.services.test_regional_bathymetry import CAP_M, MODEL, G, regional_block, write_region
from tests.app.services.test_spots import write_asc, write_profile


def parts(tmp_path: Path, *regional: str) -> list:
    write_asc(tmp_path / "grid.asc")
    write_region(tmp_path / "region.nc")
    profile = write_profile(tmp_path, extra=MODEL + regional_block())
    files = [("profile", ("profile.toml", profile.read_bytes(), "application/toml")),
             ("bathymetry", ("grid.asc", (tmp_path / "grid.asc").read_bytes(), "text/plain"))]  # fmt: skip
    region = (tmp_path / "region.nc").read_bytes()
    return files + [("regional", (name, region, "application/x-netcdf")) for name in regional]


def test_put_takes_regional_grids_as_spot_add_does(api: Api, tmp_path: Path) -> None:
    c = api.client
    r = c.put("/v1/spots/test-reef", headers=api.auth, files=parts(tmp_path, "region.nc"))
    assert r.status_code == 201, r.text
    put = r.json()
    [reg] = put["regional_grids"]
    assert reg["depth_max_m"] == pytest.approx(CAP_M, abs=0.1)
    assert put["wave_base_period_s"] == pytest.approx(math.sqrt(4 * math.pi * CAP_M / G), abs=0.1)
    # `spot add` of the very same files replaces it with the same grids
    assert main(["spot", "add", str(tmp_path / "test-reef.toml")]) == 0
    added = c.get("/v1/spots/test-reef").json()
    assert added["regional_grids"] == put["regional_grids"] and added["grid"] == put["grid"]
    assert added["wave_base_period_s"] == put["wave_base_period_s"]


def test_put_refuses_missing_or_unknown_regional_uploads_naming_the_field(api: Api, tmp_path: Path) -> None:
    c = api.client
    body = assert_problem(c.put("/v1/spots/test-reef", headers=api.auth, files=parts(tmp_path)), 422,
                          "regional_bathymetry.0.file")  # fmt: skip
    assert "region.nc" in body["detail"]
    assert_problem(c.put("/v1/spots/test-reef", headers=api.auth, files=parts(tmp_path, "other.nc")), 422,
                   "regional_bathymetry.0.file")  # fmt: skip
    assert_problem(c.put("/v1/spots/test-reef", headers=api.auth, files=parts(tmp_path, "region.nc", "extra.nc")),
                   422, "extra.nc")  # fmt: skip
    assert_problem(c.put("/v1/spots/test-reef", headers=api.auth, files=parts(tmp_path, "region.nc", "region.nc")),
                   422, "twice")  # fmt: skip
    assert c.get("/v1/spots/test-reef").status_code == 404  # nothing stored
