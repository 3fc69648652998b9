"""Page fixtures: an invented spot ("Test Slope", a planar 1:20 beach) with a small transfer table, a
model-forecast source beside it whose synthetic CF spectra (app.demo.feed) cover the coming hours,
an offshore buoy, and an agency watching the spot. The spot keeps its own time zone (UTC-3) so the
pages show spot time beside UTC.

`site` runs on SQLite and PostgreSQL through TestClient; `live` serves a SQLite site from a real
uvicorn server on a free loopback port for the browser tests.
"""

from __future__ import annotations

import io
import socket
import threading
import time
import uuid
from collections.abc import Iterator
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path

import pytest
from fastapi.testclient import TestClient

from tests.app.api.conftest import (  # the API tests' invented spot, grid and helpers
    AGENCY_ID,
    LAT,
    LON,
    SOURCE_ID,
    SPOT_ID,
    Api,
    grid_text,
    make_settings,
    new_key,
    profile_text,
    store_small_table,
)

MODEL_ID = "model-t"
ZONE = "Etc/GMT+3"  # IANA: three hours behind UTC (POSIX sign), no place name
HOURS = 24


def calm_scenario(now: datetime):  # type: ignore[no-untyped-def]
    """A faint wind sea only: small breakers, the lowest level."""
    from app.demo.feed import Scenario, WindSea

    return Scenario(now=now, swells=(), wind_sea=WindSea(hs_m=0.25, hs_daily_amplitude_m=0.02), noise=0.0)


def storm_scenario(now: datetime):  # type: ignore[no-untyped-def]
    """A big long-period west swell: heavy breakers, the top level of the default policy."""
    from app.demo.feed import Scenario, Swell, WindSea

    west = Swell(name="storm swell", distance_m=4.2e6, f_at_now_hz=0.066, source_fp_hz=0.067, source_width_hz=0.02,
                 peak_hs_m=6.0, dir_start_deg=268.0, dir_end_deg=272.0, spreading_s=40.0)
    return Scenario(now=now, swells=(west,), wind_sea=WindSea(), noise=0.0)


def forecast_file(scenario) -> bytes:  # type: ignore[no-untyped-def]
    from app.demo.feed import forecast_records
    from app.formats.cf_spectra import write_cf_spectra

    buf = io.BytesIO()
    write_cf_spectra(buf, forecast_records(scenario), title="test forecast (synthetic)",
                     positions={"demo-model-1": (LAT, LON - 0.01)})
    return buf.getvalue()


def ingest_forecast(url: str, scenario) -> dict:  # type: ignore[no-untyped-def]
    """Store a model forecast the way the scheduler's ingest does (a new ingest with new content)."""
    from app.db.session import session_scope
    from app.ingest.store import ingest_files

    with session_scope(url) as session:
        return ingest_files(session, MODEL_ID, {"forecast.nc": forecast_file(scenario)}).model_dump()


def build_site(client: TestClient, url: str, key: str, *, scenario=None) -> None:  # type: ignore[no-untyped-def]
    auth = {"X-API-Key": key}
    for sid, name, fmt, lon in ((SOURCE_ID, "Test buoy", "spectral-text-realtime", LON - 0.005),
                                (MODEL_ID, "Test model", "cf-netcdf", LON - 0.01)):
        r = client.post("/v1/sources", headers=auth, json={
            "id": sid, "name": name, "format": fmt, "latitude": LAT, "longitude": lon, "depth_m": 40.0,
            "urls": [f"file:///nonexistent/{sid}"]})
        assert r.status_code == 201, r.text
    profile = profile_text().replace('sources = ["buoy-t"]', f'sources = ["{MODEL_ID}"]\ntimezone = "{ZONE}"')
    r = client.put(f"/v1/spots/{SPOT_ID}", headers=auth, files={
        "profile": ("profile.toml", profile.encode(), "application/toml"),
        "bathymetry": ("grid.asc", grid_text().encode(), "text/plain")})
    assert r.status_code == 201, r.text
    store_small_table(url)
    report = ingest_forecast(url, scenario or storm_scenario(datetime.now(UTC)))
    assert report["stored"] > 0, report
    r = client.put(f"/v1/agencies/{AGENCY_ID}", headers=auth, json={
        "id": AGENCY_ID, "name": "Harbour Guard", "spots": [SPOT_ID], "alert_level": 1})
    assert r.status_code == 201, r.text


@pytest.fixture(scope="module", params=["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def site(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory) -> Iterator[Api]:
    """One site per test module and database (building it is most of the cost; tests only read,
    or add what no other test looks at)."""
    import sqlalchemy as sa
    from sqlalchemy.engine import make_url

    from app.api.main import create_app
    from app.db import migrate

    admin = None
    if request.param == "sqlite":
        url = f"sqlite:///{tmp_path_factory.mktemp('site') / 'site.sqlite3'}"
    else:
        server = request.getfixturevalue("postgres_server")
        name = f"shoalcast_w_{uuid.uuid4().hex[:12]}"
        admin = sa.create_engine(server, isolation_level="AUTOCOMMIT")
        with admin.connect() as conn:
            conn.execute(sa.text(f'CREATE DATABASE "{name}"'))
        url = make_url(server).set(database=name).render_as_string(hide_password=False)
    try:
        migrate.upgrade(url)
        with TestClient(create_app(make_settings(url))) as client:
            key = new_key(url)
            build_site(client, url, key)
            yield Api(client, url, key)
    finally:
        if admin is not None:
            from app.db.session import dispose_engines

            dispose_engines()
            with admin.connect() as conn:
                conn.execute(sa.text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
            admin.dispose()


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@dataclass
class Live:
    base: str
    url: str  # database


@pytest.fixture(scope="module")
def live(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Live]:
    """A calm site served by uvicorn on 127.0.0.1:<free port> (in a thread of this process), one per
    test module; the board test's ingest is the one write, and it runs last."""
    import uvicorn

    from app.api.main import create_app
    from app.db import migrate

    url = f"sqlite:///{tmp_path_factory.mktemp('live') / 'live.sqlite3'}"
    migrate.upgrade(url)
    settings = make_settings(url)
    with TestClient(create_app(settings)) as client:
        build_site(client, url, new_key(url), scenario=calm_scenario(datetime.now(UTC)))
    port = _free_port()
    server = uvicorn.Server(uvicorn.Config(create_app(settings), host="127.0.0.1", port=port, log_level="warning",
                                           access_log=False, lifespan="on"))
    thread = threading.Thread(target=server.run, name="uvicorn-pages", daemon=True)
    thread.start()
    deadline = time.monotonic() + 30
    while not server.started:
        if time.monotonic() > deadline or not thread.is_alive():
            pytest.fail("uvicorn did not start")
        time.sleep(0.05)
    try:
        yield Live(base=f"http://127.0.0.1:{port}", url=url)
    finally:
        server.should_exit = True
        thread.join(timeout=20)


CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]


def _chromium() -> str:
    """Debian's chromium (.ci/run installs it); Playwright's own browser download is not used."""
    import os
    import shutil

    exe = next((p for p in ("/usr/bin/chromium", shutil.which("chromium"), shutil.which("chromium-browser"))
                if p and Path(p).exists()), None)
    if exe is None:
        if os.environ.get("CI", "").lower() in {"1", "true", "yes"}:
            pytest.fail("chromium is required under CI=true (apt-get install -y chromium)")
        pytest.skip("chromium not installed")
    return exe


@pytest.fixture(scope="session")
def browser_type_launch_args(browser_type_launch_args: dict) -> dict:
    """pytest-playwright's launch options, pointed at the system Chromium."""
    return {**browser_type_launch_args, "executable_path": _chromium(), "headless": True, "args": CHROMIUM_ARGS}


@pytest.fixture(scope="session")
def base_url() -> None:
    """Tests pass full URLs (the live server's port is only known per test). Defined here so the
    pytest-base-url plugin's own fixture, which pytest 9 warns about, is not used."""
    return None
