"""The single-scheduler lock: however many processes start, one schedules.

PostgreSQL: a session-level advisory lock (`pg_try_advisory_lock`) on a dedicated connection that is
never pooled and is held for the life of the process; the server drops the lock when that session
ends (crash, SIGKILL, network loss), so a standby that retries periodically takes over.
SQLite: an `fcntl.flock` on a file beside the database file (in data_dir when there is no file); the
kernel drops it when the process dies. Both are non-blocking tries; the caller retries.
"""

from __future__ import annotations

import fcntl
import hashlib
import logging
import os
from pathlib import Path
from typing import Protocol

import sqlalchemy as sa
from sqlalchemy.engine import make_url
from sqlalchemy.pool import NullPool

__all__ = ["ADVISORY_KEY", "FileLock", "PostgresAdvisoryLock", "SchedulerLock", "scheduler_lock"]

log = logging.getLogger(__name__)

# A fixed signed 64-bit key for "the shoalcast scheduler" (first 8 bytes of a sha256, so it is stable
# across versions and unlikely to meet another application's key on a shared server).
ADVISORY_KEY = int.from_bytes(hashlib.sha256(b"shoalcast-scheduler").digest()[:8], "big", signed=True)


class SchedulerLock(Protocol):
    def try_acquire(self) -> bool: ...
    def still_held(self) -> bool: ...
    def release(self) -> None: ...


class FileLock:
    """An exclusive, non-blocking `flock` held until release() or process exit."""

    def __init__(self, path: Path) -> None:
        self.path = Path(path)
        self._fd: int | None = None

    @property
    def held(self) -> bool:
        return self._fd is not None

    def try_acquire(self) -> bool:
        if self._fd is not None:
            return True
        self.path.parent.mkdir(parents=True, exist_ok=True)
        fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:  # BlockingIOError: someone else holds it
            os.close(fd)
            return False
        os.ftruncate(fd, 0)
        os.write(fd, f"{os.getpid()}\n".encode())  # for humans: who holds it
        self._fd = fd
        return True

    def still_held(self) -> bool:
        return self._fd is not None

    def release(self) -> None:
        if self._fd is not None:
            try:
                fcntl.flock(self._fd, fcntl.LOCK_UN)
            finally:
                os.close(self._fd)
                self._fd = None


class PostgresAdvisoryLock:
    """`pg_try_advisory_lock(key)` on one dedicated autocommit connection (NullPool: never shared)."""

    def __init__(self, url: str, key: int = ADVISORY_KEY) -> None:
        self.url = url
        self.key = key
        self._engine: sa.Engine | None = None
        self._conn: sa.Connection | None = None

    @property
    def held(self) -> bool:
        return self._conn is not None

    def try_acquire(self) -> bool:
        if self._conn is not None:
            return self.still_held()
        try:
            if self._engine is None:
                self._engine = sa.create_engine(self.url, poolclass=NullPool, connect_args={"connect_timeout": 5})
            # autocommit: no transaction stays open (idle-in-transaction timeouts would end the session)
            conn = self._engine.connect().execution_options(isolation_level="AUTOCOMMIT")
        except sa.exc.SQLAlchemyError as exc:
            log.warning("scheduler lock: cannot connect to PostgreSQL: %s", exc)
            return False
        try:
            got = bool(conn.execute(sa.text("SELECT pg_try_advisory_lock(:k)"), {"k": self.key}).scalar())
        except sa.exc.SQLAlchemyError as exc:
            log.warning("scheduler lock: %s", exc)
            got = False
        if not got:
            conn.close()
            return False
        self._conn = conn
        return True

    def still_held(self) -> bool:
        """True while our session (and so the lock) is alive; a lost session means the lock is gone."""
        if self._conn is None:
            return False
        try:
            n = self._conn.execute(
                sa.text(
                    "SELECT count(*) FROM pg_locks WHERE locktype = 'advisory' AND granted "
                    "AND objsubid = 1 AND pid = pg_backend_pid() AND ((classid::bigint << 32) | objid::bigint) = :k"
                ),
                {"k": self.key},
            ).scalar()
            return bool(n)
        except sa.exc.SQLAlchemyError:
            self._drop()
            return False

    def _drop(self) -> None:
        if self._conn is not None:
            try:
                self._conn.invalidate()
                self._conn.close()
            except Exception:  # noqa: BLE001 - the connection is already broken
                pass
            self._conn = None

    def release(self) -> None:
        if self._conn is not None:
            try:
                self._conn.execute(sa.text("SELECT pg_advisory_unlock(:k)"), {"k": self.key})
                self._conn.close()
            except sa.exc.SQLAlchemyError:
                self._drop()
            self._conn = None
        if self._engine is not None:
            self._engine.dispose()
            self._engine = None


def scheduler_lock(database_url: str, data_dir: Path) -> FileLock | PostgresAdvisoryLock:
    """The right lock for this database."""
    url = make_url(database_url)
    if url.get_backend_name() == "sqlite":
        if url.database and url.database != ":memory:":
            db = Path(url.database).resolve()
            return FileLock(db.with_name(db.name + ".scheduler-lock"))
        return FileLock(Path(data_dir) / "scheduler.lock")
    if url.get_backend_name() == "postgresql":
        return PostgresAdvisoryLock(database_url)
    raise ValueError(f"no scheduler lock for database backend {url.get_backend_name()!r}")
