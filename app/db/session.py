"""Engine and session factory. SQLite gets WAL, a busy timeout and foreign keys per connection;
PostgreSQL connections are pre-pinged so the pool survives a server restart."""

from __future__ import annotations

import threading
from collections.abc import Iterator
from contextlib import contextmanager

import sqlalchemy as sa
from sqlalchemy.orm import Session, sessionmaker

from app.config import get_settings

_engines: dict[str, sa.Engine] = {}
_lock = threading.Lock()


def _sqlite_pragmas(dbapi_connection, _record) -> None:  # type: ignore[no-untyped-def]
    cur = dbapi_connection.cursor()
    cur.execute("PRAGMA busy_timeout=15000")
    cur.execute("PRAGMA journal_mode=WAL")
    cur.execute("PRAGMA foreign_keys=ON")
    cur.close()


def make_engine(url: str) -> sa.Engine:
    if url.startswith("sqlite"):
        engine = sa.create_engine(url, connect_args={"check_same_thread": False, "timeout": 15})
        sa.event.listen(engine, "connect", _sqlite_pragmas)
    else:
        engine = sa.create_engine(url, pool_pre_ping=True, pool_size=10, max_overflow=20, pool_recycle=1800)
    return engine


def get_engine(url: str | None = None) -> sa.Engine:
    url = url or get_settings().resolved_database_url()
    with _lock:
        engine = _engines.get(url)
        if engine is None:
            engine = _engines[url] = make_engine(url)
        return engine


def dispose_engines() -> None:
    from app.db.version import dispose_readers

    dispose_readers()
    with _lock:
        for engine in _engines.values():
            engine.dispose()
        _engines.clear()


def session_factory(url: str | None = None) -> sessionmaker[Session]:
    return sessionmaker(bind=get_engine(url), expire_on_commit=False)


@contextmanager
def scoped(factory: sessionmaker[Session]) -> Iterator[Session]:
    """A session from `factory` that commits on success and rolls back on any error."""
    session = factory()
    try:
        yield session
        session.commit()
    except BaseException:
        session.rollback()
        raise
    finally:
        session.close()


def session_scope(url: str | None = None):  # type: ignore[no-untyped-def]
    """A session on `url` (default: the settings' database) that commits on success, else rolls back."""
    return scoped(session_factory(url))


__all__ = ["dispose_engines", "get_engine", "make_engine", "scoped", "session_factory", "session_scope"]
