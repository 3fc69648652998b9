"""The spot profile (TOML) a forecaster writes to describe a surf spot, validated strictly:
unknown or mistyped fields are refused, and every error names the field."""

from __future__ import annotations

import re
from typing import Literal
from zoneinfo import available_timezones

from pydantic import BaseModel, ConfigDict, Field, ValidationError, field_validator, model_validator

SLUG = r"^[a-z0-9][a-z0-9-]{0,62}$"
_SLUG_RE = re.compile(SLUG)


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class Origin(_Strict):
    latitude: float = Field(ge=-90, le=90)
    longitude: float = Field(ge=-180, le=180)


class BathymetrySpec(_Strict):
    file: str = Field(min_length=1, description="Path relative to the profile file; may not leave its folder.")
    format: Literal["esri-ascii", "netcdf", "xyz"]
    values: Literal["depth", "elevation"] = "depth"
    crs: Literal["local", "lonlat"] = "local"
    origin: Origin | None = None  # default: the spot's position
    datum: str = Field(default="MSL", min_length=1, max_length=32)
    variable: str | None = None  # NetCDF variable name (default: elevation or depth)
    spacing_m: float | None = Field(default=None, gt=0, le=5000)  # resampling spacing for lonlat / xyz


class BreakPointSpec(_Strict):
    name: str = Field(min_length=1, max_length=100)
    x: float | None = None  # local metres east of the origin
    y: float | None = None
    latitude: float | None = Field(default=None, ge=-90, le=90)
    longitude: float | None = Field(default=None, ge=-180, le=180)
    reference_depth_m: float | None = Field(default=None, gt=0, le=100)

    @model_validator(mode="after")
    def _one_position(self) -> BreakPointSpec:
        local = self.x is not None and self.y is not None
        geo = self.latitude is not None and self.longitude is not None
        if local == geo:
            raise ValueError("give either x and y (local metres) or latitude and longitude")
        return self


class ModelSpec(_Strict):
    method: Literal["rays", "refraction-diffraction"] = Field(
        default="rays",
        description="How tables are computed: backward rays, or a parabolic refraction-diffraction march "
        "with rays beyond its angle limit (docs/refraction-diffraction.md).",
    )
    reference_depth_m: float = Field(default=10.0, gt=0, le=100)
    smoothing_m: float | None = Field(default=None, ge=0, le=5000)
    direction_bin_deg: float = Field(default=2.0, gt=0, le=15)
    launch_spacing_deg: float = Field(default=0.25, gt=0, le=5)
    period_min_s: float = Field(default=4.0, gt=1, le=30)
    period_max_s: float = Field(default=25.0, gt=1, le=40)
    period_count: int = Field(default=32, ge=2, le=128)
    surf_zone: bool = Field(
        default=True,
        description="random waves along each break point's profile (docs/surfzone.md); false: the single-wave "
        "shoaling path, for breaks whose contours bend strongly inside the reference depth (the profile is 1-D)",
    )

    @model_validator(mode="after")
    def _periods(self) -> ModelSpec:
        if self.period_max_s <= self.period_min_s:
            raise ValueError("period_max_s must be larger than period_min_s")
        return self


class SpotProfile(_Strict):
    id: str = Field(pattern=SLUG, description="Slug: lower-case letters, digits and dashes.")
    name: str = Field(min_length=1, max_length=200)
    latitude: float = Field(ge=-90, le=90)
    longitude: float = Field(ge=-180, le=180)
    faces_deg: float = Field(ge=0, lt=360, description="Bearing of the seaward normal (a west-facing break: 270).")
    timezone: str = "UTC"
    sources: list[str] = Field(default_factory=list)
    bathymetry: BathymetrySpec
    # coarser grids around the local one (typically lon/lat, hundreds of metres): rays that leave
    # the local grid go on in them to the wave base or an open edge (docs/methods.md §3)
    regional_bathymetry: list[BathymetrySpec] = Field(default_factory=list, max_length=4)
    break_points: list[BreakPointSpec] = Field(min_length=1, max_length=20)
    model: ModelSpec = Field(default_factory=ModelSpec)

    @field_validator("timezone")
    @classmethod
    def _tz(cls, value: str) -> str:
        if value != "UTC" and value not in available_timezones():
            raise ValueError(f"unknown time zone {value!r} (use an IANA name such as 'Etc/GMT+2')")
        return value

    @field_validator("sources")
    @classmethod
    def _source_ids(cls, value: list[str]) -> list[str]:
        for sid in value:
            if not _SLUG_RE.match(sid):
                raise ValueError(f"source id {sid!r} is not a slug")
        return value

    @model_validator(mode="after")
    def _unique_points(self) -> SpotProfile:
        names = [bp.name for bp in self.break_points]
        dupes = sorted({n for n in names if names.count(n) > 1})
        if dupes:
            raise ValueError(f"break point names must be unique, repeated: {', '.join(dupes)}")
        return self

    @property
    def origin(self) -> Origin:
        return self.bathymetry.origin or Origin(latitude=self.latitude, longitude=self.longitude)


def describe_validation_error(exc: ValidationError, *, where: str) -> str:
    """One readable line per problem: `<where>: field `a.b`: reason`."""
    lines = []
    for err in exc.errors():
        loc = ".".join(str(p) for p in err["loc"]) or "(profile)"
        msg = err["msg"].removeprefix("Value error, ")
        if err["type"] == "extra_forbidden":
            msg = "unknown field (check the spelling)"
        elif err["type"] == "missing":
            msg = "required field is missing"
        lines.append(f"{where}: field `{loc}`: {msg}")
    return "\n".join(lines)


__all__ = [
    "BathymetrySpec",
    "BreakPointSpec",
    "ModelSpec",
    "Origin",
    "SLUG",
    "SpotProfile",
    "describe_validation_error",
]
