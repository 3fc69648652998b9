"""What the page templates show, built from the service's data: plain dicts and strings only, so the
templates stay free of logic and the numbers can be tested without a server.

- `parse_prefs`: the query options of the pages (units, time zone, hours), refused with a 400 that
  names the parameter when a value is not one we know.
- `outlook_view`: an outlook (the `/v1/spots/{id}/outlook` JSON, as a dict) as hourly rows with the
  spot's own time and UTC side by side; tide and wind columns appear only when steps carry them.
- `board_rows`: an agency's hazard summary as board rows.

Heights arrive in the units asked of the outlook service (m or ft); water level and wind speed are
converted here (1 ft = 0.3048 m exactly, international foot; 1 mph = 0.44704 m/s exactly).
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Any
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

from app.errors import ShoalcastError

__all__ = [
    "BadQuery",
    "Prefs",
    "board_rows",
    "compass",
    "current_index",
    "level_badge",
    "outlook_view",
    "parse_prefs",
    "spot_zone",
    "when",
    "zone_label",
]

FOOT_M = 0.3048
MPH_M_S = 0.44704
HOURS_MAX = 240
_SLUG = re.compile(r"^[a-z0-9][a-z0-9-]{0,63}$")
_COMPASS = ["N", "NNE", "NE", "ENE", "E", "ESE", "SE", "SSE", "S", "SSW", "SW", "WSW", "W", "WNW", "NW", "NNW"]


class BadQuery(ShoalcastError):
    """A query value the pages do not know: answered with a 400 page naming the parameter."""

    status = 400
    title = "Bad request"


@dataclass(frozen=True)
class Prefs:
    units: str = "metric"
    tz: str = "spot"  # spot = the spot's own zone first, utc = UTC first
    hours: int = 72
    agency: str | None = None  # hazard levels by this agency's policy (default: shoalcast's labelled default)

    def query(self, **change: Any) -> str:
        """The query string for these preferences with `change` applied (for the switch links)."""
        values = {"units": self.units, "tz": self.tz, "hours": self.hours, "agency": self.agency, **change}
        return "?" + "&".join(f"{k}={v}" for k, v in values.items() if v is not None)


def parse_prefs(query: Mapping[str, str], *, default_hours: int = 72) -> Prefs:
    units = query.get("units", "metric")
    if units not in ("metric", "imperial"):
        raise BadQuery(f"query parameter `units`: use metric or imperial, not {units!r}", field="units")
    tz = query.get("tz", "spot")
    if tz not in ("spot", "utc"):
        raise BadQuery(f"query parameter `tz`: use spot or utc, not {tz!r}", field="tz")
    raw = query.get("hours", str(default_hours))
    if not raw.strip().isdigit() or not 1 <= int(raw) <= HOURS_MAX:
        raise BadQuery(f"query parameter `hours`: a whole number of hours from 1 to {HOURS_MAX}, not {raw!r}",
                       field="hours")
    agency = query.get("agency")
    if agency is not None and not _SLUG.match(agency):
        raise BadQuery(f"query parameter `agency`: not an agency id (lower-case letters, digits, dashes): {agency!r}",
                       field="agency")
    return Prefs(units=units, tz=tz, hours=int(raw), agency=agency)


def parse_refresh(query: Mapping[str, str], *, default: int = 60) -> int:
    raw = query.get("refresh", str(default))
    if not raw.strip().isdigit() or not 1 <= int(raw) <= 3600:
        raise BadQuery(f"query parameter `refresh`: seconds between checks, 1 to 3600, not {raw!r}", field="refresh")
    return int(raw)


def spot_zone(name: str | None) -> tuple[ZoneInfo, str | None]:
    """The spot's IANA zone, or UTC with a note when the stored name is unknown to this machine."""
    try:
        return ZoneInfo(name or "UTC"), None
    except (ZoneInfoNotFoundError, ValueError):
        return ZoneInfo("UTC"), f"time zone {name!r} is not known here; times are shown in UTC"


def zone_label(zone: ZoneInfo, at: datetime) -> str:
    """`Etc/GMT+3 (UTC-03:00)`: the IANA name with its offset at `at` (POSIX-style names read backwards)."""
    offset = at.astimezone(zone).strftime("%z")
    if str(zone.key) in ("UTC", "Etc/UTC"):
        return "UTC"
    return f"{zone.key} (UTC{offset[:3]}:{offset[3:]})"


def _time(value: Any) -> datetime | None:
    if isinstance(value, datetime):
        return value if value.tzinfo else None
    if isinstance(value, str):
        try:
            t = datetime.fromisoformat(value.replace("Z", "+00:00"))
        except ValueError:
            return None
        return t if t.tzinfo else None
    return None


def when(value: Any, zone: ZoneInfo | None = None, *, fmt: str = "%a %d %b %H:%M") -> str:
    """A time as text in `zone` (default UTC); an en dash for none."""
    t = _time(value)
    if t is None:
        return "–"
    return t.astimezone(zone or UTC).strftime(fmt)


def _num(v: Any) -> float | None:
    if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v):
        return None
    return float(v)


def _fmt(v: Any, digits: int = 1, unit: str = "") -> str:
    x = _num(v)
    if x is None:
        return "–"
    s = f"{x:.{digits}f}"
    return f"{s} {unit}" if unit else s


def compass(deg: Any) -> str:
    """`281° WNW`: nautical FROM degrees with the 16-point compass name."""
    d = _num(deg)
    if d is None:
        return "–"
    return f"{d % 360:.0f}° {_COMPASS[int((d % 360) / 22.5 + 0.5) % 16]}"


def level_badge(level: Any, label: Any) -> dict[str, Any]:
    """A hazard level as badge data: the class picks the colour, the text always names the level."""
    if not isinstance(level, int) or isinstance(level, bool) or not 0 <= level <= 3:
        return {"css": "level-none", "text": "no level", "level": None}
    name = str(label or "").strip()
    text = f"{level} · {name}" if name and name != f"level {level}" else f"level {level}"
    return {"css": f"level-{level}", "text": text, "level": level}


def current_index(times: Sequence[datetime | None], now: datetime) -> int:
    """The step in force at `now`: the last one at or before it (else the first)."""
    best = 0
    for i, t in enumerate(times):
        if t is not None and t <= now:
            best = i
    return best


def _peel(peel: Any) -> str:
    if not isinstance(peel, Mapping) or peel.get("direction") is None:
        return "no breaking wave"
    direction = str(peel["direction"])
    angle = _num(peel.get("angle_deg"))
    if direction == "closeout" or angle is None:
        return direction
    return f"{direction} {angle:.0f}°"


def _heights(step: Mapping[str, Any], units: str) -> Mapping[str, Any]:
    key = "breaker_height_ft" if units == "imperial" else "breaker_height_m"
    block = step.get(key)
    return block if isinstance(block, Mapping) else {}


def _water(step: Mapping[str, Any], units: str) -> str | None:
    level = _num(step.get("water_level_m"))
    tide = step.get("tide") if isinstance(step.get("tide"), Mapping) else {}
    if level is None and not tide:
        return None
    if step.get("water_level_source") == "mean-level" and not tide:
        return None  # no tide profile and no observation: the level says nothing
    parts = []
    if level is not None:
        parts.append(f"{level / FOOT_M:+.1f} ft" if units == "imperial" else f"{level:+.2f} m")
    trend = tide.get("trend") if isinstance(tide, Mapping) else None
    if trend:
        parts.append(str(trend))
    return " ".join(parts) or "–"


def _wind(step: Mapping[str, Any], units: str) -> str | None:
    wind = step.get("wind")
    if not isinstance(wind, Mapping):
        return None
    speed = _num(wind.get("speed_m_s"))
    text = "–" if speed is None else (f"{speed / MPH_M_S:.0f} mph" if units == "imperial" else f"{speed:.1f} m/s")
    if wind.get("direction_deg") is not None:
        text += f" from {compass(wind.get('direction_deg'))}"
    if wind.get("relative"):
        text += f" ({wind['relative']})"
    return text


def _swell_text(sw: Mapping[str, Any], units: str) -> str:
    if units == "imperial":
        off = _fmt(sw.get("height_ft", None if sw.get("height_m") is None else _num(sw["height_m"]) / FOOT_M), 1, "ft")
        brk_v = sw.get("breaker_height_ft")
        unit = "ft"
    else:
        off = _fmt(sw.get("height_m"), 1, "m")
        brk_v = sw.get("breaker_height_m")
        unit = "m"
    period = _fmt(sw.get("period_s"), 0, "s")
    brk = "sheltered" if _num(brk_v) is None else f"breaks {_fmt(brk_v, 1, unit)}"
    return f"{off} {period} from {compass(sw.get('direction_deg'))}, {brk}"


def outlook_view(body: Mapping[str, Any], *, timezone: str | None, prefs: Prefs, now: datetime) -> dict[str, Any]:
    """Rows and column choices for the spot page from an outlook body (JSON-mode dict)."""
    zone, zone_note = spot_zone(timezone)
    show_local = str(zone.key) not in ("UTC", "Etc/UTC")
    zone_name = zone_label(zone, now)
    unit = "ft" if prefs.units == "imperial" else "m"
    steps = [s for s in body.get("steps", []) if isinstance(s, Mapping)]
    times = [_time(s.get("time")) for s in steps]
    current = current_index(times, now) if steps else None
    rows = []
    for i, (s, t) in enumerate(zip(steps, times, strict=True)):
        h = _heights(s, prefs.units)
        hz = s.get("hazard") if isinstance(s.get("hazard"), Mapping) else {}
        local = when(t, zone, fmt="%a %d %H:%M") if show_local else None
        utc = when(t, None, fmt="%a %d %H:%M")
        first, second = (local, utc) if prefs.tz == "spot" and show_local else (utc, local)
        rows.append({
            "current": i == current,
            "time_iso": t.astimezone(UTC).strftime("%Y-%m-%dT%H:%MZ") if t else "",
            "time_first": first,
            "time_second": second,
            "typical": _fmt(h.get("typical")),
            "sets": _fmt(h.get("sets")),
            "largest": _fmt(h.get("largest")),
            "period": _fmt(s.get("period_s"), 0, "s"),
            "direction": compass(s.get("nearshore_direction_deg")),
            "peel": _peel(s.get("peel")),
            "breaker_type": breaker_text(s.get("breaker_type"), s.get("wind_effect")),
            "input": str(s.get("input") or ""),
            "water": _water(s, prefs.units),
            "wind": _wind(s, prefs.units),
            "hazard": level_badge(hz.get("level"), hz.get("label")),
        })
    show_water = any(r["water"] is not None for r in rows)
    show_wind = any(r["wind"] is not None for r in rows)
    for r in rows:
        r["water"] = r["water"] or "–"
        r["wind"] = r["wind"] or "–"

    # Swell trains every 3 hours (and the current hour), by their position in each step's list.
    n_trains = max((len(s.get("swells") or []) for s in steps), default=0)
    trains = []
    for i, (s, t) in enumerate(zip(steps, times, strict=True)):
        if i != current and (t is None or t.hour % 3):
            continue
        swells = [sw for sw in (s.get("swells") or []) if isinstance(sw, Mapping)]
        trains.append({
            "current": i == current,
            "time_first": rows[i]["time_first"],
            "cells": [_swell_text(swells[k], prefs.units) if k < len(swells) else "–" for k in range(n_trains)],
        })

    notes = [str(n) for n in body.get("notes", [])]
    if zone_note:
        notes.append(zone_note)
    if not steps:
        notes.append("No offshore spectra cover these hours yet, so there is nothing to show.")
    first_label = f"{zone_name}" if prefs.tz == "spot" and show_local else "UTC"
    second_label = ("UTC" if first_label != "UTC" else zone_name) if show_local else None
    now_row = rows[current] if current is not None else None
    return {
        "unit": unit,
        "zone": zone_name,
        "show_local": show_local,
        "time_first_label": first_label,
        "time_second_label": second_label,
        "rows": rows,
        "now": now_row,
        "show_water": show_water,
        "show_wind": show_wind,
        "trains": trains,
        "n_trains": n_trains,
        "notes": notes,
        "cautions": [str(c) for c in body.get("cautions", [])],
        "policy": body.get("policy"),
        "policy_is_default": body.get("policy_is_default"),
        "computed_at": when(body.get("computed_at"), None, fmt="%Y-%m-%d %H:%M UTC"),
        "break_points": list(body.get("break_points", [])),
    }


def breaker_text(kind: Any, wind_effect: Any) -> str:
    """The breaker type, marked "(wind)" where the wind changed it from the still-air one."""
    if not kind:
        return "–"
    still = wind_effect.get("breaker_type_without_wind") if isinstance(wind_effect, Mapping) else None
    return f"{kind} (wind)" if still and still != kind else str(kind)


def percent(p: Any) -> str:
    """A likelihood 0..1 as whole percent ('–' when there is none); a no-break space before '%'."""
    return "–" if p is None else f"{round(float(p) * 100):d}\u00a0%"


def shore_break_text(now: Any, onset: Any, zone: Any = None) -> str | None:
    """The shore-break ahead: 'shore-break from <time UTC>' (and spot time), 'no shore-break
    ahead', or None without an outlook (a shore-break now is said in the "now" cell)."""
    if now is None and onset is None:
        return None
    if onset and not now:
        text = "shore-break from " + when(onset, None, fmt="%a %d %H:%M UTC")
        return text + (f", {when(onset, zone, fmt='%H:%M')} {zone_label(zone, _time(onset))}" if zone else "")
    return None if now else "no shore-break ahead"


def board_rows(summary: Mapping[str, Any], zones: Mapping[str, str]) -> list[dict[str, Any]]:
    """An agency's hazard summary (JSON-mode dict) as rows; onsets in each spot's zone and in UTC."""
    out = []
    for s in summary.get("spots", []):
        zone, _ = spot_zone(zones.get(s.get("spot_id", ""), "UTC"))
        local = str(zone.key) not in ("UTC", "Etc/UTC")
        onset = s.get("onset")
        sb_onset = s.get("shore_break_onset")
        out.append({
            "spot_id": s.get("spot_id"),
            "name": s.get("name"),
            "now": level_badge(s.get("level"), s.get("label")),
            "ahead": level_badge(s.get("max_level"), s.get("max_label")),
            "onset_utc": when(onset, None, fmt="%a %d %H:%M UTC") if onset else "–",
            "onset_local": (when(onset, zone, fmt="%a %d %H:%M ") + zone_label(zone, _time(onset) or datetime.now(UTC)))
            if onset and local else None,
            "valid_until": when(s.get("valid_until"), None, fmt="%H:%M UTC") if s.get("valid_until") else "–",
            "rip_now": percent(s.get("rip_current_likelihood")),
            "rip_max": percent(s.get("max_rip_current_likelihood")),
            "sb_now": None if s.get("shore_break") is None else ("shore-break now" if s["shore_break"] else "no shore-break"),
            "sb_ahead": shore_break_text(s.get("shore_break"), sb_onset, zone if local else None),
            "note": s.get("note"),
            "policy": s.get("policy"),
            "policy_is_default": s.get("policy_is_default"),
        })
    return out


def verification_view(session: Any, row: Any) -> dict[str, Any] | None:
    """The spot page's verification section from the latest stored run (None: never verified)."""
    if row is None:
        return None
    from app.services.calibration import active_calibration

    b = row.body

    def f(v: Any, digits: int = 2) -> str:
        return "-" if v is None else f"{v:.{digits}f}"

    cal = active_calibration(session, row.spot_id)
    sectors = [{"name": k, "n": v["n"], "bias": f(v["bias_m"]), "rmse": f(v["rmse_m"]),
                "factor": f(v["calibration_factor"], 3)} for k, v in (b.get("by_sector") or {}).items()]  # fmt: skip
    return {"observations": b.get("observations"), "compared": b.get("compared"), "n": b.get("n", 0),
            "bias": f(b.get("bias_m")), "rmse": f(b.get("rmse_m")), "si": f(b.get("scatter_index")),
            "r": f(b.get("correlation")), "factor": f(b.get("calibration_factor"), 3),
            "factor_se": f(b.get("calibration_factor_stderr"), 3), "when": when(row.created_at, fmt="%Y-%m-%d %H:%M"),
            "by": row.created_by, "sectors": sectors,
            "calibration": None if cal is None else f"{cal.factor:.3f} (version {cal.version})"}  # fmt: skip
