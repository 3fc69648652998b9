"""The committed openapi.json matches the code, every operation is documented (summary, responses,
problem responses), and schemathesis (4.x) finds no server errors and no schema mismatches."""

from __future__ import annotations

import json
import shutil
import tempfile
from pathlib import Path

import pytest
import schemathesis
from hypothesis import HealthCheck, settings

ROOT = Path(__file__).resolve().parents[3]


def test_committed_openapi_matches_code() -> None:
    from app.commands.openapi import openapi_text

    committed = (ROOT / "openapi.json").read_text(encoding="utf-8")
    assert json.loads(committed) == json.loads(openapi_text()), (
        "openapi.json differs from the code: run `make openapi` (shoalcast openapi > openapi.json) and commit it")


def test_every_operation_is_documented() -> None:
    doc = json.loads((ROOT / "openapi.json").read_text(encoding="utf-8"))
    seen = set()
    for path, item in doc["paths"].items():
        for method, op in item.items():
            assert op.get("summary"), (method, path)
            assert op["operationId"] not in seen
            seen.add(op["operationId"])
            codes = set(op["responses"])
            assert any(c.startswith("2") for c in codes), (method, path)
            if path.startswith("/v1/") and method == "get" and "{" in path and "jobs" not in path:
                assert {"304", "404"} <= codes, (method, path)
            if method in ("put", "post", "delete"):
                assert {"401", "403", "413", "422"} <= codes, (method, path)
                assert "application/problem+json" in op["responses"]["401"]["content"]


# schemathesis needs the schema at import; the app's database is a temp SQLite file populated
# (through the API) by a module fixture before the first case runs.
_DIR = Path(tempfile.mkdtemp(prefix="shoalcast-st-"))
_URL = f"sqlite:///{_DIR / 'st.sqlite3'}"


def _make_app():  # type: ignore[no-untyped-def]
    from app.api.main import create_app
    from tests.app.api.conftest import make_settings

    return create_app(make_settings(_URL))


APP = _make_app()
schema = schemathesis.openapi.from_asgi("/openapi.json", APP)


@pytest.fixture(scope="module")
def populated_app():  # type: ignore[no-untyped-def]
    from fastapi.testclient import TestClient

    from app.db import migrate
    from tests.app.api import conftest as fx

    migrate.upgrade(_URL)
    with TestClient(APP) as client:
        _populate(fx.Api(client, _URL, fx.new_key(_URL)))
    yield APP
    shutil.rmtree(_DIR, ignore_errors=True)


def _populate(api) -> None:  # type: ignore[no-untyped-def]
    from datetime import UTC, datetime

    from tests.app.api import conftest as fx

    c = api.client
    c.post("/v1/sources", headers=api.auth, json={
        "id": fx.SOURCE_ID, "name": "Test buoy", "format": "spectral-text-realtime", "latitude": fx.LAT,
        "longitude": fx.LON - 0.005, "depth_m": 40.0, "urls": ["file:///nonexistent/buoy-t"]})
    assert c.put(f"/v1/spots/{fx.SPOT_ID}", headers=api.auth, files=fx.upload()).status_code == 201
    fx.store_small_table(api.url)
    files = fx.observation_files(datetime.now(UTC))
    c.post(f"/v1/sources/{fx.SOURCE_ID}/observations", headers=api.auth,
           files=[("files", (n, t.encode(), "text/plain")) for n, t in files.items()])
    c.put(f"/v1/agencies/{fx.AGENCY_ID}", headers=api.auth,
          json={"id": fx.AGENCY_ID, "name": "Harbour Guard", "spots": [fx.SPOT_ID], "alert_level": 1})


@pytest.mark.slow
@schema.parametrize()
@settings(max_examples=15, deadline=None, suppress_health_check=list(HealthCheck), derandomize=True, database=None)
def test_api_conforms(case, populated_app) -> None:  # type: ignore[no-untyped-def]
    case.call_and_validate()
