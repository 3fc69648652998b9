"""The committed openapi.json matches the code, every operation is documented (summary, responses,
problem responses), and schemathesis (4.x) finds no server errors and no schema mismatches, one
operation at a time and statefully along the schema's OpenAPI links (spot write -> spot, outlook,
window; table rebuild 202 -> job; source add -> sources).

Example counts: `SHOALCAST_API_FUZZ_EXAMPLES` (default 15) sets hypothesis' max_examples for the
per-operation run and the number of stateful scenarios; read once at import, because
tests/conftest.py strips SHOALCAST_* variables from each test's environment. A longer opt-in run:

    SHOALCAST_API_FUZZ_EXAMPLES=200 .venv/bin/python -m pytest tests/app/api/test_openapi.py -q
"""

from __future__ import annotations

import json
import os
import shutil
import sqlite3
import tempfile
import zlib
from datetime import UTC, datetime
from pathlib import Path

import pytest
import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.core.parameters import ParameterLocation
from schemathesis.specs.openapi.checks import negative_data_rejection

ROOT = Path(__file__).resolve().parents[3]


def _fuzz_examples() -> int:
    raw = os.environ.get("SHOALCAST_API_FUZZ_EXAMPLES", "15")
    try:
        n = int(raw)
    except ValueError:
        raise ValueError(f"`SHOALCAST_API_FUZZ_EXAMPLES` must be a whole number of examples, got {raw!r}") from None
    if n < 1:
        raise ValueError(f"`SHOALCAST_API_FUZZ_EXAMPLES` must be at least 1, got {n}")
    return n


FUZZ_EXAMPLES = _fuzz_examples()  # at import: the per-test environment has SHOALCAST_* stripped


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


def _body_limit_rejects(sch) -> None:  # type: ignore[no-untyped-def]
    # a body over the size limit (settings.max_body_bytes) is refused with 413, declared on every
    # write: the schema cannot bound a body's bytes (an agency's nested policy rules can outgrow
    # it), so both data checks accept 413 beside schemathesis' defaults
    for check in (sch.config.checks.negative_data_rejection, sch.config.checks.positive_data_acceptance):
        if "413" not in check.expected_statuses:
            check.expected_statuses = [*check.expected_statuses, "413"]


_body_limit_rejects(schema)


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
@settings(max_examples=FUZZ_EXAMPLES, deadline=None, suppress_health_check=list(HealthCheck), derandomize=True, database=None)
def test_api_conforms(case, populated_app) -> None:  # type: ignore[no-untyped-def]
    case.call_and_validate()


# Stateful: its own app and database, so the per-operation run above and this one cannot see each
# other's writes whatever the order. Scenarios follow the OpenAPI links from responses that succeed;
# random multipart bodies are never a valid profile, so positive spot writes get a real (coarse)
# profile for one of two ids (negative ones stay fuzzed) and the links then reach the spot, its
# outlook, its window, a rebuild and its job.
_SF_DIR = Path(tempfile.mkdtemp(prefix="shoalcast-sf-"))
_SF_URL = f"sqlite:///{_SF_DIR / 'sf.sqlite3'}"
_SF_BASELINE = _SF_DIR / "baseline.sqlite3"


def _make_stateful_app():  # type: ignore[no-untyped-def]
    from app.api.main import create_app
    from tests.app.api.conftest import make_settings

    return create_app(make_settings(_SF_URL))


SF_APP = _make_stateful_app()
stateful_schema = schemathesis.openapi.from_asgi("/openapi.json", SF_APP)
_body_limit_rejects(stateful_schema)
SF_SPOT_IDS = ("sf-cove", "sf-reef")
# a table per break point in well under a second: 2 periods, 10° bins, 2° launch spacing
COARSE_MODEL = "period_min_s = 8.0\nperiod_max_s = 12.0\nperiod_count = 2\ndirection_bin_deg = 10.0\nlaunch_spacing_deg = 2.0\n"


def _stateful_upload(spot_id: str) -> dict[str, str]:
    from tests.app.api import conftest as fx

    profile = fx.profile_text(spot_id) + COARSE_MODEL
    return {"profile": profile, "bathymetry": fx.grid_text()}  # str: the schema's type for these parts


class ApiWorkflow(stateful_schema.as_state_machine()):  # type: ignore[misc]
    key: str = ""  # set by the fixture once the database exists

    def setup(self) -> None:
        # every scenario starts from the fixture's database: links drawn from responses (the listed
        # spots, say) must not depend on what earlier scenarios wrote, or hypothesis cannot replay
        for thread in getattr(SF_APP.state, "job_threads", []):
            thread.join(timeout=60)
        with sqlite3.connect(_SF_BASELINE) as src, sqlite3.connect(_SF_DIR / "sf.sqlite3") as dst:
            src.backup(dst)

    def get_call_kwargs(self, case):  # type: ignore[no-untyped-def]
        # the fixtures' write key, unless the header is the invalid part of a negative case (-> 401)
        header = case.meta.components.get(ParameterLocation.HEADER) if case.meta is not None else None
        return {} if header is not None and header.mode.is_negative else {"headers": {"X-API-Key": self.key}}

    def validate_response(self, response, case, additional_checks=None, **kwargs) -> None:  # type: ignore[no-untyped-def]
        # File parts of a multipart upload reach the server as opaque bytes: a "negative" file
        # (JSON where the schema says binary string) is indistinguishable from any other file, and
        # the ingest answers 200 with the rows it rejected — correct, so that check cannot apply.
        excluded = [negative_data_rejection] if case.path == "/v1/sources/{source_id}/observations" else []
        case.validate_response(response, additional_checks=additional_checks, excluded_checks=excluded,
                               transport_kwargs=kwargs or None)

    def before_call(self, case) -> None:  # type: ignore[no-untyped-def]
        negative = case.meta is not None and case.meta.generation.mode.is_negative  # those stay fuzzed
        if case.method.upper() == "PUT" and case.path == "/v1/spots/{spot_id}" and not negative:
            drawn = str((case.path_parameters or {}).get("spot_id", ""))
            spot_id = SF_SPOT_IDS[zlib.crc32(drawn.encode()) % len(SF_SPOT_IDS)]
            case.path_parameters = {**(case.path_parameters or {}), "spot_id": spot_id}
            case.body = _stateful_upload(spot_id)


@pytest.fixture(scope="module")
def stateful_app():  # type: ignore[no-untyped-def]
    from fastapi.testclient import TestClient

    from app.db import migrate
    from tests.app.api import conftest as fx

    migrate.upgrade(_SF_URL)
    key = fx.new_key(_SF_URL)
    with TestClient(SF_APP) as client:  # an offshore source with data, so outlooks can be computed
        api = fx.Api(client, _SF_URL, key)
        r = client.post("/v1/sources", headers=api.auth, json={
            "id": fx.SOURCE_ID, "name": "Test buoy", "format": "spectral-text-realtime", "latitude": fx.LAT,
            "longitude": fx.LON - 0.005, "depth_m": 40.0, "urls": ["file:///nonexistent/buoy-t"]})
        assert r.status_code == 201, r.text
        files = fx.observation_files(datetime.now(UTC))
        r = client.post(f"/v1/sources/{fx.SOURCE_ID}/observations", headers=api.auth,
                        files=[("files", (n, t.encode(), "text/plain")) for n, t in files.items()])
        assert r.status_code == 200, r.text
        # one spot to list, so scenarios can start at GET /v1/spots and follow its link to a rewrite
        r = client.put(f"/v1/spots/{SF_SPOT_IDS[0]}", headers=api.auth, files={
            k: (k, v, "text/plain") for k, v in _stateful_upload(SF_SPOT_IDS[0]).items()})
        assert r.status_code == 201, r.text
    with sqlite3.connect(_SF_DIR / "sf.sqlite3") as src, sqlite3.connect(_SF_BASELINE) as dst:
        src.backup(dst)
    ApiWorkflow.key = key
    yield SF_APP
    shutil.rmtree(_SF_DIR, ignore_errors=True)


@pytest.mark.slow
def test_api_stateful(stateful_app) -> None:  # type: ignore[no-untyped-def]
    ApiWorkflow.run(settings=settings(
        max_examples=2 * FUZZ_EXAMPLES, stateful_step_count=10, deadline=None, derandomize=True, database=None,
        suppress_health_check=list(HealthCheck)))
