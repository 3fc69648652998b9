"""Hazard polling throughput: 200 concurrent pollers against a loopback uvicorn started here.

Side by side in one run, same server (same app factory, middleware and settings):
- GET /v1/agencies/{id}/hazards with If-None-Match (304s), and without (full bodies);
- a bare endpoint of the same app returning a constant (the framework floor).
Ratios are requests/s of the hazards endpoint over the bare endpoint (aim >= 0.5).
Each phase runs ~10 s by default (`--long`: 60 s); quick mode: 3 s.
"""

from __future__ import annotations

import asyncio
import os
import socket
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

POLLERS = 200
AGENCY = "harbour-guard"


def bench_app():  # type: ignore[no-untyped-def]
    """The app factory uvicorn runs: the real app plus a bare constant endpoint."""
    from app.api.main import create_app

    app = create_app()

    @app.get("/bare", include_in_schema=False)
    def bare() -> dict[str, str]:
        return {"status": "ok"}

    return app


def _populate(url: str) -> None:
    from datetime import UTC, datetime

    from fastapi.testclient import TestClient

    from app.api.main import create_app
    from app.db import migrate
    from tests.app.api import conftest as fx

    migrate.upgrade(url)
    with TestClient(create_app(fx.make_settings(url))) as c:
        key = {"X-API-Key": fx.new_key(url)}
        c.post("/v1/sources", headers=key, json={
            "id": fx.SOURCE_ID, "name": "Bench buoy", "format": "spectral-text-realtime", "latitude": fx.LAT,
            "longitude": fx.LON - 0.005, "depth_m": 40.0, "urls": ["file:///nonexistent"]})
        c.put(f"/v1/spots/{fx.SPOT_ID}", headers=key, files=fx.upload())
        fx.store_small_table(url)
        files = fx.observation_files(datetime.now(UTC))
        c.post(f"/v1/sources/{fx.SOURCE_ID}/observations", headers=key,
               files=[("files", (n, t.encode(), "text/plain")) for n, t in files.items()])
        c.put(f"/v1/agencies/{AGENCY}", headers=key,
              json={"id": AGENCY, "name": "Harbour Guard", "spots": [fx.SPOT_ID], "alert_level": 1})
        assert c.get(f"/v1/agencies/{AGENCY}/hazards").status_code == 200


def _ingest_loop(url: str, stop: threading.Event, count: list[int]) -> None:
    """Ingest a new hour of buoy spectra every 2 s (the ingest path the scheduler uses), until stopped."""
    from datetime import UTC, datetime, timedelta

    from app.db.session import session_scope
    from app.ingest.store import ingest_files
    from tests.app.api import conftest as fx

    t = datetime.now(UTC)
    while not stop.wait(2.0):
        t += timedelta(hours=1)
        files = {n: v.encode() for n, v in fx.observation_files(t).items()}
        with session_scope(url) as session:
            ingest_files(session, fx.SOURCE_ID, files)
        count[0] += 1


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


async def _phase(base: str, path: str, seconds: float, *, conditional: bool) -> dict:
    import logging

    import httpx

    logging.getLogger("httpx").setLevel(logging.WARNING)  # the pollers' own requests are not news

    latencies: list[float] = []
    errors = 0
    statuses: dict[int, int] = {}
    limits = httpx.Limits(max_connections=POLLERS, max_keepalive_connections=POLLERS)
    async with httpx.AsyncClient(base_url=base, limits=limits, timeout=30) as client:
        first = await client.get(path)
        etag = first.headers.get("etag", "")
        headers = {"If-None-Match": etag} if conditional and etag else {}
        deadline = time.perf_counter() + seconds

        async def poller() -> None:
            nonlocal errors
            while time.perf_counter() < deadline:
                t0 = time.perf_counter()
                try:
                    r = await client.get(path, headers=headers)
                    statuses[r.status_code] = statuses.get(r.status_code, 0) + 1
                    if r.status_code >= 400:
                        errors += 1
                except httpx.HTTPError:
                    errors += 1
                latencies.append(time.perf_counter() - t0)

        t0 = time.perf_counter()
        await asyncio.gather(*(poller() for _ in range(POLLERS)))
        elapsed = time.perf_counter() - t0
    latencies.sort()
    n = len(latencies)
    pick = lambda q: latencies[min(n - 1, int(q * n))] * 1000 if n else float("nan")  # noqa: E731
    return {"rps": n / elapsed, "p50_ms": pick(0.5), "p99_ms": pick(0.99), "errors": errors, "statuses": statuses}


def run(quick: bool = False, *, seconds: float | None = None) -> list[dict]:
    seconds = seconds or (3.0 if quick else 10.0)
    tmp = Path(tempfile.mkdtemp(prefix="shoalcast-bench-api-"))
    url = f"sqlite:///{tmp / 'bench.sqlite3'}"
    _populate(url)
    port = _free_port()
    env = {**os.environ, "SHOALCAST_DATABASE_URL": url, "SHOALCAST_SCHEDULER_ENABLED": "false",
           "SHOALCAST_DATA_DIR": str(tmp)}
    proc = subprocess.Popen(
        [sys.executable, "-m", "uvicorn", "bench.bench_api:bench_app", "--factory", "--host", "127.0.0.1",
         "--port", str(port), "--log-level", "warning", "--no-access-log"],
        env=env, cwd=Path(__file__).resolve().parents[1], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
    )
    base = f"http://127.0.0.1:{port}"
    try:
        import httpx

        for _ in range(100):  # wait for the server to listen (bounded)
            try:
                httpx.get(f"{base}/healthz", timeout=1)
                break
            except httpx.HTTPError:
                time.sleep(0.1)
        hz = f"/v1/agencies/{AGENCY}/hazards"
        bare = asyncio.run(_phase(base, "/bare", seconds, conditional=False))
        stop = threading.Event()
        ingests = [0]
        feeder = threading.Thread(target=_ingest_loop, args=(url, stop, ingests), daemon=True)
        feeder.start()  # the worker's ingest path runs while lifeguards poll
        try:
            cond = asyncio.run(_phase(base, hz, seconds, conditional=True))
            full = asyncio.run(_phase(base, hz, seconds, conditional=False))
        finally:
            stop.set()
            feeder.join(timeout=30)
    finally:
        proc.terminate()
        proc.wait(timeout=20)

    def row(name: str, m: dict, ratio: bool) -> dict:
        return {
            "benchmark": f"api: {name} ({POLLERS} pollers, {seconds:.0f} s)",
            "result": f"{m['rps']:.0f} req/s, p50 {m['p50_ms']:.1f} ms, p99 {m['p99_ms']:.1f} ms, "
                      f"errors {m['errors']}, statuses {m['statuses']}",
            "ratio": round(m["rps"] / bare["rps"], 3) if ratio and bare["rps"] else None,
            "ratio_of": "req/s vs bare constant endpoint, same server" if ratio else "",
            "target": ">= 0.5" if ratio else "",
        }

    rows = [row("bare constant endpoint", bare, False), row("hazards with If-None-Match (304)", cond, True),
            row("hazards without If-None-Match (200)", full, True)]
    rows[1]["result"] += f"; {ingests[0]} ingests meanwhile"
    return rows


if __name__ == "__main__":
    from bench.common import print_rows

    print_rows(run(quick="--quick" in sys.argv, seconds=60.0 if "--long" in sys.argv else None))
