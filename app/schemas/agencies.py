"""Agencies (lifeguard services, coastal authorities) and their hazard policies, as TOML or JSON."""

from __future__ import annotations

from datetime import datetime
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

from app.cautions import HAZARD as HAZARD_CAUTIONS
from app.schemas.profile import SLUG


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


class PolicySpec(BaseModel):
    """Levels 0..3 with the agency's own labels; thresholds on set breaker height, optionally period,
    power, rip-current likelihood and shore-break; period and power on nearshore values unless
    `basis` is "offshore" (docs/surfzone.md §6)."""

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


__all__ = ["AgencyConfig", "AgencyPublic", "LevelSpec", "PolicySpec", "SpotPolicySpec"]
