"""An invented nearshore wave gauge at the demo beach (Ostravel Strand), for the verification step.

Everything here is invented. The gauge sits on the ~12.7 m contour in front of the beach's break
points and reports hourly spectra (stamped 20 minutes past the hour) for the past day. What it
"measures" is the demo's offshore truth (app.demo.feed's scenario, before the buoy's sampling
noise) with only the sea-side half of the directions (270° ± 90°: the beach faces west), shoaled
to the gauge's depth by linear theory (energy flux: E(f) × Cg0/Cg(f, h), normal incidence), times
a site factor of SITE_FACTOR² in energy that the model does not know about (say a little friction
over the shelf), with 8 % sampling noise. So verifying the beach against it should find the
outlook about 1/SITE_FACTOR high, give or take the refraction the gauge leaves out.

The demo also stands in for a day of polling: the buoy's spectra are marked as stored 20 minutes
after their stamps and the model issue 4 hours after its cycle (`simulate_polled_history`), so
each hour's hindcast can use what would have been known then (docs/verification.md §2).
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np

from app.formats.records import SpectrumRecord

__all__ = ["GAUGE_ID", "GAUGE_SPOT_ID", "gauge_records", "simulate_polled_history", "write_gauge", "write_gauge_profile"]

GAUGE_ID = "demo-gauge-strand"
GAUGE_SPOT_ID = "ostravel-strand"
GAUGE_X_M, GAUGE_Y_M = 100.0, 150.0  # local metres about the spot's origin (~12.7 m deep)
GAUGE_HOURS = 30
GAUGE_MINUTE = 20
SITE_FACTOR = 0.9  # in height (invented)
NOISE = 0.08
OBSERVATION_DELAY = timedelta(minutes=20)  # a buoy spectrum is stored this long after its stamp
FORECAST_DELAY = timedelta(hours=4)  # a model issue is available this long after its cycle (common practice)


def _spot():  # type: ignore[no-untyped-def]
    from app.demo.coast import SPOTS

    return next(s for s in SPOTS if s.id == GAUGE_SPOT_ID)


def gauge_position() -> tuple[float, float, float]:
    """(latitude, longitude, depth) of the gauge."""
    from app.demo.coast import spot_depth_function
    from models.geodesy import to_lonlat

    spot = _spot()
    lon, lat = (float(v) for v in to_lonlat(GAUGE_X_M, GAUGE_Y_M, spot.latitude, spot.longitude))
    depth = float(spot_depth_function(spot)(np.array([GAUGE_X_M]), np.array([GAUGE_Y_M]))[0])
    return lat, lon, depth


def gauge_records(now: datetime) -> list[SpectrumRecord]:
    """The gauge's hourly spectra for the GAUGE_HOURS before `now` (oldest first)."""
    from app.demo.feed import (
        _FINE_DIRECTIONS_DEG,
        NDBC_FREQUENCIES_HZ,
        default_scenario,
        directional_moments,
        efth,
    )
    from models.waves import deep_group_velocity, group_velocity

    now = now.astimezone(UTC).replace(minute=0, second=0, microsecond=0)
    scenario = default_scenario(now)
    _, _, depth = gauge_position()
    f, d = NDBC_FREQUENCIES_HZ, _FINE_DIRECTIONS_DEG
    shoal = deep_group_velocity(f) / group_velocity(f, depth)  # Cg0 / Cg
    seaward = (np.abs(((d - 270.0 + 180.0) % 360.0) - 180.0) < 90.0).astype(float)
    out = []
    for k in range(GAUGE_HOURS, 0, -1):
        t = now - timedelta(hours=k) + timedelta(minutes=GAUGE_MINUTE)
        e = efth(scenario, (t - now).total_seconds() / 3600.0, f, d) * seaward[None, :]
        e = e * (SITE_FACTOR**2 * shoal)[:, None]
        density, r1, r2, a1, a2 = directional_moments(e, d)
        rng = np.random.default_rng([scenario.seed, 7, int(t.timestamp())])
        density = density * np.exp(NOISE * rng.standard_normal(density.size) - 0.5 * NOISE**2)
        out.append(SpectrumRecord(station=GAUGE_ID, time=t, frequency=f, density=density, r1=r1, r2=r2,
                                  alpha1_deg=a1, alpha2_deg=a2))  # fmt: skip
    return out


SUFFIXES = ("data_spec", "swdir", "swdir2", "swr1", "swr2")


def write_gauge(directory: str | Path, *, now: datetime) -> int:
    """Write the gauge's real-time text set into the feed directory; returns the number of spectra."""
    from app.demo.feed import _write_text
    from app.formats.ndbc_realtime import write_realtime_set

    out = Path(directory)
    out.mkdir(parents=True, exist_ok=True)
    records = gauge_records(now)
    for suffix, text in write_realtime_set(records, density_decimals=4).items():
        _write_text(out / f"{GAUGE_ID}.{suffix}", text)
    return len(records)


def write_gauge_profile(directory: str | Path, *, base_url: str, poll_minutes: float = 5.0) -> Path:
    from app.demo.feed import _write_text

    lat, lon, depth = gauge_position()
    base = base_url.rstrip("/")
    urls = ", ".join(f'"{base}/{GAUGE_ID}.{s}"' for s in SUFFIXES)
    text = "\n".join([
        "# Invented nearshore wave gauge at the demo beach, for verification only (not a spot input).",
        f'id = "{GAUGE_ID}"',
        'name = "Ostravel Strand nearshore gauge (synthetic)"',
        'format = "spectral-text-realtime"',
        f"latitude = {lat:.6f}",
        f"longitude = {lon:.6f}",
        f"depth_m = {depth:.1f}",
        f"urls = [{urls}]",
        f"poll_minutes = {poll_minutes:g}",
        "",
    ])  # fmt: skip
    path = Path(directory) / f"{GAUGE_ID}.toml"
    path.parent.mkdir(parents=True, exist_ok=True)
    _write_text(path, text)
    return path


def simulate_polled_history(url: str, source_ids: list[str]) -> int:
    """Mark the sources' rows as stored when a steady poller would have stored them (never later
    than they really were): spectra OBSERVATION_DELAY after their stamp, a model issue
    FORECAST_DELAY after its cycle. Returns the number of rows changed."""
    from sqlalchemy import select

    from app.db.session import session_scope
    from app.db.tables import Observation

    changed = 0
    with session_scope(url) as session:
        for row in session.scalars(select(Observation).where(Observation.source_id.in_(source_ids))):
            due = (row.time + OBSERVATION_DELAY) if row.issue_time is None else (row.issue_time + FORECAST_DELAY)
            if due < row.ingested_at:
                row.ingested_at = due
                changed += 1
    return changed
