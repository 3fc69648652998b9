"""The database tables (SQLAlchemy 2 typed declarative). Arrays are .npy bytes; times are UTC.

Every change here needs a migration: `alembic revision --autogenerate -m "<slug>"` (see DEVELOPERS.md);
a test fails when tables and migrations differ.
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Any

import numpy as np
import sqlalchemy as sa
from sqlalchemy.orm import Mapped, mapped_column, relationship

from app.db.base import Base, JSONType, NpyArray, UTCDateTime


def utcnow() -> datetime:
    return datetime.now(UTC)


class Spot(Base):
    __tablename__ = "spots"

    id: Mapped[str] = mapped_column(sa.String(64), primary_key=True)
    name: Mapped[str] = mapped_column(sa.String(200))
    latitude: Mapped[float]
    longitude: Mapped[float]
    faces_deg: Mapped[float]
    timezone: Mapped[str] = mapped_column(sa.String(64), default="UTC")
    profile: Mapped[dict[str, Any]] = mapped_column(JSONType)  # the validated profile, as imported
    profile_sha256: Mapped[str] = mapped_column(sa.String(64))
    sources: Mapped[list[str]] = mapped_column(JSONType, default=list)
    created_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utcnow)
    updated_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utcnow, onupdate=utcnow)

    break_points: Mapped[list[BreakPoint]] = relationship(
        back_populates="spot", cascade="all, delete-orphan", order_by="BreakPoint.position"
    )
    bathymetry: Mapped[Bathymetry | None] = relationship(
        back_populates="spot", cascade="all, delete-orphan", uselist=False
    )
    regional_grids: Mapped[list[RegionalBathymetry]] = relationship(
        back_populates="spot", cascade="all, delete-orphan", order_by="RegionalBathymetry.position"
    )


class BreakPoint(Base):
    __tablename__ = "break_points"
    __table_args__ = (sa.UniqueConstraint("spot_id", "name"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    spot_id: Mapped[str] = mapped_column(sa.ForeignKey("spots.id", ondelete="CASCADE"), index=True)
    position: Mapped[int]  # order along the break
    name: Mapped[str] = mapped_column(sa.String(100))
    x: Mapped[float]  # local metres east of the origin
    y: Mapped[float]  # local metres north of the origin
    latitude: Mapped[float]
    longitude: Mapped[float]
    depth_m: Mapped[float]  # grid depth at the break point
    reference_depth_m: Mapped[float]

    spot: Mapped[Spot] = relationship(back_populates="break_points")
    table: Mapped[TransferTableRow | None] = relationship(
        back_populates="break_point", cascade="all, delete-orphan", uselist=False
    )


class Bathymetry(Base):
    __tablename__ = "bathymetry"

    spot_id: Mapped[str] = mapped_column(sa.ForeignKey("spots.id", ondelete="CASCADE"), primary_key=True)
    depth: Mapped[np.ndarray] = mapped_column(NpyArray)  # depth[j, i], row 0 = south, positive down
    nx: Mapped[int]
    ny: Mapped[int]
    x0: Mapped[float]  # local x of cell centre [0, 0]
    y0: Mapped[float]
    dx: Mapped[float]
    dy: Mapped[float]
    origin_latitude: Mapped[float]
    origin_longitude: Mapped[float]
    datum: Mapped[str] = mapped_column(sa.String(32))
    source_file: Mapped[str] = mapped_column(sa.String(500))
    source_format: Mapped[str] = mapped_column(sa.String(32))
    sha256: Mapped[str] = mapped_column(sa.String(64))

    spot: Mapped[Spot] = relationship(back_populates="bathymetry")


class RegionalBathymetry(Base):
    """A coarser grid around the spot's local one (profile `[[regional_bathymetry]]`), resampled
    to the same local frame; `position` is its order in the profile."""

    __tablename__ = "regional_bathymetry"
    __table_args__ = (sa.UniqueConstraint("spot_id", "position"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    spot_id: Mapped[str] = mapped_column(sa.ForeignKey("spots.id", ondelete="CASCADE"), index=True)
    position: Mapped[int]
    depth: Mapped[np.ndarray] = mapped_column(NpyArray)  # depth[j, i], row 0 = south, positive down
    nx: Mapped[int]
    ny: Mapped[int]
    x0: Mapped[float]
    y0: Mapped[float]
    dx: Mapped[float]
    dy: Mapped[float]
    datum: Mapped[str] = mapped_column(sa.String(32))
    source_file: Mapped[str] = mapped_column(sa.String(500))
    source_format: Mapped[str] = mapped_column(sa.String(32))
    sha256: Mapped[str] = mapped_column(sa.String(64))

    spot: Mapped[Spot] = relationship(back_populates="regional_grids")


class TransferTableRow(Base):
    """A refraction transfer table for one break point (see models.transfer.TransferTable)."""

    __tablename__ = "transfer_tables"

    id: Mapped[int] = mapped_column(primary_key=True)
    break_point_id: Mapped[int] = mapped_column(
        sa.ForeignKey("break_points.id", ondelete="CASCADE"), unique=True
    )
    spot_id: Mapped[str] = mapped_column(sa.String(64), index=True)
    input_hash: Mapped[str] = mapped_column(sa.String(64))
    engine_version: Mapped[str] = mapped_column(sa.String(32))
    built_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utcnow)
    build_seconds: Mapped[float] = mapped_column(default=0.0)
    arrays: Mapped[bytes] = mapped_column(sa.LargeBinary)  # .npz of the table arrays
    meta: Mapped[dict[str, Any]] = mapped_column(JSONType, default=dict)

    break_point: Mapped[BreakPoint] = relationship(back_populates="table")


class Source(Base):
    __tablename__ = "sources"

    id: Mapped[str] = mapped_column(sa.String(64), primary_key=True)
    name: Mapped[str] = mapped_column(sa.String(200))
    format: Mapped[str] = mapped_column(sa.String(40))
    latitude: Mapped[float]
    longitude: Mapped[float]
    depth_m: Mapped[float | None]
    urls: Mapped[list[str]] = mapped_column(JSONType, default=list)
    poll_minutes: Mapped[float] = mapped_column(default=30.0)
    config: Mapped[dict[str, Any]] = mapped_column(JSONType, default=dict)
    # added through the API: fetches may only reach public addresses (app.ingest.guard)
    public_only: Mapped[bool] = mapped_column(default=False, server_default=sa.false())
    created_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utcnow)

    health: Mapped[SourceHealth | None] = relationship(
        back_populates="source", cascade="all, delete-orphan", uselist=False
    )


class SourceHealth(Base):
    __tablename__ = "source_health"

    source_id: Mapped[str] = mapped_column(sa.ForeignKey("sources.id", ondelete="CASCADE"), primary_key=True)
    last_attempt: Mapped[datetime | None] = mapped_column(UTCDateTime)
    last_success: Mapped[datetime | None] = mapped_column(UTCDateTime)
    last_error: Mapped[str | None] = mapped_column(sa.Text)
    last_error_at: Mapped[datetime | None] = mapped_column(UTCDateTime)
    stored: Mapped[int] = mapped_column(default=0)
    rejected: Mapped[int] = mapped_column(default=0)
    # per URL: {"etag": ..., "last_modified": ..., "sha256": ...} for conditional GET
    validators: Mapped[dict[str, Any]] = mapped_column(JSONType, default=dict)

    source: Mapped[Source] = relationship(back_populates="health")


class Observation(Base):
    """One offshore spectrum (measured, or a model forecast step when issue_time is set)."""

    __tablename__ = "observations"
    __table_args__ = (sa.UniqueConstraint("source_id", "time", "issue_key"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    source_id: Mapped[str] = mapped_column(sa.ForeignKey("sources.id", ondelete="CASCADE"), index=True)
    station: Mapped[str] = mapped_column(sa.String(64), default="")
    kind: Mapped[str] = mapped_column(sa.String(16), default="spectrum")  # spectrum | met
    time: Mapped[datetime] = mapped_column(UTCDateTime, index=True)
    issue_time: Mapped[datetime | None] = mapped_column(UTCDateTime)
    issue_key: Mapped[str] = mapped_column(sa.String(32), default="")  # "" for observations (NULL-free unique)
    content_sha256: Mapped[str] = mapped_column(sa.String(64))
    arrays: Mapped[bytes | None] = mapped_column(sa.LargeBinary)  # .npz: frequency, density, r1, ...
    values: Mapped[dict[str, Any]] = mapped_column(JSONType, default=dict)  # scalars (met, bulk)
    ingested_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utcnow)


class Reject(Base):
    """A rejected record: what, where and why (file, line, field, reason)."""

    __tablename__ = "rejects"

    id: Mapped[int] = mapped_column(primary_key=True)
    source_id: Mapped[str] = mapped_column(sa.ForeignKey("sources.id", ondelete="CASCADE"), index=True)
    file: Mapped[str] = mapped_column(sa.String(500))
    line: Mapped[int | None]
    field: Mapped[str | None] = mapped_column(sa.String(100))
    reason: Mapped[str] = mapped_column(sa.Text)
    text: Mapped[str | None] = mapped_column(sa.Text)
    created_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utcnow)


class OutlookCache(Base):
    __tablename__ = "outlooks"
    __table_args__ = (sa.UniqueConstraint("spot_id", "variant"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    spot_id: Mapped[str] = mapped_column(sa.ForeignKey("spots.id", ondelete="CASCADE"), index=True)
    variant: Mapped[str] = mapped_column(sa.String(64), default="")  # e.g. horizon/start key
    input_hash: Mapped[str] = mapped_column(sa.String(64))
    stale: Mapped[bool] = mapped_column(default=False)
    computed_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utcnow)
    body: Mapped[dict[str, Any]] = mapped_column(JSONType)


class Agency(Base):
    """A lifeguard or coastal agency that watches spots and sets hazard policies."""

    __tablename__ = "agencies"

    id: Mapped[str] = mapped_column(sa.String(64), primary_key=True)
    name: Mapped[str] = mapped_column(sa.String(200))
    spots: Mapped[list[str]] = mapped_column(JSONType, default=list)
    alert_level: Mapped[int] = mapped_column(default=2)  # CAP alerts at or above this level
    contact: Mapped[str | None] = mapped_column(sa.String(200))
    updated_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utcnow, onupdate=utcnow)


class HazardPolicy(Base):
    __tablename__ = "hazard_policies"
    __table_args__ = (sa.UniqueConstraint("agency_id", "spot_key"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    agency_id: Mapped[str] = mapped_column(sa.ForeignKey("agencies.id", ondelete="CASCADE"), index=True)
    spot_key: Mapped[str] = mapped_column(sa.String(64), default="")  # "" = the agency's default
    levels: Mapped[list[dict[str, Any]]] = mapped_column(JSONType)
    updated_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utcnow, onupdate=utcnow)


class Alert(Base):
    """A CAP alert we issued (kept so updates and cancels can reference it)."""

    __tablename__ = "alerts"

    id: Mapped[str] = mapped_column(sa.String(120), primary_key=True)  # CAP identifier
    agency_id: Mapped[str] = mapped_column(sa.ForeignKey("agencies.id", ondelete="CASCADE"), index=True)
    spot_id: Mapped[str] = mapped_column(sa.String(64), index=True)
    msg_type: Mapped[str] = mapped_column(sa.String(16))  # Alert | Update | Cancel
    level: Mapped[int]
    sent: Mapped[datetime] = mapped_column(UTCDateTime)
    expires: Mapped[datetime | None] = mapped_column(UTCDateTime)
    references: Mapped[list[str]] = mapped_column(JSONType, default=list)
    active: Mapped[bool] = mapped_column(default=True)
    xml: Mapped[str] = mapped_column(sa.Text)


class ApiKey(Base):
    __tablename__ = "api_keys"

    id: Mapped[int] = mapped_column(primary_key=True)
    name: Mapped[str] = mapped_column(sa.String(100))
    prefix: Mapped[str] = mapped_column(sa.String(16))  # shown in listings; the key itself is never stored
    key_sha256: Mapped[str] = mapped_column(sa.String(64), unique=True)
    scopes: Mapped[list[str]] = mapped_column(JSONType, default=list)
    created_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utcnow)
    revoked_at: Mapped[datetime | None] = mapped_column(UTCDateTime)


class Job(Base):
    """A background job the API started (table rebuilds): poll it by id."""

    __tablename__ = "jobs"

    id: Mapped[str] = mapped_column(sa.String(40), primary_key=True)
    kind: Mapped[str] = mapped_column(sa.String(40))
    status: Mapped[str] = mapped_column(sa.String(16), default="queued")  # queued|running|done|failed
    created_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utcnow)
    started_at: Mapped[datetime | None] = mapped_column(UTCDateTime)
    finished_at: Mapped[datetime | None] = mapped_column(UTCDateTime)
    params: Mapped[dict[str, Any]] = mapped_column(JSONType, default=dict)
    result: Mapped[dict[str, Any]] = mapped_column(JSONType, default=dict)
    error: Mapped[str | None] = mapped_column(sa.Text)


class Verification(Base):
    """One verification run of a spot's outlook against observations (app.services.verification)."""

    __tablename__ = "verifications"

    id: Mapped[int] = mapped_column(primary_key=True)
    spot_id: Mapped[str] = mapped_column(sa.ForeignKey("spots.id", ondelete="CASCADE"), index=True)
    observations: Mapped[str] = mapped_column(sa.String(500))  # file name or nearshore source id
    created_by: Mapped[str] = mapped_column(sa.String(100))
    created_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utcnow)
    body: Mapped[dict[str, Any]] = mapped_column(JSONType)  # the report: metrics, by sector/band, pairs


class Calibration(Base):
    """A calibration factor for a spot's breaker heights. Versioned: each apply adds a version,
    removing one keeps the row (removed_at/by) so the history stays readable."""

    __tablename__ = "calibrations"
    __table_args__ = (sa.UniqueConstraint("spot_id", "version"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    spot_id: Mapped[str] = mapped_column(sa.ForeignKey("spots.id", ondelete="CASCADE"), index=True)
    version: Mapped[int]
    factor: Mapped[float]
    factor_stderr: Mapped[float | None]
    created_by: Mapped[str] = mapped_column(sa.String(100))
    created_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utcnow)
    removed_by: Mapped[str | None] = mapped_column(sa.String(100))
    removed_at: Mapped[datetime | None] = mapped_column(UTCDateTime)
    verification_id: Mapped[int | None]
    metrics: Mapped[dict[str, Any]] = mapped_column(JSONType, default=dict)  # the scores it came from


class DataVersion(Base):
    """One row: a counter bumped in every transaction that changes what outlooks, hazards or spots
    are made of (app.db.version), so every process can tell cheaply whether its answers still hold."""

    __tablename__ = "data_version"

    id: Mapped[int] = mapped_column(primary_key=True, autoincrement=False)
    version: Mapped[int] = mapped_column(sa.BigInteger, default=1)
    changed_at: Mapped[datetime] = mapped_column(UTCDateTime, default=utcnow)


__all__ = [
    "Agency",
    "Alert",
    "ApiKey",
    "Bathymetry",
    "BreakPoint",
    "Calibration",
    "DataVersion",
    "HazardPolicy",
    "Job",
    "Observation",
    "OutlookCache",
    "RegionalBathymetry",
    "Reject",
    "Source",
    "SourceHealth",
    "Spot",
    "TransferTableRow",
    "Verification",
    "utcnow",
]
