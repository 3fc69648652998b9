"""Spot shapes shared by `shoalcast spot list --json` and `GET /v1/spots`."""

from __future__ import annotations

from datetime import datetime

from pydantic import BaseModel, ConfigDict, Field


class GridSummary(BaseModel):
    nx: int
    ny: int
    dx_m: float
    dy_m: float
    x_range_m: tuple[float, float]
    y_range_m: tuple[float, float]
    depth_min_m: float  # shallowest water cell
    depth_max_m: float
    land_fraction: float
    datum: str
    source_format: str
    sha256: str


class BreakPointPublic(BaseModel):
    name: str
    x_m: float
    y_m: float
    latitude: float
    longitude: float
    depth_m: float
    reference_depth_m: float
    table_built_at: datetime | None = None


class SpotPublic(BaseModel):
    model_config = ConfigDict(json_schema_extra={"examples": [{"id": "example-ledge", "name": "Example Ledge"}]})

    id: str
    name: str
    latitude: float
    longitude: float
    faces_deg: float
    timezone: str
    sources: list[str]
    grid: GridSummary
    regional_grids: list[GridSummary] = Field(
        default_factory=list, description="Coarser grids around the local one (profile `regional_bathymetry`), in order.")
    wave_base_period_s: float | None = Field(
        default=None,
        description="Longest period whose wave base (L0/2) the grids reach: the median depth along the open-ocean "
                    "edges of the outermost grid is L0/2 of this period. Rays of longer periods leave the grids short "
                    "of it and are continued over assumed straight contours (see `window`). Null: no open edge.")
    break_points: list[BreakPointPublic]
    updated_at: datetime


__all__ = ["BreakPointPublic", "GridSummary", "SpotPublic"]
