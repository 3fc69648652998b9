"""Shared fixtures: a clean SHOALCAST_ environment per test, and databases on SQLite and PostgreSQL.

PostgreSQL tests read SHOALCAST_TEST_POSTGRES_URL (default: the local server on 127.0.0.1:5432,
database `test`); each test gets its own fresh database on that server. Under CI=true a missing
server is a failure, never a skip.
"""

from __future__ import annotations

import os
import uuid
from collections.abc import Iterator

import pytest

PG_ENV = "SHOALCAST_TEST_POSTGRES_URL"
PG_DEFAULT = "postgresql+psycopg://postgres@127.0.0.1:5432/test"


def _in_ci() -> bool:
    return os.environ.get("CI", "").lower() in {"1", "true", "yes"}


@pytest.fixture(autouse=True)
def clean_environ(monkeypatch: pytest.MonkeyPatch, tmp_path) -> Iterator[None]:  # type: ignore[no-untyped-def]
    from app.config import get_settings

    for key in list(os.environ):
        if key.startswith("SHOALCAST_") and key != PG_ENV:
            monkeypatch.delenv(key)
    monkeypatch.setenv("SHOALCAST_DATA_DIR", str(tmp_path / "var"))
    monkeypatch.setenv("SHOALCAST_SCHEDULER_ENABLED", "false")
    get_settings.cache_clear()
    yield
    get_settings.cache_clear()
    from app.db.session import dispose_engines

    dispose_engines()


def _server_url() -> str:
    url = os.environ.get(PG_ENV, PG_DEFAULT)
    return url.replace("postgresql://", "postgresql+psycopg://", 1) if url.startswith("postgresql://") else url


@pytest.fixture(scope="session")
def postgres_server() -> str:
    import sqlalchemy as sa

    url = _server_url()
    try:
        engine = sa.create_engine(url)
        with engine.connect() as conn:
            conn.execute(sa.text("select 1"))
        engine.dispose()
    except Exception as exc:  # noqa: BLE001 - any connection failure means "no server"
        if _in_ci():
            pytest.fail(f"PostgreSQL tests must run under CI, but {url} does not answer: {exc}")
        pytest.skip(f"no PostgreSQL at {url}: {exc}")
    return url


@pytest.fixture
def postgres_url(postgres_server: str) -> Iterator[str]:
    """A fresh, empty database on the test server, dropped afterwards."""
    import sqlalchemy as sa
    from sqlalchemy.engine import make_url

    name = f"shoalcast_t_{uuid.uuid4().hex[:12]}"
    admin = sa.create_engine(postgres_server, isolation_level="AUTOCOMMIT")
    with admin.connect() as conn:
        conn.execute(sa.text(f'CREATE DATABASE "{name}"'))
    url = make_url(postgres_server).set(database=name).render_as_string(hide_password=False)
    try:
        yield url
    finally:
        from app.db.session import dispose_engines

        dispose_engines()
        with admin.connect() as conn:
            conn.execute(sa.text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        admin.dispose()


@pytest.fixture(params=["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def db_url(request: pytest.FixtureRequest, tmp_path, monkeypatch: pytest.MonkeyPatch) -> str:  # type: ignore[no-untyped-def]
    """An empty database URL, once on SQLite and once on PostgreSQL; also set as SHOALCAST_DATABASE_URL."""
    from app.config import get_settings

    if request.param == "sqlite":
        url = f"sqlite:///{tmp_path / 'test.sqlite3'}"
    else:
        url = request.getfixturevalue("postgres_url")
    monkeypatch.setenv("SHOALCAST_DATABASE_URL", url)
    get_settings.cache_clear()
    return url


@pytest.fixture
def migrated_db(db_url: str) -> str:
    """`db_url` migrated to the latest schema."""
    from app.db import migrate

    migrate.upgrade(db_url)
    return db_url


def pytest_terminal_summary(terminalreporter, exitstatus, config) -> None:  # type: ignore[no-untyped-def]
    """Say how many PostgreSQL tests ran (CI must show they did)."""
    counts = {}
    for outcome in ("passed", "failed", "skipped", "error"):
        reports = terminalreporter.stats.get(outcome, [])
        counts[outcome] = sum(1 for r in reports if getattr(r, "when", "call") in ("call", "setup") and "postgres" in r.keywords)
    if any(counts.values()):
        url = os.environ.get(PG_ENV, PG_DEFAULT)
        terminalreporter.write_line(
            f"PostgreSQL tests ({url}): {counts['passed']} passed, {counts['failed']} failed, "
            f"{counts['skipped']} skipped, {counts['error']} errors"
        )
