"""Declarative base with a constraint naming convention (Alembic batch mode on SQLite needs names),
and the column types we share: numpy arrays as .npy bytes, timezone-aware UTC datetimes, JSON."""

from __future__ import annotations

import io
from datetime import UTC, datetime
from typing import Any

import numpy as np
import sqlalchemy as sa
from sqlalchemy.dialects import postgresql
from sqlalchemy.orm import DeclarativeBase
from sqlalchemy.types import TypeDecorator

NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_N_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}


class Base(DeclarativeBase):
    metadata = sa.MetaData(naming_convention=NAMING_CONVENTION)


def array_to_npy(array: np.ndarray) -> bytes:
    buf = io.BytesIO()
    np.save(buf, np.ascontiguousarray(array), allow_pickle=False)
    return buf.getvalue()


def npy_to_array(data: bytes) -> np.ndarray:
    return np.load(io.BytesIO(data), allow_pickle=False)


class NpyArray(TypeDecorator[np.ndarray]):
    """A numpy array stored as .npy bytes (dtype, shape and byte order kept; never pickled)."""

    impl = sa.LargeBinary
    cache_ok = True

    def process_bind_param(self, value: Any, dialect: sa.Dialect) -> bytes | None:
        return None if value is None else array_to_npy(np.asarray(value))

    def process_result_value(self, value: Any, dialect: sa.Dialect) -> np.ndarray | None:
        return None if value is None else npy_to_array(value)


class UTCDateTime(TypeDecorator[datetime]):
    """Timezone-aware UTC datetime on every backend (SQLite drops the offset; we put it back)."""

    impl = sa.DateTime(timezone=True)
    cache_ok = True

    def process_bind_param(self, value: Any, dialect: sa.Dialect) -> datetime | None:
        if value is None:
            return None
        if value.tzinfo is None:
            raise ValueError(f"naive datetime {value!r}: times must be timezone-aware UTC")
        value = value.astimezone(UTC)
        return value.replace(tzinfo=None) if dialect.name == "sqlite" else value

    def process_result_value(self, value: Any, dialect: sa.Dialect) -> datetime | None:
        if value is None:
            return None
        return value.replace(tzinfo=UTC) if value.tzinfo is None else value.astimezone(UTC)


JSONType = sa.JSON().with_variant(postgresql.JSONB(), "postgresql")

__all__ = ["Base", "JSONType", "NAMING_CONVENTION", "NpyArray", "UTCDateTime", "array_to_npy", "npy_to_array"]
