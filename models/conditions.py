"""Water level and wind at a spot per outlook step, and what they mean for a break (docs/tide-wind.md).

`StepConditions` is what the outlook computation receives beside the offshore spectra: one value
per step of the water level above the bathymetry datum (tide prediction or an observed level),
its rate, and the wind (speed, FROM direction; NaN where no source gives one). Every depth a
breaking computation uses is bed depth + `water_level_m`.

Wind relative to a break (trade usage, common practice): the angle between the wind's FROM
direction and the break's facing (the seaward normal, nautical): within 45° the wind blows from
the sea (onshore), beyond 135° from the land (offshore), else cross-shore. Onshore wind makes
waves break earlier and spill, offshore wind holds them up and steepens the faces (Douglass 1990,
J. Waterway Port Coastal Ocean Eng. 116(6), 651-663; the laboratory effect is on the breaker
depth index and the breaker type).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.directions import wrap_180
from models.errors import InvalidInput

__all__ = [
    "DRY",
    "MIN_SURF_DEPTH_M",
    "OK",
    "ONSHORE_MAX_DEG",
    "OFFSHORE_MIN_DEG",
    "TOO_SHALLOW",
    "StepConditions",
    "depth_state",
    "onshore_wind_component",
    "relative_wind",
    "still_conditions",
]

ONSHORE_MAX_DEG = 45.0  # |wind FROM − facing| up to this: onshore (common practice)
OFFSHORE_MIN_DEG = 135.0  # from this on: offshore (common practice)
MIN_SURF_DEPTH_M = 0.5  # water over a break point below this is too shallow to ride (common practice)
OK, TOO_SHALLOW, DRY = "ok", "too-shallow", "dry"


@dataclass(frozen=True)
class StepConditions:
    """Per step (T,): water level [m above the bathymetry datum], its rate [m/h] (NaN unknown),
    wind speed [m/s] and FROM direction [deg nautical] (both NaN where there is no wind source)."""

    water_level_m: NDArray[np.float64]
    water_level_rate_m_h: NDArray[np.float64]
    wind_speed_m_s: NDArray[np.float64]
    wind_from_deg: NDArray[np.float64]

    def __post_init__(self) -> None:
        n = np.shape(self.water_level_m)
        for name in ("water_level_rate_m_h", "wind_speed_m_s", "wind_from_deg"):
            if np.shape(getattr(self, name)) != n:
                raise InvalidInput(f"`{name}` must have the shape of `water_level_m` {n}")
        if not np.all(np.isfinite(self.water_level_m)):
            raise InvalidInput("`water_level_m` must be finite")

    def subset(self, idx: ArrayLike) -> StepConditions:
        i = np.asarray(idx)
        return StepConditions(self.water_level_m[i], self.water_level_rate_m_h[i], self.wind_speed_m_s[i],
                              self.wind_from_deg[i])  # fmt: skip

    @property
    def has_wind(self) -> NDArray[np.bool_]:
        return np.isfinite(self.wind_speed_m_s) & np.isfinite(self.wind_from_deg)


def still_conditions(n: int, water_level_m: float | ArrayLike = 0.0) -> StepConditions:
    """`n` steps of a given water level (a constant by default) and no wind."""
    wl = np.broadcast_to(np.asarray(water_level_m, dtype=float), (n,)).copy()
    nan = np.full(n, np.nan)
    return StepConditions(wl, nan.copy(), nan.copy(), nan.copy())


def relative_wind(from_deg: ArrayLike, faces_deg: ArrayLike) -> NDArray[np.str_]:
    """'onshore' | 'cross' | 'offshore' ('' where the direction is NaN) for wind FROM `from_deg`
    at a break facing `faces_deg` (seaward normal): a west-facing break (270) has offshore wind
    from the east."""
    d = np.asarray(from_deg, dtype=float)
    f = np.broadcast_to(np.asarray(faces_deg, dtype=float), d.shape)
    ok = np.isfinite(d) & np.isfinite(f)
    ang = np.abs(wrap_180(np.where(ok, d - f, 0.0)))
    out = np.where(ang <= ONSHORE_MAX_DEG, "onshore", np.where(ang >= OFFSHORE_MIN_DEG, "offshore", "cross"))
    return np.where(ok, out, "").astype("<U8")


def onshore_wind_component(
    speed_m_s: ArrayLike, from_deg: ArrayLike, faces_deg: ArrayLike
) -> NDArray[np.float64]:
    """Wind speed toward the shore along the break's normal [m/s]: positive onshore, negative
    offshore (the signed input the laboratory results of Douglass 1990 are expressed in)."""
    u = np.asarray(speed_m_s, dtype=float)
    ang = np.radians(
        wrap_180(np.nan_to_num(np.asarray(from_deg, dtype=float) - np.asarray(faces_deg, dtype=float)))
    )
    return np.where(np.isfinite(from_deg), u * np.cos(ang), np.nan)


def depth_state(
    bed_depth_m: ArrayLike, water_level_m: ArrayLike
) -> tuple[NDArray[np.float64], NDArray[np.str_]]:
    """(water depth = bed depth below the datum + water level, 'ok' | 'too-shallow' | 'dry')."""
    h = np.asarray(bed_depth_m, dtype=float) + np.asarray(water_level_m, dtype=float)
    state = np.where(h <= 0.0, DRY, np.where(h < MIN_SURF_DEPTH_M, TOO_SHALLOW, OK))
    return h, state.astype("<U11")
