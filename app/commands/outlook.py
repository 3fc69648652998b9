"""`shoalcast outlook SPOT_ID`: breaker heights, period, direction, peel, breaker type, tide, wind and
hazard per step."""

from __future__ import annotations

import argparse
from datetime import UTC, datetime

from app.commands.common import print_json, print_table, ready_database, rfc3339
from app.db.session import session_scope
from app.errors import BadInput
from app.schemas.outlooks import Step


def parse_time(text: str) -> datetime:
    """RFC 3339 / ISO 8601 time; a time without an offset is read as UTC."""
    try:
        t = datetime.fromisoformat(text.strip().replace("Z", "+00:00"))
    except ValueError:
        raise BadInput(
            f"--from: {text!r} is not an RFC 3339 time (e.g. 2026-01-31T06:00:00Z)", field="from"
        ) from None
    return t.replace(tzinfo=UTC) if t.tzinfo is None else t.astimezone(UTC)


def _fmt(v: float | None, unit: str = "") -> str:
    return "-" if v is None else f"{v:g}{unit}"


COMPASS = ("N", "NE", "E", "SE", "S", "SW", "W", "NW")
FOOT_M = 0.3048
KNOT_M_S = 1852.0 / 3600.0


def tide_text(s: Step, imperial: bool) -> str:
    """Water level above the bathymetry datum, trend arrow, '*' where observed, '!' where a break
    point is too shallow or dry."""
    if s.water_level_m is None:
        return "-"
    lv = f"{s.water_level_m / FOOT_M:+.1f}ft" if imperial else f"{s.water_level_m:+.2f}m"
    arrow = {"rising": "↑", "falling": "↓"}.get(s.tide.trend if s.tide else "", "")
    mark = "*" if s.water_level_source == "observed" else ""
    return f"{lv}{arrow}{mark}" + (" !" if s.shallow_points else "")


def wind_text(s: Step, imperial: bool) -> str:
    """Speed (m/s, or knots in imperial units), compass point it blows FROM, offshore/cross/onshore."""
    w = s.wind
    if w is None:
        return "-"
    speed = f"{w.speed_m_s / KNOT_M_S:.0f}kn" if imperial else f"{w.speed_m_s:.0f}m/s"
    return f"{speed} {COMPASS[int((w.direction_deg + 22.5) // 45) % 8]} {w.relative}"


def _run(args: argparse.Namespace) -> int:
    from app.services.outlooks import get_outlook

    start = parse_time(args.start) if args.start else None
    with session_scope(ready_database()) as session:
        body = get_outlook(
            session, args.spot_id, hours=args.hours, start=start, units=args.units, agency_id=args.agency
        )
    if args.json:
        print_json(body)
        return 0
    u = "ft" if body.units == "imperial" else "m"
    print(f"{body.name or body.spot_id} ({body.spot_id}) — hazard policy: {body.policy}")
    rows = []
    for s in body.steps:
        h = s.breaker_height_ft if body.units == "imperial" else s.breaker_height_m
        assert h is not None
        peel = "-" if s.peel.direction is None else f"{s.peel.direction} {_fmt(s.peel.angle_deg, '°')}"
        rows.append([
            rfc3339(s.time), s.input, f"{_fmt(h.typical)}/{_fmt(h.sets)}/{_fmt(h.largest)}", _fmt(s.period_s, " s"),
            _fmt(s.nearshore_direction_deg, "°"), peel, _breaker(s), tide_text(s, u == "ft"),
            wind_text(s, u == "ft"), f"{s.hazard.level} {s.hazard.label}",
        ])  # fmt: skip
    if rows:
        print_table(
            ["time", "input", f"breakers {u} typ/sets/max", "period", "dir", "peel", "breaker", "tide", "wind",
             "hazard"],
            rows,
        )  # fmt: skip
        shallow = sorted({p for s in body.steps for p in s.shallow_points})
        print("tide: level above the bathymetry datum, ↑ rising ↓ falling, * observed"
              + (f"; ! too shallow or dry at some steps: {', '.join(shallow)}" if shallow else ""))
        if any(_breaker(s).endswith("(wind)") for s in body.steps):
            print("breaker: (wind) = type moved by the wind (Douglass 1990 direction; the size is shoalcast's)")
    else:
        print("no steps: no offshore spectra cover this window")
    for note in body.notes:
        print(f"note: {note}")
    print()
    for c in body.cautions:
        print(f"! {c}")
    return 0


def _breaker(s) -> str:  # type: ignore[no-untyped-def]
    if not s.breaker_type:
        return "-"
    fx = s.wind_effect
    changed = fx is not None and fx.breaker_type_without_wind and fx.breaker_type_without_wind != s.breaker_type
    return f"{s.breaker_type} (wind)" if changed else s.breaker_type


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "outlook", help="a spot's outlook: breaker heights, peel, swells, hazard", description=__doc__
    )
    p.add_argument("spot_id")
    p.add_argument("--json", action="store_true", help="print the outlook JSON")
    p.add_argument("--hours", type=int, default=72, help="hours ahead (default 72)")
    p.add_argument("--units", choices=("metric", "imperial"), default="metric")
    p.add_argument("--agency", metavar="ID", help="use this agency's hazard policy")
    p.add_argument(
        "--from", dest="start", metavar="TIME", help="start time, RFC 3339 (default: the current hour)"
    )
    p.set_defaults(func=_run)
