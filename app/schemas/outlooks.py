"""Spot outlooks and agency hazard summaries, as JSON (the API and `shoalcast outlook --json`).

Shape (fields may be added, never renamed):
``{"spot_id", "units", "cautions": [...], "steps": [{"time", "source", "breaker_height_m": {"typical",
"sets", "largest"} (or "breaker_height_ft" when units = "imperial"), "period_s",
"nearshore_direction_deg", "breaker_type", "peel": {"direction", "angle_deg", "first_point"},
"hazard": {"level", "label"}, "swells": [{"height_m", "period_s", "direction_deg",
"breaker_height_m"}]}]}``.

Directions are nautical FROM degrees (clockwise from true north). A value that is undefined (a
swell blocked from the spot, a peel with no breaking wave) is null, never NaN. Times are RFC 3339 Z.
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, field_serializer, model_serializer

Units = Literal["metric", "imperial"]
InputKind = Literal["observed", "arrival-forecast", "model-forecast"]


def _z(value: datetime | None) -> str | None:
    return None if value is None else value.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid")


class HeightClasses(_Model):
    """Breaker heights of three height classes [m or ft]: typical = significant wave (Hm0),
    sets = mean of the highest tenth (H1/10), largest = expected largest wave in an hour."""

    typical: float | None
    sets: float | None
    largest: float | None


class Peel(_Model):
    direction: Literal["left", "right", "both", "closeout"] | None = Field(
        description="seen by a surfer riding toward shore; null when no wave breaks"
    )
    sweep: Literal["left", "right", "both", "none"] | None = Field(
        default=None, description="the way breaking runs along the crest, even for a closeout"
    )
    angle_deg: float | None = Field(
        description="peel angle (Hutt, Black & Mead 2001): 0 = closeout, 90 = no breaking run"
    )
    first_point: str | None = Field(description="break point that breaks first")
    largest_point: str | None = None
    peel_rate_m_s: float | None = Field(default=None, description="Cb / tan(angle); null for a closeout")
    method: Literal["break-times", "breaking-angle"] | None = None


class Hazard(_Model):
    level: int
    label: str
    policy: str
    policy_is_default: bool
    rip_current_likelihood: float | None = Field(
        default=None,
        description="0..1, logistic form of Dusek & Seim (2013) with provisional coefficients that are not the "
        "paper's: a relative guide, not a calibrated probability (docs/surfzone.md §6)",
    )
    shore_break: bool | None = Field(
        default=None, description="breakers plunging or collapsing on a steep foreshore near high water"
    )
    inputs: Literal["nearshore", "offshore"] | None = Field(
        default=None, description="what the policy's period and power thresholds were tested on"
    )


class Swell(_Model):
    """One swell train: offshore height, period, direction; breaker height of its significant wave."""

    height_m: float
    period_s: float
    direction_deg: float
    breaker_height_m: float | None = Field(description="null where the spot is sheltered from this train")
    nearshore_height_m: float | None = None
    nearshore_direction_deg: float | None = None
    spread_deg: float | None = None
    energy_fraction: float | None = None
    height_ft: float | None = None
    breaker_height_ft: float | None = None

    @model_serializer(mode="wrap")
    def _drop_absent_feet(self, handler: Any) -> dict[str, Any]:
        data = handler(self)
        for key in ("height_ft", "breaker_height_ft"):
            if data.get(key) is None:
                data.pop(key, None)
        return data


class PointDetail(_Model):
    """Per break point (in order along the break)."""

    name: str
    nearshore_height_m: float | None = Field(description="Hm0 at the table's reference depth")
    nearshore_period_s: float | None
    nearshore_direction_deg: float | None
    breaker_height_m: float | None = Field(description="sets (H1/10) breaker height")
    breaking_depth_m: float | None
    breaking_angle_deg: float | None = Field(description="angle of the crest to the contour at breaking")
    komar_gaudiano_height_m: float | None = Field(
        description="Komar & Gaudiano (1975) cross-check of the sets height"
    )
    iribarren: float | None
    breaker_type: str | None
    water_depth_m: float | None = Field(default=None, description="bed depth at the break point + water level")
    depth_state: Literal["ok", "too-shallow", "dry"] | None = Field(
        default=None, description="'too-shallow' under 0.5 m of water, 'dry' at or above the water line"
    )
    surf_model: Literal["surf-zone", "single-wave"] | None = Field(
        default=None, description="surf-zone: random waves along the point's profile (docs/surfzone.md)"
    )
    breaking_distance_m: float | None = Field(
        default=None, description="breaking position along the profile, from the reference point"
    )
    setup_m: float | None = Field(default=None, description="wave set-up at the shoreline")
    runup_2pct_m: float | None = Field(default=None, description="2 % run-up (Stockdon et al. 2006)")


class WindEffect(_Model):
    """The wind's effect on the step's breaker type (docs/tide-wind.md §3)."""

    method: str = Field(description="whose result and what is ours")
    onshore_component_m_s: float | None = Field(description="wind toward the shore along the point's normal (negative: offshore)")
    spilling_below_iribarren: float | None = Field(
        description="the spilling/plunging boundary on the Iribarren number used (0.4 in still air, Battjes 1974)"
    )
    breaker_type_without_wind: str | None = Field(description="the still-air breaker type")


class SurfZone(_Model):
    """The surf-zone model's values at the step's point (null on the single-wave path)."""

    model: Literal["surf-zone", "single-wave"]
    breaking_distance_m: float | None = Field(description="breaking position along the profile from the reference point")
    setup_m: float | None = Field(description="wave set-up at the shoreline (Longuet-Higgins & Stewart 1964)")
    runup_2pct_m: float | None = Field(description="2 % exceedance run-up (Stockdon et al. 2006)")
    foreshore_slope: float | None = Field(description="tan β about the still-water line")


class Tide(_Model):
    """The tide at a step (docs/tide-wind.md §2): trend and the next high and low waters."""

    trend: Literal["rising", "falling"]
    next_high: datetime | None = Field(default=None, description="next predicted high water (null without a tide profile)")
    next_high_m: float | None = None
    next_low: datetime | None = Field(default=None, description="next predicted low water")
    next_low_m: float | None = None
    predicted_m: float | None = Field(default=None, description="predicted level above the bathymetry datum")

    @field_serializer("next_high", "next_low")
    def _times(self, value: datetime | None) -> str | None:
        return _z(value)


class Wind(_Model):
    """Wind at a step: speed, FROM direction, and its direction relative to the break's facing."""

    speed_m_s: float
    direction_deg: float = Field(description="nautical FROM direction [deg]")
    relative: Literal["offshore", "cross", "onshore"] = Field(
        description="from the angle between the wind's FROM direction and the break's facing: within 45° onshore, "
        "beyond 135° offshore, else cross"
    )
    input: Literal["observed", "model-forecast"]


class Offshore(_Model):
    hm0_m: float
    peak_period_s: float | None
    direction_deg: float | None = Field(description="peak direction of the largest train")
    wave_power_kw_m: float | None


class Step(_Model):
    time: datetime
    source: str
    input: InputKind
    issued: datetime | None = Field(default=None, description="issue time of a model forecast")
    arrival_coverage: float | None = Field(
        default=None,
        description="arrival forecasts: share of the latest observation's arriving energy that was observed "
        "in time for this step (steps under 0.9 are not issued)",
    )
    observed_at: datetime | None = Field(
        default=None, description="observation the arrival forecast mostly comes from"
    )
    directional_estimate: str | None = Field(
        default=None,
        description="how the offshore E(f, θ) was obtained: 'given' (the source's own), 'cos-2s moment fit', "
        "'maximum entropy', or a mix naming the bands with two peaks (docs/directional.md)",
    )
    breaker_height_m: HeightClasses | None = None
    breaker_height_ft: HeightClasses | None = None
    period_s: float | None
    nearshore_direction_deg: float | None
    breaker_type: str | None
    breaking_depth_m: float | None = None
    iribarren: float | None = None
    wind_effect: WindEffect | None = Field(
        default=None, description="how the wind moved the breaker type; null without wind or breakers"
    )
    largest_point: str | None = None
    surf_zone: SurfZone | None = None
    peel: Peel
    hazard: Hazard
    offshore: Offshore
    swells: list[Swell]
    points: list[PointDetail] = Field(default_factory=list)
    water_level_m: float | None = Field(default=None, description="water level above the bathymetry datum")
    water_level_source: Literal["observed", "predicted", "mean-level", "given"] | None = Field(
        default=None, description="observed overrides the tide prediction; mean-level: no tide profile or observation"
    )
    water_level_residual_m: float | None = Field(
        default=None, description="observed − predicted level, where both are known"
    )
    tide: Tide | None = Field(default=None, description="null when neither a tide profile nor observed levels say the trend")
    wind: Wind | None = Field(default=None, description="null without a wind source for this step")
    shallow_points: list[str] = Field(
        default_factory=list, description="break points that are too shallow or dry at this water level"
    )
    calibrated: bool | None = Field(
        default=None, description="true when the spot's calibration factor is applied (absent otherwise)"
    )
    calibration_factor: float | None = Field(default=None, description="the factor the raw heights were scaled by")
    raw_breaker_height_m: HeightClasses | None = Field(default=None, description="the heights before calibration")
    raw_breaker_height_ft: HeightClasses | None = None

    @field_serializer("time", "issued", "observed_at")
    def _times(self, value: datetime | None) -> str | None:
        return _z(value)

    @model_serializer(mode="wrap")
    def _one_height_key(self, handler: Any) -> dict[str, Any]:
        data = handler(self)
        for key in ("breaker_height_m", "breaker_height_ft", "calibrated", "calibration_factor",
                    "raw_breaker_height_m", "raw_breaker_height_ft"):  # fmt: skip
            if data.get(key) is None:
                data.pop(key, None)
        return data


class OutlookOptions(_Model):
    """What was asked for; kept with a cached outlook so it can be refreshed."""

    hours: int
    start: datetime | None = Field(description="null = from the current hour")
    units: Units
    agency_id: str | None
    water_level_m: float | None = Field(
        default=None, description="a water level given for every step; null = from the tide profile and sources"
    )

    @field_serializer("start")
    def _start(self, value: datetime | None) -> str | None:
        return _z(value)


class OutlookBody(_Model):
    spot_id: str
    name: str | None = None
    units: Units
    cautions: list[str]
    computed_at: datetime
    start: datetime
    hours: int
    policy: str
    policy_is_default: bool
    break_points: list[str] = Field(default_factory=list)
    notes: list[str] = Field(default_factory=list, description="inputs left out, and why")
    options: OutlookOptions
    steps: list[Step]

    @field_serializer("computed_at", "start")
    def _times(self, value: datetime) -> str | None:
        return _z(value)


class SpotHazard(_Model):
    spot_id: str
    name: str
    level: int | None = Field(description="level of the current step; null when no outlook is available")
    label: str | None
    max_level: int | None = Field(description="highest level in the horizon")
    max_label: str | None
    onset: datetime | None = Field(description="first step in the horizon at the highest level")
    valid_until: datetime | None
    policy: str | None = None
    policy_is_default: bool | None = None
    rip_current_likelihood: float | None = Field(
        default=None, description="at the current step (0..1; provisional coefficients, not the paper's: see Hazard)"
    )
    max_rip_current_likelihood: float | None = Field(
        default=None, description="highest in the horizon (0..1; provisional coefficients, not the paper's)"
    )
    shore_break: bool | None = Field(default=None, description="shore-break at the current step")
    shore_break_onset: datetime | None = Field(
        default=None, description="first step in the horizon with a shore-break (null: none)"
    )
    note: str | None = None
    cautions: list[str]

    @field_serializer("onset", "valid_until", "shore_break_onset")
    def _times(self, value: datetime | None) -> str | None:
        return _z(value)


class AgencyHazards(_Model):
    agency_id: str
    name: str
    computed_at: datetime
    horizon_hours: float
    version: str
    cautions: list[str]
    spots: list[SpotHazard]

    @field_serializer("computed_at")
    def _times(self, value: datetime) -> str | None:
        return _z(value)


__all__ = [
    "AgencyHazards",
    "HeightClasses",
    "Hazard",
    "Offshore",
    "OutlookBody",
    "OutlookOptions",
    "Peel",
    "PointDetail",
    "SpotHazard",
    "SurfZone",
    "Step",
    "Swell",
    "Tide",
    "Units",
    "Wind",
]
