"""Agencies (lifeguard services, coastal authorities) and their hazard policies, as TOML or JSON."""

from __future__ import annotations

from datetime import datetime
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator, model_validator

from app.cautions import HAZARD as HAZARD_CAUTIONS
from app.schemas.profile import SLUG

WindRelative = Literal["offshore", "cross", "onshore"]


class RuleSpec(BaseModel):
    """One more way to reach a level: every condition given must hold (models/hazard.py, docs/policies.md)."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    set_height_m: float | None = Field(default=None, ge=0, le=30)
    period_s: float | None = Field(default=None, ge=0, le=40)
    power_kw_m: float | None = Field(default=None, ge=0, le=10000)
    rip_likelihood: float | None = Field(
        default=None, ge=0, le=1, description="at or above (0..1; provisional coefficients, docs/surfzone.md §6)"
    )
    shore_break: bool | None = Field(default=None, description="true: a shore-break is flagged; false: none is")
    water_level_m: float | None = Field(
        default=None, ge=-30, le=30, description="water level at or above this [m above the bathymetry datum]"
    )
    water_level_below_m: float | None = Field(
        default=None, ge=-30, le=30, description="water level below this [m above the bathymetry datum]"
    )
    tide_trend: Literal["rising", "falling"] | None = None
    wind_speed_m_s: float | None = Field(default=None, ge=0, le=80, description="wind speed at or above [m/s]")
    wind_relative: list[WindRelative] | None = Field(
        default=None, min_length=1, max_length=3, description="wind relative to the break: any of these"
    )

    @field_validator("wind_relative", mode="before")
    @classmethod
    def _one_or_many(cls, v: object) -> object:
        return [v] if isinstance(v, str) else v

    @model_validator(mode="after")
    def _not_empty(self) -> RuleSpec:
        if not self.model_dump(exclude_none=True):
            raise ValueError("a rule needs at least one condition")
        if (self.water_level_m is not None and self.water_level_below_m is not None
                and self.water_level_below_m <= self.water_level_m):  # fmt: skip
            raise ValueError("`water_level_below_m` must be above `water_level_m`, or the rule never holds")
        return self


class LevelSpec(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)

    level: int = Field(ge=0, le=3)
    label: str = Field(min_length=1, max_length=60)
    description: str = Field(default="", max_length=300)
    set_height_m: float | None = Field(default=None, ge=0, le=30)
    period_s: float | None = Field(default=None, ge=0, le=40)
    power_kw_m: float | None = Field(default=None, ge=0, le=10000)
    rip_likelihood: float | None = Field(default=None, ge=0, le=1, description="rip-current likelihood 0..1")
    shore_break: bool | None = Field(default=None, description="true: a shore-break reaches this level")
    rules: list[RuleSpec] = Field(
        default_factory=list, max_length=8, description="more ways to reach this level: any one rule that holds"
    )


class PolicySpec(BaseModel):
    """Levels 0..3 with the agency's own labels; thresholds on set breaker height, optionally period,
    power, rip-current likelihood and shore-break, and rules on those and the water level, tide
    trend and wind; period and power on nearshore values unless `basis` is "offshore"
    (docs/policies.md)."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    combine: Literal["any", "all"] = "any"
    basis: Literal["nearshore", "offshore"] = "nearshore"
    levels: list[LevelSpec] = Field(min_length=4, max_length=4)


class SpotPolicySpec(PolicySpec):
    spot: str = Field(pattern=SLUG)


class AgencyConfig(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)

    id: str = Field(pattern=SLUG)
    name: str = Field(min_length=1, max_length=200)
    spots: list[str] = Field(default_factory=list, max_length=500)
    alert_level: int = Field(default=2, ge=1, le=3, description="CAP alerts are issued at or above this level.")
    contact: str | None = Field(default=None, max_length=200)
    policy: PolicySpec | None = None  # the agency's default; None = shoalcast's labelled default
    spot_policies: list[SpotPolicySpec] = Field(default_factory=list)

    @model_validator(mode="after")
    def _spot_policies_watched(self) -> AgencyConfig:
        for sp in self.spot_policies:
            if sp.spot not in self.spots:
                raise ValueError(f"spot_policies: spot {sp.spot!r} is not in this agency's `spots`")
        return self


class AgencyPublic(BaseModel):
    id: str
    name: str
    spots: list[str]
    alert_level: int
    contact: str | None
    policies: dict[str, PolicySpec]  # "" = the agency's default, else spot id
    updated_at: datetime
    cautions: list[str] = Field(default_factory=lambda: list(HAZARD_CAUTIONS))


__all__ = ["AgencyConfig", "AgencyPublic", "LevelSpec", "PolicySpec", "RuleSpec", "SpotPolicySpec"]
