"""Fault: PostgreSQL restarts while the worker polls and the API serves. Both recover on their own
(pre-pinged pool, the scheduler job catches the outage), and no observation is lost or duplicated.

The test runs its own throw-away PostgreSQL server (initdb into a temp dir, a free port), so stopping
it disturbs nothing else.
"""

from __future__ import annotations

import glob
import os
import shutil
import socket
import subprocess
import tempfile
import time
from collections.abc import Iterator
from pathlib import Path

import pytest
from sqlalchemy import func, select

from app.config import get_settings
from app.db import migrate
from app.db.session import dispose_engines, session_scope
from app.db.tables import Observation, SourceHealth
from app.ingest.scheduler import poll_source

pytestmark = [pytest.mark.postgres, pytest.mark.slow]


def _pg_bin() -> str | None:
    found = sorted(glob.glob("/usr/lib/postgresql/*/bin/initdb"))
    return str(Path(found[-1]).parent) if found else None


class OwnPostgres:
    def __init__(self, root: Path) -> None:
        self.bin = _pg_bin()
        self.root = root
        self.data = root / "data"
        with socket.socket() as s:
            s.bind(("127.0.0.1", 0))
            self.port = s.getsockname()[1]
        self.as_postgres = ["runuser", "-u", "postgres", "--"] if os.geteuid() == 0 else []

    def _run(self, *args: str) -> None:
        subprocess.run([*self.as_postgres, *args], check=True, capture_output=True, timeout=60)

    def init(self) -> None:
        if self.as_postgres:
            shutil.chown(self.root, "postgres")
        self._run(f"{self.bin}/initdb", "-A", "trust", "-U", "postgres", "-D", str(self.data))

    def start(self) -> None:
        self._run(f"{self.bin}/pg_ctl", "-D", str(self.data), "-l", str(self.root / "log"), "-w", "-t", "30",
                  "-o", f"-p {self.port} -h 127.0.0.1 -k {self.root}", "start")

    def stop(self) -> None:
        self._run(f"{self.bin}/pg_ctl", "-D", str(self.data), "-m", "immediate", "-w", "stop")

    @property
    def url(self) -> str:
        return f"postgresql+psycopg://postgres@127.0.0.1:{self.port}/postgres"


@pytest.fixture
def own_postgres() -> Iterator[OwnPostgres]:
    if _pg_bin() is None or (os.geteuid() == 0 and shutil.which("runuser") is None):
        if os.environ.get("CI", "").lower() in {"1", "true", "yes"}:
            pytest.fail("PostgreSQL server binaries are needed for the restart test under CI")
        pytest.skip("no PostgreSQL server binaries")
    # not under pytest's tmp dir: the postgres user must be able to reach the folder
    root = Path(tempfile.mkdtemp(prefix="shoalcast-pg-"))
    os.chmod(root, 0o755)
    pg = OwnPostgres(root)
    pg.init()
    pg.start()
    try:
        yield pg
    finally:
        dispose_engines()
        try:
            pg.stop()
        except subprocess.CalledProcessError:
            pass
        shutil.rmtree(root, ignore_errors=True)


def _count(url: str) -> int:
    with session_scope(url) as s:
        return int(s.scalar(select(func.count()).select_from(Observation)))


def test_worker_and_api_recover_from_a_postgres_restart(own_postgres, server, helpers, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    from fastapi.testclient import TestClient

    from app.api.main import create_app

    url = own_postgres.url
    monkeypatch.setenv("SHOALCAST_DATABASE_URL", url)
    get_settings.cache_clear()
    migrate.upgrade(url)
    files = helpers.realtime_files(helpers.make_records(3))
    for name, body in files.items():
        server.routes[f"/{name}"] = helpers.Static(body)
    helpers.add_source(url, "st1", [f"{server.base}/{name}" for name in files])

    with TestClient(create_app()) as client:
        out = poll_source(url, "st1")
        assert out is not None and out.status == "stored"
        assert _count(url) == 3
        assert client.get("/v1/sources").status_code == 200

        own_postgres.stop()
        # the worker's job must not raise while the database is down, and the API must answer
        # with a problem (not hang, not crash the process)
        assert poll_source(url, "st1") is None
        down = client.get("/readyz")
        assert down.status_code == 503 and down.headers["content-type"].startswith("application/problem+json")

        own_postgres.start()
        deadline = time.monotonic() + 30
        while client.get("/readyz").status_code != 200:
            assert time.monotonic() < deadline, "the API did not recover after the restart"
            time.sleep(0.5)
        assert client.get("/v1/sources").status_code == 200

        # new data published while the database was away arrives exactly once
        files = helpers.realtime_files(helpers.make_records(5))
        for name, body in files.items():
            server.routes[f"/{name}"] = helpers.Static(body)
        out = poll_source(url, "st1")
        assert out is not None and out.status == "stored"
        assert poll_source(url, "st1").status == "not_modified"  # type: ignore[union-attr]
    assert _count(url) == 5
    with session_scope(url) as s:
        health = s.get(SourceHealth, "st1")
        assert health is not None and health.last_error is None and health.last_success is not None
