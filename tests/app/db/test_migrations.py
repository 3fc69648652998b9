"""Migrations go up, down and up again, and the tables match them (empty autogenerate diff),
on SQLite and on PostgreSQL."""

from __future__ import annotations

import sqlalchemy as sa
from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext
from alembic.script import ScriptDirectory

from app.db import migrate
from app.db.base import Base
from app.db.session import get_engine


def _head(url: str) -> str:
    head = ScriptDirectory.from_config(migrate.alembic_config(url)).get_current_head()
    assert head is not None
    return head


def test_single_head(db_url: str) -> None:
    assert len(ScriptDirectory.from_config(migrate.alembic_config(db_url)).get_heads()) == 1


def test_upgrade_downgrade_upgrade(db_url: str) -> None:
    migrate.upgrade(db_url)
    assert migrate.current_revision(db_url) == _head(db_url)
    migrate.downgrade(db_url, "base")
    assert migrate.current_revision(db_url) is None
    tables = set(sa.inspect(get_engine(db_url)).get_table_names()) - {"alembic_version"}
    assert tables == set(), f"downgrade left tables behind: {tables}"
    migrate.upgrade(db_url)
    assert migrate.current_revision(db_url) == _head(db_url)


def test_tables_match_migrations(db_url: str) -> None:
    migrate.upgrade(db_url)
    with get_engine(db_url).connect() as conn:
        diff = compare_metadata(MigrationContext.configure(conn, opts={"compare_type": True}), Base.metadata)
    assert diff == [], f"tables and migrations differ; write a migration: {diff}"


def test_every_table_is_migrated(db_url: str) -> None:
    migrate.upgrade(db_url)
    tables = set(sa.inspect(get_engine(db_url)).get_table_names())
    assert set(Base.metadata.tables) <= tables
