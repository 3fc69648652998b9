"""The scheduler: job settings follow the sources table, exactly one of two workers schedules (file
lock on SQLite, advisory lock on PostgreSQL), a standby takes over, and a worker killed with SIGKILL
mid-ingest leaves the batch wholly retried, then stored exactly once."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import textwrap
import threading
import time
from datetime import timedelta
from pathlib import Path

import pytest
from sqlalchemy import func, select

from app.db.session import session_scope
from app.db.tables import Observation, Source, SourceHealth
from app.ingest.fetch import reset_fetcher
from app.ingest.lock import FileLock, PostgresAdvisoryLock
from app.ingest.scheduler import RESYNC_JOB_ID, Worker, build_scheduler, sync_jobs

WAIT_S = 10.0  # upper bound for anything a test waits for (it returns as soon as the thing happens)


def _wait_for(predicate, what: str, timeout: float = WAIT_S) -> None:  # type: ignore[no-untyped-def]
    deadline = time.monotonic() + timeout
    while not predicate():
        if time.monotonic() > deadline:
            raise AssertionError(f"gave up waiting for {what}")
        time.sleep(0.02)


def _count(url: str) -> int:
    with session_scope(url) as s:
        return s.scalar(select(func.count(Observation.id)))


def _health(url: str, sid: str) -> SourceHealth:
    with session_scope(url) as s:
        h = s.get(SourceHealth, sid)
        s.expunge(h)
        return h


def test_jobs_follow_the_sources_table(migrated_db, helpers) -> None:  # type: ignore[no-untyped-def]
    helpers.add_source(migrated_db, "west", ["http://127.0.0.1:9/a.data_spec"], poll_minutes=30)
    helpers.add_source(migrated_db, "east", ["http://127.0.0.1:9/b.data_spec"], poll_minutes=10)
    sched = build_scheduler()
    sched.start(paused=True)  # paused: nothing runs, we only look at the jobs
    try:
        assert sync_jobs(sched, migrated_db) == {"added": ["east", "west"], "removed": [], "rescheduled": []}
        west = sched.get_job("west")
        # APScheduler 3.x user guide, "Missed job executions and coalescing": coalesce on, one instance;
        # misfire grace about half the interval (our choice, docs/architecture.md §4)
        assert west.coalesce is True and west.max_instances == 1
        assert west.trigger.interval == timedelta(minutes=30) and west.misfire_grace_time == 900
        assert sched.get_job("east").misfire_grace_time == 300
        assert sync_jobs(sched, migrated_db) == {"added": [], "removed": [], "rescheduled": []}

        with session_scope(migrated_db) as s:
            s.get(Source, "west").poll_minutes = 60
            s.delete(s.get(Source, "east"))
        assert sync_jobs(sched, migrated_db) == {"added": [], "removed": ["east"], "rescheduled": ["west"]}
        west = sched.get_job("west")
        assert west.trigger.interval == timedelta(hours=1) and west.misfire_grace_time == 1800
        assert sched.get_job("east") is None
    finally:
        sched.shutdown(wait=False)


def test_file_locks_exclude_each_other(tmp_path) -> None:  # type: ignore[no-untyped-def]
    a, b = FileLock(tmp_path / "x.lock"), FileLock(tmp_path / "x.lock")
    assert a.try_acquire() is True
    assert b.try_acquire() is False
    a.release()
    assert b.try_acquire() is True
    assert a.try_acquire() is False
    b.release()


@pytest.mark.postgres
def test_advisory_locks_exclude_each_other_and_die_with_the_session(postgres_url) -> None:  # type: ignore[no-untyped-def]
    import sqlalchemy as sa

    a, b = PostgresAdvisoryLock(postgres_url), PostgresAdvisoryLock(postgres_url)
    try:
        assert a.try_acquire() is True and a.still_held()
        assert b.try_acquire() is False
        # the holder's session ends (crash, network): the lock goes with it and the standby takes over
        pid = a._conn.execute(sa.text("SELECT pg_backend_pid()")).scalar()
        admin = sa.create_engine(postgres_url, poolclass=sa.pool.NullPool)
        with admin.connect() as conn:
            conn.execute(sa.text("SELECT pg_terminate_backend(:p)"), {"p": pid})
        admin.dispose()
        assert a.still_held() is False
        assert b.try_acquire() is True and b.still_held()
        assert a.try_acquire() is False
    finally:
        a.release()
        b.release()


def _start(worker: Worker) -> tuple[threading.Thread, threading.Event]:
    stop = threading.Event()
    t = threading.Thread(target=worker.run, args=(stop,), daemon=True)
    t.start()
    return t, stop


def test_two_workers_exactly_one_schedules_and_the_standby_takes_over(migrated_db, server, helpers) -> None:  # type: ignore[no-untyped-def]
    urls = [f"{server.base}/{n}" for n in helpers.realtime_files(helpers.make_records(2))]
    for name, body in helpers.realtime_files(helpers.make_records(2)).items():
        server.routes["/" + name] = helpers.Static(body)
    helpers.add_source(migrated_db, "west", urls)
    reset_fetcher()
    workers = [Worker(migrated_db, lock_retry_s=0.05, resync_s=60) for _ in range(2)]
    runs = [_start(w) for w in workers]
    try:
        _wait_for(lambda: all(w.tried.is_set() for w in workers), "both workers to try the lock")
        _wait_for(lambda: any(w.active.is_set() for w in workers), "one worker to start")
        time.sleep(0.2)  # several lock retries of the standby
        assert sum(w.active.is_set() for w in workers) == 1
        leader = next(i for i, w in enumerate(workers) if w.active.is_set())
        # the leader's first poll stored the set, once
        _wait_for(lambda: _health(migrated_db, "west").last_success is not None, "the first poll")
        assert _count(migrated_db) == 2
        assert {j.id for j in workers[leader].scheduler.get_jobs()} == {"west", RESYNC_JOB_ID}

        thread, stop = runs[leader]
        stop.set()
        thread.join(WAIT_S)
        standby = workers[1 - leader]
        _wait_for(standby.active.is_set, "the standby to take over")
        assert not workers[leader].active.is_set()
        _wait_for(lambda: server.count("/zz901.data_spec") >= 2, "the standby's first poll")
        assert _count(migrated_db) == 2  # it found nothing new: nothing duplicated
    finally:
        for _thread, stop in runs:
            stop.set()
        for thread, _ in runs:
            thread.join(WAIT_S)
        reset_fetcher()


_KILLABLE_WORKER = textwrap.dedent(
    """
    import sys, time
    import app.ingest.fetch as fetch
    from app.ingest.scheduler import run_worker

    marker = sys.argv[2]

    def stall(source_id):  # the records are flushed, the transaction is open: wait to be killed
        open(marker, "w").close()
        time.sleep(60)

    fetch._before_commit_hook = stall
    run_worker(database_url=sys.argv[1], lock_retry_s=0.1)
    """
)


def test_worker_killed_mid_ingest_retries_the_whole_batch_once(migrated_db, server, helpers, tmp_path) -> None:  # type: ignore[no-untyped-def]
    for name, body in helpers.realtime_files(helpers.make_records(3)).items():
        server.routes["/" + name] = helpers.Static(body)
    helpers.add_source(migrated_db, "west", [f"{server.base}/{n}" for n in helpers.realtime_files(helpers.make_records(3))])
    marker = tmp_path / "in-ingest"
    env = dict(os.environ)
    env["SHOALCAST_FETCH_TIMEOUT_S"] = "5"
    proc = subprocess.Popen(
        [sys.executable, "-c", _KILLABLE_WORKER, migrated_db, str(marker)],
        cwd=Path(__file__).resolve().parents[3], env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
    )
    try:
        _wait_for(lambda: marker.exists() or proc.poll() is not None, "the worker to reach the ingest", timeout=30)
        assert proc.poll() is None, proc.stderr.read().decode()[-2000:]
        proc.send_signal(signal.SIGKILL)
        proc.wait(WAIT_S)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait(WAIT_S)
        proc.stderr.close()
    # nothing of the batch is stored and the validators did not move: the batch will be retried whole
    assert _count(migrated_db) == 0
    h = _health(migrated_db, "west")
    assert h.validators == {} and h.stored == 0

    reset_fetcher()
    worker = Worker(migrated_db, lock_retry_s=0.05)
    thread, stop = _start(worker)  # the lock died with the killed process: this one gets it
    try:
        _wait_for(worker.active.is_set, "the restarted worker to hold the lock")
        _wait_for(lambda: _health(migrated_db, "west").last_success is not None, "the retried batch")
    finally:
        stop.set()
        thread.join(WAIT_S)
        reset_fetcher()
    assert _count(migrated_db) == 3
    h = _health(migrated_db, "west")
    assert h.stored == 3 and len(h.validators) == 5
    with session_scope(migrated_db) as s:
        times = list(s.scalars(select(Observation.time)))
    assert len(set(times)) == 3


def test_worker_stops_cleanly_on_sigterm(tmp_path, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    from app.db import migrate

    url = f"sqlite:///{tmp_path / 'w.sqlite3'}"
    migrate.upgrade(url)
    lock_file = tmp_path / "w.sqlite3.scheduler-lock"
    code = "import sys; from app.ingest.scheduler import run_worker; run_worker(database_url=sys.argv[1]); print('stopped')"
    proc = subprocess.Popen([sys.executable, "-c", code, url], cwd=Path(__file__).resolve().parents[3],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    try:
        # the lock file holds the pid of the process that holds the lock
        _wait_for(lambda: proc.poll() is not None or (lock_file.exists() and lock_file.read_text().strip() == str(proc.pid)),
                  "the worker to take the lock", timeout=30)
        assert proc.poll() is None, proc.stderr.read().decode()[-2000:]
        proc.send_signal(signal.SIGTERM)
        out, err = proc.communicate(timeout=WAIT_S)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.communicate(timeout=WAIT_S)
    assert proc.returncode == 0, err.decode()[-2000:]
    assert out.decode().strip() == "stopped"
    assert FileLock(lock_file).try_acquire() is True  # released on the way out


def test_worker_once_prints_a_summary_per_source(migrated_db, server, helpers, capsys) -> None:  # type: ignore[no-untyped-def]
    import argparse
    import json

    from app.commands import worker as worker_command

    for name, body in helpers.realtime_files(helpers.make_records(2)).items():
        server.routes["/" + name] = helpers.Static(body)
    helpers.add_source(migrated_db, "west", [f"{server.base}/{n}" for n in helpers.realtime_files(helpers.make_records(2))])
    server.routes["/down.data_spec"] = [helpers.Reply(404)]
    helpers.add_source(migrated_db, "down", [f"{server.base}/down.data_spec"])
    parser = argparse.ArgumentParser()
    worker_command.register(parser.add_subparsers())
    reset_fetcher()
    try:
        args = parser.parse_args(["worker", "--once", "--json"])
        assert args.func(args) == 0
        rows = {r["source_id"]: r for r in json.loads(capsys.readouterr().out)}
        assert rows["west"]["status"] == "stored" and rows["west"]["stored"] == 2
        assert rows["down"]["status"] == "error" and "HTTP 404" in rows["down"]["error"]
        args = parser.parse_args(["worker", "--once"])
        assert args.func(args) == 0
        text = capsys.readouterr().out
        assert "not_modified" in text and "HTTP 404" in text
    finally:
        reset_fetcher()


def test_new_records_trigger_the_outlook_refresh_hook(migrated_db, server, helpers, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    import types

    from app.ingest.scheduler import poll_source

    calls = []
    fake = types.ModuleType("app.services.outlooks")
    fake.refresh_stale = lambda session: calls.append(session)  # type: ignore[attr-defined]
    monkeypatch.setitem(sys.modules, "app.services.outlooks", fake)
    import app.services

    monkeypatch.setattr(app.services, "outlooks", fake, raising=False)  # if the real one was imported already
    for name, body in helpers.realtime_files(helpers.make_records(2)).items():
        server.routes["/" + name] = helpers.Static(body)
    helpers.add_source(migrated_db, "west", [f"{server.base}/{n}" for n in helpers.realtime_files(helpers.make_records(2))])
    reset_fetcher()
    try:
        assert poll_source(migrated_db, "west").status == "stored"
        assert len(calls) == 1
        assert poll_source(migrated_db, "west").status == "not_modified"
        assert len(calls) == 1  # nothing new: nothing to recompute
        fake.refresh_stale = lambda session: 1 / 0  # a broken refresh must not break polling
        server.routes["/zz901.data_spec"].body = helpers.realtime_files(helpers.make_records(3))["zz901.data_spec"]
        assert poll_source(migrated_db, "west").status == "stored"
    finally:
        reset_fetcher()
