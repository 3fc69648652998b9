"""Alembic environment: URL from the config (set by app.db.migrate) or from settings; batch mode so
SQLite can alter tables; only our own tables are compared."""

from __future__ import annotations

from alembic import context

from app.config import get_settings
from app.db import tables  # noqa: F401  (registers the tables on Base.metadata)
from app.db.base import Base
from app.db.session import get_engine

config = context.config
target_metadata = Base.metadata


def _url() -> str:
    return config.get_main_option("sqlalchemy.url") or get_settings().resolved_database_url()


def _include_name(name, type_, parent_names):  # type: ignore[no-untyped-def]
    if type_ == "table":
        return name in target_metadata.tables
    return True


def run_migrations_offline() -> None:
    context.configure(
        url=_url(),
        target_metadata=target_metadata,
        literal_binds=True,
        render_as_batch=True,
        compare_type=True,
        include_name=_include_name,
    )
    with context.begin_transaction():
        context.run_migrations()


def run_migrations_online() -> None:
    engine = get_engine(_url())
    with engine.connect() as connection:
        context.configure(
            connection=connection,
            target_metadata=target_metadata,
            render_as_batch=True,
            compare_type=True,
            include_name=_include_name,
        )
        with context.begin_transaction():
            context.run_migrations()
        connection.commit()


if context.is_offline_mode():
    run_migrations_offline()
else:
    run_migrations_online()
