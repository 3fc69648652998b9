"""Helpers every command uses: database readiness, JSON and table output."""

from __future__ import annotations

import json
import sys
from collections.abc import Iterable, Sequence
from datetime import UTC, datetime
from typing import Any

from pydantic import BaseModel

from app.config import get_settings
from app.errors import Conflict


def database_url() -> str:
    return get_settings().resolved_database_url()


_ready: set[str] = set()


def ready_database() -> str:
    """Return the database URL once its schema is at head.

    The embedded SQLite default upgrades itself (one user, one file); PostgreSQL must be migrated
    explicitly with `shoalcast db upgrade` (a deploy step, so replicas never race on DDL).
    """
    from alembic.script import ScriptDirectory

    from app.db import migrate

    url = database_url()
    if url in _ready:
        return url
    head = ScriptDirectory.from_config(migrate.alembic_config(url)).get_current_head()
    current = migrate.current_revision(url)
    if current != head:
        if url.startswith("sqlite"):
            migrate.upgrade(url)
        else:
            raise Conflict(f"the database is at revision {current or 'none'}, not {head}: run `shoalcast db upgrade`")
    _ready.add(url)
    return url


def _default(value: Any) -> Any:
    if isinstance(value, datetime):
        return rfc3339(value)
    if isinstance(value, BaseModel):
        return value.model_dump(mode="json")
    raise TypeError(f"cannot serialise {type(value).__name__}")


def rfc3339(value: datetime) -> str:
    return value.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def print_json(data: Any) -> None:
    if isinstance(data, BaseModel):
        data = data.model_dump(mode="json")
    elif isinstance(data, list):
        data = [d.model_dump(mode="json") if isinstance(d, BaseModel) else d for d in data]
    json.dump(data, sys.stdout, indent=2, default=_default, ensure_ascii=False)
    sys.stdout.write("\n")


def print_table(headers: Sequence[str], rows: Iterable[Sequence[Any]]) -> None:
    rows = [["" if v is None else str(v) for v in row] for row in rows]
    widths = [max([len(h)] + [len(r[i]) for r in rows]) for i, h in enumerate(headers)]
    print("  ".join(h.ljust(w) for h, w in zip(headers, widths, strict=True)).rstrip())
    print("  ".join("-" * w for w in widths))
    for row in rows:
        print("  ".join(v.ljust(w) for v, w in zip(row, widths, strict=True)).rstrip())


__all__ = ["database_url", "print_json", "print_table", "ready_database", "rfc3339"]
