"""The data version: one counter row (`data_version`) bumped in every transaction that changes what
outlooks, hazard summaries or spot answers are made of (spots, grids, break points, transfer
tables, sources, observations, agencies, policies, calibrations).

Every process reads the same row, so with several workers on PostgreSQL an ETag or an in-process
memo keyed on the version is right in all of them, and answering If-None-Match costs one primary
key read. The bump is automatic: a session event bumps the counter in every flush that writes a
tracked table, in the same transaction (so a rollback takes it back, and a reader of the same
session sees its own change). On PostgreSQL the row lock makes writers of tracked tables take
turns from their first such flush to their commit; ingest and table-build transactions are short
(parse first, then store and commit). Derived rows (cached outlooks, alerts, jobs, health) do
not bump it.
"""

from __future__ import annotations

import threading
import time

import sqlalchemy as sa
from sqlalchemy import event
from sqlalchemy.orm import Session

from app.db.tables import (
    Agency,
    Bathymetry,
    BreakPoint,
    Calibration,
    DataVersion,
    HazardPolicy,
    Observation,
    Source,
    Spot,
    TransferTableRow,
    utcnow,
)

TRACKED = (Agency, Bathymetry, BreakPoint, Calibration, HazardPolicy, Observation, Source, Spot, TransferTableRow)
_ROW = 1
_table = DataVersion.__table__
_READ = sa.select(_table.c.version).where(_table.c.id == _ROW)


def initial_version() -> int:
    """A fresh row starts at the clock in milliseconds, so a recreated database does not hand out
    the numbers (and so the ETags) of the one it replaces."""
    return int(time.time() * 1000)


def current(conn: sa.Connection | Session) -> int:
    """The data version now (0 when the row is missing, e.g. a schema made without migrations)."""
    value = conn.execute(_READ).scalar()
    return 0 if value is None else int(value)


class Reader:
    """Reads the data version for the 304 paths as cheaply as the driver allows: a small pool of its
    own in autocommit (no transaction to begin, no reset on return, no pre-ping round trip); a
    connection that fails (a server restart) is dropped and the read tried once more on a new one.
    Measured on SQLite: about 25 us of CPU per read against about 125 us through a pooled
    SQLAlchemy connection."""

    SQL = "SELECT version FROM data_version WHERE id = 1"

    def __init__(self, url: str) -> None:
        kw: dict[str, object] = {"pool_reset_on_return": None, "isolation_level": "AUTOCOMMIT"}
        if url.startswith("sqlite"):  # connections move between the server's threads, as in app.db.session
            kw["connect_args"] = {"check_same_thread": False, "timeout": 15}
        else:
            kw.update(pool_size=4, max_overflow=8, pool_recycle=1800)
        self.engine = sa.create_engine(url, **kw)  # type: ignore[arg-type]

    def _once(self) -> int:
        conn = self.engine.raw_connection()
        try:
            cur = conn.cursor()
            try:
                cur.execute(self.SQL)
                row = cur.fetchone()
            finally:
                cur.close()
        except Exception:
            conn.invalidate()
            raise
        finally:
            conn.close()
        return 0 if row is None else int(row[0])

    def read(self) -> int:
        try:
            return self._once()
        except self.engine.dialect.loaded_dbapi.OperationalError:
            return self._once()

    def dispose(self) -> None:
        self.engine.dispose()


_readers: dict[str, Reader] = {}
_readers_lock = threading.Lock()


def reader(url: str) -> Reader:
    """The process's `Reader` of `url`."""
    with _readers_lock:
        r = _readers.get(url)
        if r is None:
            r = _readers[url] = Reader(url)
        return r


def dispose_readers() -> None:
    with _readers_lock:
        for r in _readers.values():
            r.dispose()
        _readers.clear()


def bump(conn: sa.Connection) -> None:
    """Advance the version by one (creating the row when missing)."""
    res = conn.execute(sa.update(_table).where(_table.c.id == _ROW).values(version=_table.c.version + 1,
                                                                           changed_at=utcnow()))
    if res.rowcount == 0:
        conn.execute(sa.insert(_table).values(id=_ROW, version=initial_version(), changed_at=utcnow()))


def _changes(session: Session) -> bool:
    if any(isinstance(o, TRACKED) for o in session.new) or any(isinstance(o, TRACKED) for o in session.deleted):
        return True
    return any(isinstance(o, TRACKED) and session.is_modified(o) for o in session.dirty)


@event.listens_for(Session, "after_flush")
def _bump_on_flush(session: Session, _ctx: object) -> None:
    # new/dirty/deleted still show what this flush wrote (SQLAlchemy's after_flush contract)
    if _changes(session):
        bump(session.connection())


__all__ = ["TRACKED", "Reader", "bump", "current", "dispose_readers", "initial_version", "reader"]
