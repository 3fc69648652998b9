"""Water level and wind at a spot, per outlook step, from its tide profile and its sources.

Water level above the bathymetry datum (docs/tide-wind.md §2):
- predicted from the profile's `[tide]` (`models.tide.predict`, mean level + constituents);
- observed where one of the spot's sources has a water level close in time (met text TIDE in
  feet; each source's `water_level_datum_m` added): the observation
  overrides the prediction there and the residual (observed − predicted) is shown;
- else the mean level (0 without a `[tide]`).
Trend and the next high and low waters come from the prediction (from the observations' slope
where there is no prediction).

Wind: an observation within `WIND_OBSERVATION_MAX_GAP_S` of the step, else a model forecast's
wind (latest issue of a source, interpolated by components), else none (null in the step).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from typing import Any

import numpy as np
from numpy.typing import NDArray
from sqlalchemy import select
from sqlalchemy.orm import Session

from app.db.tables import Observation, Source, Spot
from models.conditions import StepConditions, relative_wind
from models.constants import FOOT
from models.tide import Constituent, predict, predict_rate, tide_extremes

__all__ = [
    "LEVEL_OBSERVATION_MAX_GAP_S",
    "WIND_OBSERVATION_MAX_GAP_S",
    "ConditionInputs",
    "SpotConditions",
    "condition_key",
    "load_condition_inputs",
]

LEVEL_OBSERVATION_MAX_GAP_S = 2 * 3600.0  # observed levels are joined across gaps up to this
LEVEL_OBSERVATION_REACH_S = 30 * 60.0  # ... and used this far beyond the first / last one
WIND_OBSERVATION_MAX_GAP_S = 3600.0  # an observed wind stands for the steps within this (common practice)
FORECAST_MAX_GAP_S = 6 * 3600.0  # model-forecast values are interpolated across gaps up to this
LOOKBACK_H = 6.0
EXTREMES_AHEAD_H = 26.0  # far enough for the next high and low after the last step
_EPOCH = datetime(1970, 1, 1, tzinfo=UTC)


def _s(t: datetime) -> float:
    return (t - _EPOCH).total_seconds()


def _t(s: float) -> datetime:
    return datetime.fromtimestamp(round(s), tz=UTC)


@dataclass(frozen=True)
class Series:
    """Values at times [s since 1970 UTC], sorted."""

    t: NDArray[np.float64]
    v: NDArray[np.float64]


def _series(pairs: Sequence[tuple[float, float]]) -> Series:
    pairs = sorted(pairs)
    return Series(np.array([p[0] for p in pairs], dtype=float), np.array([p[1] for p in pairs], dtype=float))


def interp_gapped(s: Series, t: NDArray[np.float64], max_gap_s: float, reach_s: float) -> NDArray[np.float64]:
    """Linear interpolation of `s` at `t`, NaN across gaps longer than `max_gap_s` and further
    than `reach_s` beyond the ends (where the nearest value is held)."""
    out = np.full(t.shape, np.nan)
    if s.t.size == 0:
        return out
    if s.t.size == 1:
        return np.where(np.abs(t - s.t[0]) <= reach_s, s.v[0], np.nan)
    out = np.interp(t, s.t, s.v)
    j = np.clip(np.searchsorted(s.t, t), 1, s.t.size - 1)
    inside = (t >= s.t[0]) & (t <= s.t[-1])
    gap = s.t[j] - s.t[j - 1]
    near = np.minimum(np.abs(t - s.t[j]), np.abs(t - s.t[j - 1]))
    ok = np.where(
        inside,
        (gap <= max_gap_s) | (near <= reach_s),
        np.minimum(np.abs(t - s.t[0]), np.abs(t - s.t[-1])) <= reach_s,
    )
    return np.where(ok, out, np.nan)


@dataclass(frozen=True)
class ConditionInputs:
    """What a spot's conditions are computed from (loaded once per outlook)."""

    faces_deg: float
    mean_level_m: float
    constituents: tuple[Constituent, ...]
    level_observed: Series  # [m above the bathymetry datum]
    wind_observed: tuple[Series, Series, Series]  # speed, east and north components of the FROM unit vector
    wind_forecast: tuple[Series, Series, Series]  # u, v components of the velocity (toward), speed
    wind_sources: tuple[str, ...]
    level_sources: tuple[str, ...]
    observation_ids: tuple[tuple[int, str], ...]  # (id, content hash) of every row used: cache keys

    @property
    def has_tide(self) -> bool:
        return bool(self.constituents)


def _met_rows(session: Session, spot: Spot, start: datetime, end: datetime) -> list[Observation]:
    if not spot.sources:
        return []
    rows = list(
        session.scalars(
            select(Observation)
            .where(
                Observation.source_id.in_(spot.sources),
                Observation.kind == "met",
                Observation.time >= start - timedelta(hours=LOOKBACK_H),
                Observation.time <= end + timedelta(hours=LOOKBACK_H),
            )
            .order_by(Observation.time, Observation.id)
        )
    )
    latest: dict[str, datetime] = {}
    for r in rows:
        if r.issue_time is not None and (r.source_id not in latest or r.issue_time > latest[r.source_id]):
            latest[r.source_id] = r.issue_time
    return [r for r in rows if r.issue_time is None or r.issue_time == latest[r.source_id]]


def _num(v: Any) -> float | None:
    try:
        x = float(v)
    except (TypeError, ValueError):
        return None
    return x if math.isfinite(x) else None


def level_of(values: dict[str, Any], datum_m: float) -> float | None:
    """A stored met row's water level [m above the bathymetry datum]: `water_level_m` (metres) when
    a reader gave one, else the met text TIDE column (feet) converted."""
    wl = _num(values.get("water_level_m"))
    if wl is None:
        ft = _num(values.get("tide_ft"))
        wl = None if ft is None else ft * FOOT
    return None if wl is None else wl + datum_m


def load_condition_inputs(session: Session, spot: Spot, start: datetime, end: datetime) -> ConditionInputs:
    """The tide profile and the met rows (observed, and each source's latest forecast issue)."""
    tide = (spot.profile or {}).get("tide") or {}
    cons = tuple(
        Constituent(c["name"], float(c["amplitude_m"]), float(c["phase_deg"]))
        for c in tide.get("constituents", [])
    )
    rows = _met_rows(session, spot, start, end)
    datum = {}
    for sid in dict.fromkeys(r.source_id for r in rows):
        src = session.get(Source, sid)
        datum[sid] = float(
            ((src.config or {}) if src is not None else {}).get("water_level_datum_m", 0.0) or 0.0
        )
    lv, ws, we, wn, fu, fv, fs = [], [], [], [], [], [], []
    level_src, wind_src, used = [], [], []
    order = {sid: i for i, sid in enumerate(spot.sources or [])}
    seen_level: set[float] = set()
    seen_wind: set[tuple[bool, float]] = set()
    for r in sorted(rows, key=lambda r: (order.get(r.source_id, 99), r.time)):
        t = _s(r.time)
        vals = r.values or {}
        took = False
        lev = level_of(vals, datum.get(r.source_id, 0.0)) if r.issue_time is None else None
        if lev is not None and t not in seen_level:  # observed levels only; the first source wins a time
            seen_level.add(t)
            lv.append((t, lev))
            level_src.append(r.source_id)
            took = True
        spd, d = _num(vals.get("wind_speed_ms")), _num(vals.get("wind_dir_deg"))
        fc = r.issue_time is not None
        if spd is not None and d is not None and (fc, t) not in seen_wind:
            seen_wind.add((fc, t))
            rad = math.radians(d)
            if fc:  # velocity components (toward) interpolate smoothly through a turn
                fu.append((t, -spd * math.sin(rad)))
                fv.append((t, -spd * math.cos(rad)))
                fs.append((t, spd))
            else:
                ws.append((t, spd))
                we.append((t, math.sin(rad)))
                wn.append((t, math.cos(rad)))
            wind_src.append(r.source_id)
            took = True
        if took:
            used.append((r.id, r.content_sha256))
    return ConditionInputs(
        faces_deg=float(spot.faces_deg), mean_level_m=float(tide.get("mean_level_m", 0.0) or 0.0), constituents=cons,
        level_observed=_series(lv), wind_observed=(_series(ws), _series(we), _series(wn)),
        wind_forecast=(_series(fu), _series(fv), _series(fs)), wind_sources=tuple(dict.fromkeys(wind_src)),
        level_sources=tuple(dict.fromkeys(level_src)), observation_ids=tuple(used),
    )  # fmt: skip


def condition_key(session: Session, spot: Spot, start: datetime, end: datetime) -> list[Any]:
    """The part of an outlook's cache key that its conditions depend on."""
    ci = load_condition_inputs(session, spot, start, end)
    datums = []
    for sid in spot.sources or []:
        src = session.get(Source, sid)
        datums.append([sid, None if src is None else (src.config or {}).get("water_level_datum_m", 0.0)])
    return [list(map(list, ci.observation_ids)), datums]


@dataclass(frozen=True)
class SpotConditions:
    """Per step (T,): the structure the breaking computation receives (`conditions`), and what
    the steps show beside it."""

    times: tuple[datetime, ...]
    conditions: StepConditions
    level_source: tuple[str, ...]  # observed | predicted | mean-level | given
    predicted_m: NDArray[np.float64]  # NaN without a tide profile
    residual_m: NDArray[np.float64]  # observed − predicted, NaN where either is missing
    trend: tuple[str | None, ...]  # rising | falling | None
    next_high: tuple[tuple[datetime, float] | None, ...]
    next_low: tuple[tuple[datetime, float] | None, ...]
    wind_input: tuple[str | None, ...]  # observed | model-forecast | None
    wind_relative: tuple[str | None, ...]

    def index(self) -> dict[datetime, int]:
        return {t: i for i, t in enumerate(self.times)}

    def hazard_inputs(self) -> dict[str, Any]:
        """What a hazard policy's rules test (`models.hazard.hazard_level` keywords)."""
        c = self.conditions
        return dict(water_level_m=c.water_level_m, tide_trend=list(self.trend), wind_speed_m_s=c.wind_speed_m_s,
                    wind_relative=list(self.wind_relative))  # fmt: skip


def _next(times: NDArray[np.float64], ext_t: NDArray[np.float64], ext_v: NDArray[np.float64]) -> list[Any]:
    j = np.searchsorted(ext_t, times, side="right")
    return [(_t(float(ext_t[k])), float(ext_v[k])) if k < ext_t.size else None for k in j.tolist()]


def spot_conditions(
    ci: ConditionInputs, times: Sequence[datetime], *, given: NDArray[np.float64] | None = None
) -> SpotConditions:
    """Water level, tide and wind at `times`; `given` (a level per step) replaces the water level."""
    times = tuple(times)
    t = np.array([_s(x) for x in times], dtype=float)
    n = t.size
    nan = np.full(n, np.nan)
    if ci.has_tide and n:
        pred = predict(t, ci.constituents, mean_level_m=ci.mean_level_m)
        rate = predict_rate(t, ci.constituents) * 3600.0
    else:
        pred, rate = nan.copy(), nan.copy()
    obs = interp_gapped(ci.level_observed, t, LEVEL_OBSERVATION_MAX_GAP_S, LEVEL_OBSERVATION_REACH_S)
    if not ci.has_tide and ci.level_observed.t.size >= 2:  # trend from the observations' slope
        slope = np.gradient(ci.level_observed.v, ci.level_observed.t) * 3600.0
        srate = interp_gapped(
            Series(ci.level_observed.t, slope), t, LEVEL_OBSERVATION_MAX_GAP_S, LEVEL_OBSERVATION_REACH_S
        )
        rate = np.where(np.isfinite(obs), srate, np.nan)
    if given is not None:
        level = np.asarray(given, dtype=float)
        src = ["given"] * n
    else:
        base = pred if ci.has_tide else np.full(n, ci.mean_level_m)
        level = np.where(np.isfinite(obs), obs, base)
        src = ["observed" if np.isfinite(o) else ("predicted" if ci.has_tide else "mean-level") for o in obs]
    residual = obs - pred
    trend = [None if not math.isfinite(r) else ("rising" if r > 0 else "falling") for r in rate.tolist()]
    if ci.has_tide and n:
        ext = tide_extremes(float(t.min()) - 60.0, float(t.max()) + EXTREMES_AHEAD_H * 3600.0, ci.constituents,
                            mean_level_m=ci.mean_level_m)  # fmt: skip
        highs, lows = _next(t, ext.high_times, ext.high_levels), _next(t, ext.low_times, ext.low_levels)
    else:
        highs = lows = [None] * n
    # wind: observed near the step, else the model forecast
    spd_o = interp_gapped(ci.wind_observed[0], t, WIND_OBSERVATION_MAX_GAP_S, WIND_OBSERVATION_MAX_GAP_S)
    e_o = interp_gapped(ci.wind_observed[1], t, WIND_OBSERVATION_MAX_GAP_S, WIND_OBSERVATION_MAX_GAP_S)
    n_o = interp_gapped(ci.wind_observed[2], t, WIND_OBSERVATION_MAX_GAP_S, WIND_OBSERVATION_MAX_GAP_S)
    u_f = interp_gapped(ci.wind_forecast[0], t, FORECAST_MAX_GAP_S, 0.0)
    v_f = interp_gapped(ci.wind_forecast[1], t, FORECAST_MAX_GAP_S, 0.0)
    s_f = interp_gapped(ci.wind_forecast[2], t, FORECAST_MAX_GAP_S, 0.0)
    has_o = np.isfinite(spd_o) & np.isfinite(e_o) & np.isfinite(n_o)
    has_f = np.isfinite(u_f) & np.isfinite(v_f) & np.isfinite(s_f)
    dir_o = np.mod(np.degrees(np.arctan2(e_o, n_o)), 360.0)
    dir_f = np.mod(np.degrees(np.arctan2(-u_f, -v_f)), 360.0)
    speed = np.where(has_o, spd_o, np.where(has_f, s_f, np.nan))
    wdir = np.where(has_o, dir_o, np.where(has_f, dir_f, np.nan))
    wind_in = [
        "observed" if o else ("model-forecast" if f else None)
        for o, f in zip(has_o.tolist(), has_f.tolist(), strict=True)
    ]
    rel = [r or None for r in relative_wind(wdir, ci.faces_deg).tolist()]
    return SpotConditions(
        times=times, conditions=StepConditions(level, rate, speed, wdir), level_source=tuple(src), predicted_m=pred,
        residual_m=residual, trend=tuple(trend), next_high=tuple(highs), next_low=tuple(lows),
        wind_input=tuple(wind_in), wind_relative=tuple(rel),
    )  # fmt: skip
