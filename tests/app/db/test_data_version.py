"""app.db.version: the data-version row every change of an outlook's inputs bumps, read by every process.

Outside references: SQLAlchemy's session-event contract (after_flush sees what the flush wrote;
a rollback undoes the transaction's writes) and PostgreSQL's advisory locks (documentation,
"Advisory Locks": pg_try_advisory_xact_lock returns false while another session holds the key;
transaction-level locks are released at commit). The two-process test runs two interpreters on one
PostgreSQL database, as `serve --workers 2` does.
"""

from __future__ import annotations

import os
import subprocess
import sys
import textwrap
import time
from datetime import UTC, datetime, timedelta
from pathlib import Path

import pytest
import sqlalchemy as sa

from app.db import version
from app.db.session import get_engine, session_scope
from app.db.tables import Agency, DataVersion, HazardPolicy, Job, OutlookCache, Source

ROOT = Path(__file__).resolve().parents[3]
T0 = datetime(2030, 6, 1, 0, tzinfo=UTC)


def _now(url: str) -> int:
    with get_engine(url).connect() as conn:
        return version.current(conn)


def test_a_fresh_database_starts_at_the_clock(migrated_db: str) -> None:
    # ms since 1970 at creation: a recreated database does not reuse the versions (ETags) of one it
    # replaces, so a fresh stamp lies after this file was written and not after now
    assert datetime(2026, 12, 1, tzinfo=UTC).timestamp() * 1000 < _now(migrated_db) <= time.time() * 1000


def test_tracked_changes_bump_derived_rows_do_not(migrated_db: str) -> None:
    v0 = _now(migrated_db)
    with session_scope(migrated_db) as s:
        s.add(Source(id="b1", name="B1", format="cf-netcdf", latitude=0.0, longitude=0.0, urls=[], config={}))
    v1 = _now(migrated_db)
    assert v1 > v0
    with session_scope(migrated_db) as s:  # derived or bookkeeping rows: no bump
        s.add(Job(id="j1", kind="tables", status="queued", params={}))
    assert _now(migrated_db) == v1
    with session_scope(migrated_db) as s:  # a change of an existing row bumps
        s.get(Source, "b1").name = "B one"
    v2 = _now(migrated_db)
    assert v2 > v1
    with session_scope(migrated_db) as s:  # loading without changing does not
        s.get(Source, "b1").name = "B one"
    assert _now(migrated_db) == v2
    with session_scope(migrated_db) as s:
        s.add(Agency(id="g", name="G", spots=[], alert_level=2))
        s.flush()
        s.add(HazardPolicy(agency_id="g", spot_key="", levels=[{"level": 0, "label": "open"}]))
    assert _now(migrated_db) > v2


def test_a_session_sees_its_own_bump_and_a_rollback_takes_it_back(migrated_db: str) -> None:
    v0 = _now(migrated_db)
    with pytest.raises(RuntimeError), session_scope(migrated_db) as s:
        s.add(Source(id="b2", name="B2", format="cf-netcdf", latitude=0.0, longitude=0.0, urls=[], config={}))
        s.flush()
        assert version.current(s) > v0  # the same transaction reads its own change
        raise RuntimeError("abort")
    assert _now(migrated_db) == v0


def test_the_reader_agrees_and_a_missing_row_is_made_again(migrated_db: str) -> None:
    r = version.Reader(migrated_db)
    try:
        assert r.read() == _now(migrated_db)
        with get_engine(migrated_db).begin() as conn:
            conn.execute(sa.delete(DataVersion.__table__))
        assert r.read() == 0
        with session_scope(migrated_db) as s:
            s.add(Source(id="b3", name="B3", format="cf-netcdf", latitude=0.0, longitude=0.0, urls=[], config={}))
        assert r.read() == _now(migrated_db) > 0
    finally:
        r.dispose()


@pytest.mark.postgres
def test_two_engines_see_one_version(postgres_url: str) -> None:
    """Two engines (two processes' pools) on one PostgreSQL database: a write through one moves
    the version the other reads, so an ETag made in one worker is checked right in the other."""
    from app.db import migrate

    migrate.upgrade(postgres_url)
    other = sa.create_engine(postgres_url)
    try:
        before = version.Reader(postgres_url)
        v0 = before.read()
        with sa.orm.Session(other) as s:
            s.add(Source(id="b4", name="B4", format="cf-netcdf", latitude=0.0, longitude=0.0, urls=[], config={}))
            s.commit()
        assert before.read() > v0
        before.dispose()
    finally:
        other.dispose()


CHILD = textwrap.dedent("""
    import sys, time
    from datetime import datetime
    from app.db.session import session_scope
    from app.services import outlook_cache

    url, start_at, t0 = sys.argv[1], float(sys.argv[2]), datetime.fromisoformat(sys.argv[3])
    real = outlook_cache.compute_outlook

    def slow(*args, **kw):  # long enough that the two processes overlap
        time.sleep(1.5)
        return real(*args, **kw)

    outlook_cache.compute_outlook = slow
    time.sleep(max(0.0, start_at - time.time()))
    with session_scope(url) as s:
        _, computed = outlook_cache.get_or_compute(s, "beach-h", hours=6, start=t0)
    print("computed" if computed else "reused")
""")


def _two_processes(url: str) -> list[str]:
    env = {**os.environ, "PYTHONPATH": str(ROOT), "SHOALCAST_DATABASE_URL": url}
    start_at = time.time() + 8.0  # both interpreters have imported the app by then
    procs = [subprocess.Popen([sys.executable, "-c", CHILD, url, str(start_at), T0.isoformat()], cwd=ROOT, env=env,
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True) for _ in range(2)]  # fmt: skip
    out = []
    for p in procs:
        stdout, stderr = p.communicate(timeout=120)
        assert p.returncode == 0, stderr
        out.append(stdout.strip().splitlines()[-1])
    return sorted(out)


@pytest.mark.postgres
def test_two_processes_compute_a_new_ingest_once(postgres_url: str) -> None:
    """`serve --workers 2`: both processes ask for the same outlook at once, first ever and after
    a new ingest; one computes, the other waits for it (first) or answers the previous one (after)."""
    import importlib.util

    from app.db import migrate
    from app.ingest.store import store_result

    spec = importlib.util.spec_from_file_location("_outlook_tests", ROOT / "tests/app/services/test_outlooks.py")
    ot = importlib.util.module_from_spec(spec)
    sys.modules.setdefault("_outlook_tests", ot)
    spec.loader.exec_module(ot)

    migrate.upgrade(postgres_url)
    with session_scope(postgres_url) as s:
        src = ot._source(s, "model")
        ot._spot(s, "beach-h", ["model"])
        times = ot.fx.hours(T0, 6)
        store_result(s, src, ot._records(times, [ot.fx.swell(1.0, 10.0, 270.0)] * 6, issue=T0), files=["f"])
    assert _two_processes(postgres_url) == ["computed", "reused"]
    with session_scope(postgres_url) as s:  # a new model issue: the cached outlook is out of date
        src = s.get(Source, "model")
        store_result(s, src, ot._records(times, [ot.fx.swell(1.5, 12.0, 270.0)] * 6, issue=T0 + timedelta(hours=1)),
                     files=["g"])  # fmt: skip
    assert _two_processes(postgres_url) == ["computed", "reused"]
    with session_scope(postgres_url) as s:
        assert s.scalar(sa.select(sa.func.count()).select_from(OutlookCache)) == 1
