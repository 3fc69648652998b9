"""Offshore sources (buoys, model feeds): the TOML a user writes and what `source list --json` shows."""

from __future__ import annotations

from datetime import datetime
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator, model_validator

from app.schemas.profile import SLUG

# Canonical format ids (these stay); aliases are accepted on input.
FORMATS = ("spectral-text-realtime", "spectral-text-historical", "met-text", "cf-netcdf")
FORMAT_ALIASES = {
    "realtime-spectral-text": "spectral-text-realtime",
    "historical-spectral-text": "spectral-text-historical",
    "met": "met-text",
    "netcdf": "cf-netcdf",
    "cf": "cf-netcdf",
}
SourceFormat = Literal["spectral-text-realtime", "spectral-text-historical", "met-text", "cf-netcdf"]
URL_SCHEMES = ("http://", "https://", "file://")


class SourceConfig(BaseModel):
    """A source as written in SOURCE.toml (or posted to the API)."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    id: str = Field(pattern=SLUG)
    name: str = Field(min_length=1, max_length=200)
    format: SourceFormat
    latitude: float = Field(ge=-90, le=90)
    longitude: float = Field(ge=-180, le=180)
    depth_m: float | None = Field(default=None, gt=0, le=12000)
    station: str | None = Field(default=None, max_length=64)
    urls: list[str] = Field(default_factory=list, max_length=20)
    paths: list[str] = Field(default_factory=list, max_length=20)  # relative to the TOML file
    poll_minutes: float = Field(default=30.0, ge=0.5, le=24 * 60)
    water_level_datum_m: float = Field(
        default=0.0, ge=-50, le=50,
        description="height of the zero of this source's water levels above the bathymetry datum of the spots it feeds",
    )

    @field_validator("format", mode="before")
    @classmethod
    def _alias(cls, value: object) -> object:
        return FORMAT_ALIASES.get(value, value) if isinstance(value, str) else value

    @field_validator("urls")
    @classmethod
    def _schemes(cls, value: list[str]) -> list[str]:
        for url in value:
            if not url.lower().startswith(URL_SCHEMES):
                raise ValueError(f"URL {url!r} must start with one of {', '.join(URL_SCHEMES)}")
        return value

    @model_validator(mode="after")
    def _somewhere(self) -> SourceConfig:
        if not self.urls and not self.paths:
            raise ValueError("give `urls` or `paths` (where to fetch this source from)")
        return self


class SourceHealthPublic(BaseModel):
    last_attempt: datetime | None = None
    last_success: datetime | None = None
    last_error: str | None = None
    last_error_at: datetime | None = None
    stored: int = 0
    rejected: int = 0


class SourcePublic(BaseModel):
    id: str
    name: str
    format: str
    latitude: float
    longitude: float
    depth_m: float | None
    urls: list[str]
    poll_minutes: float
    observations: int
    latest_time: datetime | None
    health: SourceHealthPublic


class RejectPublic(BaseModel):
    file: str
    line: int | None
    field: str | None
    reason: str
    created_at: datetime


class IngestReport(BaseModel):
    source_id: str
    files: list[str]
    stored: int = 0  # new records
    replaced: int = 0  # corrected records that replaced older content
    unchanged: int = 0  # records already stored with identical content
    rejected: int = 0
    rejects: list[str] = Field(default_factory=list)  # "file:line: field: reason", first few
    notes: list[str] = Field(default_factory=list)
    first_time: datetime | None = None
    last_time: datetime | None = None


__all__ = [
    "FORMATS",
    "FORMAT_ALIASES",
    "IngestReport",
    "RejectPublic",
    "SourceConfig",
    "SourceHealthPublic",
    "SourcePublic",
    "URL_SCHEMES",
]
