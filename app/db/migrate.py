"""Run Alembic migrations programmatically (`shoalcast db upgrade|downgrade|current`)."""

from __future__ import annotations

import logging
from pathlib import Path

from alembic import command
from alembic.config import Config

MIGRATIONS_DIR = Path(__file__).resolve().parents[2] / "migrations"

# Alembic narrates every migration context at INFO; only its warnings are news to an operator.
logging.getLogger("alembic").setLevel(logging.WARNING)


def alembic_config(url: str) -> Config:
    cfg = Config()
    cfg.set_main_option("script_location", str(MIGRATIONS_DIR))
    cfg.set_main_option("sqlalchemy.url", url.replace("%", "%%"))
    cfg.attributes["configure_logger"] = False
    return cfg


def upgrade(url: str, revision: str = "head") -> None:
    command.upgrade(alembic_config(url), revision)


def downgrade(url: str, revision: str) -> None:
    command.downgrade(alembic_config(url), revision)


def current_revision(url: str) -> str | None:
    from alembic.migration import MigrationContext

    from app.db.session import get_engine

    with get_engine(url).connect() as conn:
        return MigrationContext.configure(conn).get_current_revision()


__all__ = ["MIGRATIONS_DIR", "alembic_config", "current_revision", "downgrade", "upgrade"]
