"""The poller: APScheduler 3.11 with one job per source, behind the single-scheduler lock.

Jobs live in a MemoryJobStore and are re-registered from the database (the sources table is the
schedule); a resync job adds, removes and reschedules them when sources change. Each job is a thin
call into `fetch_source`, coalesced, one instance at a time, with a misfire grace of half its poll
interval (a poll that is late by more than that is skipped: the next one is due soon anyway).
"""

from __future__ import annotations

import logging
import signal
import threading
import uuid
from datetime import UTC, datetime, timedelta
from typing import Any

from apscheduler.executors.pool import ThreadPoolExecutor
from apscheduler.jobstores.memory import MemoryJobStore
from apscheduler.schedulers.background import BackgroundScheduler
from sqlalchemy import select

from app.config import get_settings
from app.db.session import session_scope
from app.db.tables import Source
from app.ingest.fetch import FetchOutcome, fetch_source
from app.ingest.lock import scheduler_lock
from app.observability import bind

__all__ = ["RESYNC_JOB_ID", "Worker", "build_scheduler", "poll_source", "refresh_outlooks", "run_worker", "sync_jobs"]

log = logging.getLogger(__name__)

RESYNC_JOB_ID = "__resync__"


def build_scheduler(*, max_workers: int = 4) -> BackgroundScheduler:
    return BackgroundScheduler(
        timezone="UTC",
        jobstores={"default": MemoryJobStore()},
        executors={"default": ThreadPoolExecutor(max_workers=max_workers)},
        job_defaults={"coalesce": True, "max_instances": 1},
    )


def refresh_outlooks(database_url: str) -> None:
    """Recompute stale outlooks if the outlook service provides `refresh_stale(session)`."""
    try:
        from app.services import outlooks  # type: ignore[attr-defined]
    except ImportError:
        return
    refresh = getattr(outlooks, "refresh_stale", None)
    if refresh is None:
        return
    try:
        with session_scope(database_url) as session:
            refresh(session)
    except Exception:  # noqa: BLE001 - a failed refresh must not stop polling; outlooks stay stale
        log.exception("refreshing stale outlooks failed")


def poll_source(database_url: str, source_id: str) -> FetchOutcome | None:
    """The job: one poll of one source. Never raises (a job that raises is only logged by APScheduler,
    but we want the reason in the source's health, which fetch_source records)."""
    with bind(job_id=f"poll-{source_id}-{uuid.uuid4().hex[:8]}", source_id=source_id):
        return _poll(database_url, source_id)


def _poll(database_url: str, source_id: str) -> FetchOutcome | None:
    try:
        outcome = fetch_source(database_url, source_id)
    except Exception:  # noqa: BLE001 - defensive: fetch_source records its own failures
        log.exception("poll of source %s failed", source_id)
        return None
    if outcome.status == "error":
        log.warning("source %s: %s", source_id, outcome.error)
    elif outcome.new_records:
        log.info("source %s: %d new or corrected records", source_id, outcome.new_records)
        refresh_outlooks(database_url)
    return outcome


def _interval_s(poll_minutes: float) -> float:
    return max(30.0, float(poll_minutes) * 60.0)


def sync_jobs(scheduler: BackgroundScheduler, database_url: str, *, first_run: datetime | None = None) -> dict[str, list[str]]:
    """Make the scheduler's jobs match the sources table; returns {"added", "removed", "rescheduled"}."""
    with session_scope(database_url) as session:
        wanted = {s.id: s.poll_minutes for s in session.scalars(select(Source))}
    jobs = {j.id: j for j in scheduler.get_jobs() if j.id != RESYNC_JOB_ID}
    changes: dict[str, list[str]] = {"added": [], "removed": [], "rescheduled": []}
    for job_id in set(jobs) - set(wanted):
        scheduler.remove_job(job_id)
        changes["removed"].append(job_id)
    for source_id, minutes in sorted(wanted.items()):
        interval = _interval_s(minutes)
        grace = max(1, int(interval / 2))
        job = jobs.get(source_id)
        if job is None:
            scheduler.add_job(
                poll_source,
                "interval",
                seconds=interval,
                args=[database_url, source_id],
                id=source_id,
                name=f"poll {source_id}",
                replace_existing=True,
                coalesce=True,
                max_instances=1,
                misfire_grace_time=grace,
                next_run_time=first_run or datetime.now(UTC),  # poll at once, then every interval
            )
            changes["added"].append(source_id)
        elif job.trigger.interval != timedelta(seconds=interval):
            scheduler.modify_job(source_id, misfire_grace_time=grace)
            scheduler.reschedule_job(source_id, trigger="interval", seconds=interval)
            changes["rescheduled"].append(source_id)
    return changes


class Worker:
    """Waits for the lock, then schedules until stopped (or until the lock is lost: then it waits again).

    `active` is set while this worker holds the lock and its scheduler runs; `tried` once it has
    tried the lock at least once (tests use both).
    """

    def __init__(
        self,
        database_url: str | None = None,
        *,
        lock_retry_s: float = 15.0,
        resync_s: float = 60.0,
        max_workers: int = 4,
    ) -> None:
        settings = get_settings()
        self.database_url = database_url or settings.resolved_database_url()
        self.lock = scheduler_lock(self.database_url, settings.data_dir)
        self.lock_retry_s = lock_retry_s
        self.resync_s = resync_s
        self.max_workers = max_workers
        self.active = threading.Event()
        self.tried = threading.Event()
        self.scheduler: BackgroundScheduler | None = None

    def _resync(self) -> None:
        if self.scheduler is None:
            return
        try:
            changes = sync_jobs(self.scheduler, self.database_url)
        except Exception:  # noqa: BLE001 - the database may be briefly down: try at the next resync
            log.exception("resync of source jobs failed")
            return
        if any(changes.values()):
            log.info("source jobs: %s", changes)

    def _start(self) -> None:
        self.scheduler = build_scheduler(max_workers=self.max_workers)
        self.scheduler.start()
        self._resync()
        self.scheduler.add_job(
            self._resync, "interval", seconds=self.resync_s, id=RESYNC_JOB_ID, replace_existing=True,
            coalesce=True, max_instances=1, misfire_grace_time=max(1, int(self.resync_s / 2)),
        )
        self.active.set()
        log.info("scheduler started (this process holds the scheduler lock)")

    def _stop_scheduler(self) -> None:
        if self.scheduler is not None:
            self.scheduler.shutdown(wait=True)  # let running polls finish their transaction
            self.scheduler = None
        self.active.clear()

    def run(self, stop_event: threading.Event) -> None:
        try:
            while not stop_event.is_set():
                got = self.lock.try_acquire()
                self.tried.set()
                if not got:
                    stop_event.wait(self.lock_retry_s)  # standby: the holder may die
                    continue
                self._start()
                while not stop_event.wait(self.lock_retry_s):
                    if not self.lock.still_held():
                        log.warning("scheduler lock lost; stopping the scheduler and waiting to retake it")
                        break
                self._stop_scheduler()
        finally:
            self._stop_scheduler()
            self.lock.release()


def run_worker(stop_event: threading.Event | None = None, *, database_url: str | None = None, **options: Any) -> None:
    """Block running the scheduler (when this process wins the lock) until SIGINT/SIGTERM or `stop_event`."""
    stop = stop_event or threading.Event()
    restore: dict[int, Any] = {}
    if threading.current_thread() is threading.main_thread():
        for sig in (signal.SIGINT, signal.SIGTERM):
            restore[sig] = signal.signal(sig, lambda *_: stop.set())
    try:
        Worker(database_url, **options).run(stop)
    finally:
        for sig, handler in restore.items():
            signal.signal(sig, handler)
