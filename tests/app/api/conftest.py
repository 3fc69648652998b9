"""API fixtures: an app on a migrated database (SQLite and PostgreSQL), keys, and a populated coast:
one invented spot on a planar 1:20 slope with a small transfer table, a source at the spot and a
few hours of synthetic buoy spectra (app.demo.feed), and an agency watching the spot."""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from datetime import UTC, datetime

import numpy as np
import pytest
from fastapi.testclient import TestClient

from app.config import Settings

SPOT_ID = "test-slope"
SOURCE_ID = "buoy-t"
AGENCY_ID = "harbour-guard"
LAT, LON = 10.0, 20.0

PROFILE = """\
id = "{id}"
name = "Test Slope"
latitude = 10.0
longitude = 20.0
faces_deg = 270
sources = ["buoy-t"]

[bathymetry]
file = "{file}"
format = "esri-ascii"
values = "depth"
crs = "local"

[[break_points]]
name = "peak"
x = -50.0
y = 0.0

[model]
reference_depth_m = 8.0
"""


def grid_text() -> str:
    """44 x 21 cells of 50 m, corner (-2000, -525): depth (200 - x) / 20 m, land east of x = 200 m."""
    xs = -1975.0 + 50.0 * np.arange(44)
    row = " ".join(f"{v:.3f}" for v in (200.0 - xs) / 20.0)
    header = "ncols 44\nnrows 21\nxllcorner -2000\nyllcorner -525\ncellsize 50\nNODATA_value -9999\n"
    return header + "\n".join([row] * 21) + "\n"


def profile_text(spot_id: str = SPOT_ID, file: str = "grid.asc") -> str:
    return PROFILE.format(id=spot_id, file=file)


def upload(spot_id: str = SPOT_ID, *, profile: str | None = None, grid: str | bytes | None = None) -> dict:
    return {
        "profile": ("profile.toml", (profile if profile is not None else profile_text(spot_id)).encode(), "application/toml"),
        "bathymetry": ("grid.asc", grid if isinstance(grid, bytes) else (grid or grid_text()).encode(), "text/plain"),
    }


@dataclass
class Api:
    client: TestClient
    url: str
    key: str  # write scope

    @property
    def auth(self) -> dict[str, str]:
        return {"X-API-Key": self.key}


def make_settings(url: str, **kw: object) -> Settings:
    base: dict[str, object] = dict(database_url=url, scheduler_enabled=False, max_upload_bytes=200_000,
                                   max_body_bytes=20_000, refresh_seconds=600, allow_local_sources=True,
                                   public_base_url="http://testserver", cors_origins=["http://app.example"])
    base.update(kw)
    return Settings(**base)  # type: ignore[arg-type]


def new_key(url: str, scopes: tuple[str, ...] = ("write",)) -> str:
    from app.db.session import session_scope
    from app.services.keys import create_key

    with session_scope(url) as s:
        return create_key(s, "tests", scopes).key


@pytest.fixture
def api(migrated_db: str) -> Iterator[Api]:
    from app.api.main import create_app

    with TestClient(create_app(make_settings(migrated_db))) as client:
        yield Api(client, migrated_db, new_key(migrated_db))


def store_small_table(url: str, spot_id: str = SPOT_ID) -> None:
    """A coarse table (2 periods, 10° bins, 2° launch spacing) stored as the table service stores it."""
    from sqlalchemy import select

    from app.db.session import session_scope
    from app.db.tables import BreakPoint, Spot, TransferTableRow
    from app.services.spots import depth_grid_of
    from app.services.tables import table_arrays_blob
    from models.transfer import ENGINE_VERSION, build_table, reference_point

    with session_scope(url) as s:
        spot = s.get(Spot, spot_id)
        grid = depth_grid_of(spot)
        for bp in s.scalars(select(BreakPoint).where(BreakPoint.spot_id == spot_id)):
            x, y, _ = reference_point(grid, bp.x, bp.y, bp.reference_depth_m)
            t = build_table(grid, x, y, periods_s=[8.0, 12.0], direction_bin_deg=10.0, launch_spacing_deg=2.0)
            s.add(TransferTableRow(break_point_id=bp.id, spot_id=spot_id, input_hash=f"test-{bp.id}",
                                   engine_version=ENGINE_VERSION, arrays=table_arrays_blob(t), meta=t.meta))


def observation_files(now: datetime) -> dict[str, str]:
    from app.demo.feed import default_scenario, observation_records
    from app.formats.ndbc_realtime import write_realtime_set

    records = observation_records(default_scenario(now))
    return write_realtime_set(records)


@pytest.fixture
def populated(api: Api) -> Api:
    c = api.client
    r = c.post("/v1/sources", headers=api.auth, json={
        "id": SOURCE_ID, "name": "Test buoy", "format": "spectral-text-realtime", "latitude": LAT,
        "longitude": LON - 0.005, "depth_m": 40.0, "urls": ["file:///nonexistent/buoy-t"]})
    assert r.status_code == 201, r.text
    r = c.put(f"/v1/spots/{SPOT_ID}", headers=api.auth, files=upload())
    assert r.status_code == 201, r.text
    store_small_table(api.url)
    files = observation_files(datetime.now(UTC))
    r = c.post(f"/v1/sources/{SOURCE_ID}/observations", headers=api.auth,
               files=[("files", (name, text.encode(), "text/plain")) for name, text in files.items()])
    assert r.status_code == 200, r.text
    assert r.json()["stored"] > 0, r.text
    r = c.put(f"/v1/agencies/{AGENCY_ID}", headers=api.auth, json={
        "id": AGENCY_ID, "name": "Harbour Guard", "spots": [SPOT_ID], "alert_level": 1})
    assert r.status_code == 201, r.text
    return api
