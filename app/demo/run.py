"""`shoalcast demo`: the whole job on the fictional Skellmarrow coast, from nothing.

Steps (each reuses what a previous run left, so a second run is quick): database schema; the
coast's bathymetry files and profiles, imported as spots (skipped when unchanged: re-importing
would drop the spot's tables); the demo agency and its hazard policy; the transfer tables (built
only when missing or stale); the synthetic feed written for the current hour and served on
127.0.0.1; the two sources pointed at it and polled once over HTTP through the fetcher (a
conditional GET: unchanged files are not ingested again); then each spot's outlook and swell
window, with the cautions; and, unless `serve=False`, the API with the in-process scheduler
(Ctrl-C stops it, then the feed server).
"""

from __future__ import annotations

import sys
import time
from collections.abc import Callable
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, TextIO

__all__ = ["AGENCY_ID", "DEMO_CAUTIONS", "FEED_PORT", "demo_agency", "run_demo"]

AGENCY_ID = "skellmarrow-shorewatch"
FEED_PORT = 8765  # fixed when free, so the sources' URLs (and their conditional-GET state) survive reruns
DEMO_CAUTIONS = (
    "Guidance only: these numbers come from a model of an invented coast, not from anyone watching the water.",
    "Conditions change quickly; what you see on the beach outranks any outlook.",
    "Follow lifeguards, official warnings and local rules.",
)
OUTLOOK_HOURS = 60
PRINT_EVERY_H = 6


def demo_agency(spot_ids: list[str]) -> Any:
    """The demo's (invented) shore-watch service with its own plain-word levels."""
    from app.schemas.agencies import AgencyConfig, LevelSpec, PolicySpec

    levels = [
        LevelSpec(level=0, label="settled", description="small surf; ordinary care"),
        LevelSpec(level=1, label="take care", set_height_m=1.0, description="sets over 1 m: for confident swimmers and surfers"),
        LevelSpec(level=2, label="experienced only", set_height_m=2.0,
                  description="sets over 2 m: strong currents, heavy breaking"),
        LevelSpec(level=3, label="stay out", set_height_m=3.2, description="sets over 3.2 m: nobody in the water"),
    ]
    return AgencyConfig(id=AGENCY_ID, name="Skellmarrow Shore Watch (fictional)", spots=spot_ids, alert_level=2,
                        contact="demo only: no such service", policy=PolicySpec(combine="any", levels=levels))


def _say(out: TextIO, text: str = "") -> None:
    out.write(text + "\n")
    out.flush()


def _import_spots(url: str, profiles: list[Path]) -> tuple[list[str], int]:
    """Import each profile unless the stored spot already has the same profile and grid."""
    from app.db.session import session_scope
    from app.db.tables import Spot
    from app.services.spots import grid_sha256, load_profile, store_spot

    ids, imported = [], 0
    for path in profiles:
        loaded = load_profile(path)
        ids.append(loaded.profile.id)
        with session_scope(url) as session:
            existing = session.get(Spot, loaded.profile.id)
            same = (
                existing is not None
                and existing.bathymetry is not None
                and existing.profile == loaded.profile.model_dump(mode="json")
                and existing.bathymetry.sha256 == grid_sha256(loaded.grid)
            )
            if not same:
                store_spot(session, loaded)
                imported += 1
    return ids, imported


def _start_feed(directory: Path, port: int | None) -> Any:
    from app.demo.server import FeedServer

    for p in ([port] if port is not None else [FEED_PORT, 0]):
        try:
            return FeedServer(directory, port=p).start()
        except OSError:
            continue
    raise RuntimeError(f"could not start the demo feed server on 127.0.0.1 (port {port or FEED_PORT} busy)")


def _fmt(v: float | None, fmt: str = "{:.1f}") -> str:
    return "-" if v is None else fmt.format(v)


def _outlook_lines(body: Any) -> list[str]:
    """Our own compact layout: one line every PRINT_EVERY_H hours."""
    from app.commands.outlook import tide_text, wind_text

    head = (f"  {'time (UTC)':<16} {'breakers m':<15} {'period':>6} {'from':>5}  {'peel':<16} {'breaker':<10} "
            f"{'tide':<9} {'wind':<17} hazard")
    sub = f"  {'':<16} {'typ / sets / max':<15}"
    lines = [head, sub]
    t0 = body.steps[0].time if body.steps else None
    for s in body.steps:
        if (s.time - t0).total_seconds() % (PRINT_EVERY_H * 3600):
            continue
        h = s.breaker_height_m
        heights = "-" if h is None else f"{_fmt(h.typical)} / {_fmt(h.sets)} / {_fmt(h.largest)}"
        if s.peel.direction is None:
            peel = "-"
        elif s.peel.direction == "closeout":
            peel = "closeout"
        else:
            peel = f"{s.peel.direction} {_fmt(s.peel.angle_deg, '{:.0f}°')}"
        lines.append(
            f"  {s.time.astimezone(UTC):%a %d %H:%M}     {heights:<15} {_fmt(s.period_s, '{:.0f} s'):>6} "
            f"{_fmt(s.nearshore_direction_deg, '{:.0f}°'):>5}  {peel:<16} {s.breaker_type or '-':<10} "
            f"{tide_text(s, False):<9} {wind_text(s, False):<17} {s.hazard.level} {s.hazard.label}"
        )
    shallow = sorted({p for s in body.steps for p in s.shallow_points})
    if shallow:
        lines.append(f"  too shallow or dry at some states of the tide (!): {', '.join(shallow)}")
    return lines


def _window_lines(body: dict[str, Any]) -> list[str]:
    """Open offshore directions (K > threshold) per point for a few swell periods."""
    lines = []
    for p in body["points"]:
        if not p.get("built"):
            lines.append(f"  {p['name']}: no table")
            continue
        parts = []
        periods = p["periods_s"]
        for want in (8.0, 12.0, 16.0):
            i = min(range(len(periods)), key=lambda k: abs(periods[k] - want))
            arcs = p["open_arcs_deg"][i]
            ks = [k for k in p["coefficient"][i] if k is not None]
            text = ", ".join(f"{a:.0f}-{b:.0f}°" for a, b in arcs) if arcs else "closed"
            parts.append(f"{periods[i]:.0f} s: {text} (K max {max(ks, default=0):.2f})")
        lines.append(f"  {p['name']:<14} " + "; ".join(parts))
    return lines


def _verification_lines(url: str) -> list[str]:
    """Verify the gauge's spot against the gauge (stored as the spot's latest run, not applied)."""
    from app.db.session import session_scope
    from app.demo.gauge import GAUGE_ID, GAUGE_SPOT_ID
    from app.services.verification import run_verification

    with session_scope(url) as session:
        b = run_verification(session, GAUGE_SPOT_ID, station=GAUGE_ID, who="demo")
    st = b.get("station") or {}

    def f(v: float | None, fmt: str = "{:+.2f}") -> str:
        return "-" if v is None else fmt.format(v)

    lines = [
        f"Verification of {GAUGE_SPOT_ID} against the nearshore gauge {GAUGE_ID} ({st.get('depth_m', 0):.1f} m deep): "
        "Hm0 at the gauge, each hour recomputed from the inputs known then",
        f"  n {b['n']}   bias (obs − fc) {f(b['bias_m'])} m   RMSE {f(b['rmse_m'], '{:.2f}')} m   "
        f"SI {f(b['scatter_index'], '{:.2f}')}   r {f(b['correlation'], '{:.2f}')}   "
        f"factor {f(b['calibration_factor'], '{:.3f}')} ± {f(b['calibration_factor_stderr'], '{:.3f}')}",
    ]
    for name, g in b["by_sector"].items():
        lines.append(f"  from {name:<3} n {g['n']:>3}   bias {f(g['bias_m'])} m   RMSE {f(g['rmse_m'], '{:.2f}')} m   "
                     f"factor {f(g['calibration_factor'], '{:.3f}')}")  # fmt: skip
    used = ", ".join(f"{k} ×{v}" for k, v in b["inputs_used"].items()) or "none"
    lines.append(f"  inputs used: {used}" + (f"; {b['unpaired']} hour(s) with nothing known yet" if b["unpaired"] else ""))
    lines.append(f"  (not applied: `shoalcast verify {GAUGE_SPOT_ID} {GAUGE_ID} --apply` would store the factor)")
    return lines


def run_demo(
    directory: str | Path = "var/demo",
    *,
    serve: bool = True,
    port: int = 8000,
    feed_port: int | None = None,
    out: TextIO = sys.stdout,
    err: TextIO = sys.stderr,
    now: datetime | None = None,
    on_serving: Callable[[], None] | None = None,
) -> int:
    """Run the demo (see the module docstring). Returns a process exit code."""
    from app.commands.common import ready_database
    from app.commands.tables import ProgressBar
    from app.config import get_settings
    from app.db.session import session_scope
    from app.demo.coast import COAST_NAME, write_coast
    from app.demo.feed import write_feed, write_source_profiles
    from app.demo.gauge import (
        GAUGE_ID,
        GAUGE_SPOT_ID,
        simulate_polled_history,
        write_gauge,
        write_gauge_profile,
    )
    from app.ingest.fetch import fetch_source
    from app.ingest.sources import add_source, load_source_toml
    from app.services.agencies import add_agency
    from app.services.outlooks import get_outlook
    from app.services.tables import build_tables, executor_for, window_body

    t_start = time.perf_counter()
    base = Path(directory)
    now = (now or datetime.now(UTC)).astimezone(UTC).replace(minute=0, second=0, microsecond=0)
    url = ready_database()
    _say(out, f"shoalcast demo — {COAST_NAME}: invented coast, invented data")
    _say(out, f"  database  {url}")
    _say(out, f"  files     {base.resolve()}")

    profiles = write_coast(base / "coast")
    spot_ids, imported = _import_spots(url, profiles)
    _say(out, f"  spots     {len(spot_ids)} ({imported} imported, {len(spot_ids) - imported} unchanged): {', '.join(spot_ids)}")
    with session_scope(url) as session:
        add_agency(session, demo_agency(spot_ids))
    _say(out, f"  agency    {AGENCY_ID} (own levels: settled / take care / experienced only / stay out)")

    workers = get_settings().table_workers or None
    with executor_for(workers, None) as executor:
        report = build_tables(url, spot_ids, executor=executor, progress=ProgressBar(err))
    _say(out, f"  tables    {len(report.built)} built, {report.skipped} up to date ({report.seconds:.1f} s)")
    for f in report.failed:
        _say(out, f"  table failed: {f['spot']} / {f['point']}: {f['reason']}")

    feed = write_feed(base / "feed", now=now)
    server = _start_feed(base / "feed", feed_port)
    try:
        _say(out, f"  feed      {server.url} (synthetic buoy {feed.observations} spectra, model {feed.forecast_steps} steps)")
        gauge_n = write_gauge(base / "feed", now=now)
        profiles_paths = [*write_source_profiles(base / "sources", base_url=server.url),
                          write_gauge_profile(base / "sources", base_url=server.url)]  # fmt: skip
        for path in profiles_paths:
            with session_scope(url) as session:
                add_source(session, load_source_toml(path))
        source_ids = [p.stem for p in sorted((base / "sources").glob("*.toml"))]
        for sid in source_ids:
            o = fetch_source(url, sid)
            r = o.report
            detail = o.error or (
                "not modified since the last poll" if o.status == "not_modified"
                else f"{r.stored} new, {r.replaced} corrected, {r.unchanged} unchanged, {r.rejected} rejected" if r else o.status
            )
            _say(out, f"  polled    {sid}: {detail}")
        simulate_polled_history(url, [s for s in source_ids if s != GAUGE_ID])
        _say(out, f"  gauge     {GAUGE_ID}: {gauge_n} nearshore spectra at {GAUGE_SPOT_ID} (verification only)")

        _say(out)
        _say(out, f"Outlooks from {now:%Y-%m-%d %H:%M} UTC, every {PRINT_EVERY_H} h for {OUTLOOK_HOURS} h "
                  f"(breaker heights: typical = significant, sets = highest tenth, max = largest in an hour)")
        with session_scope(url) as session:
            for sid in spot_ids:
                body = get_outlook(session, sid, hours=OUTLOOK_HOURS, start=now, agency_id=AGENCY_ID)
                window = window_body(session, sid)
                _say(out)
                _say(out, f"{body.name} ({sid}), faces {window['faces_deg']:g}°, break points: {', '.join(body.break_points)}")
                if body.steps:
                    for line in _outlook_lines(body):
                        _say(out, line)
                else:
                    _say(out, "  no steps: no offshore spectra cover this window")
                for note in body.notes:
                    _say(out, f"  note: {note}")
                _say(out, "  swell window (offshore directions that reach the break):")
                for line in _window_lines(window):
                    _say(out, line)
        _say(out)
        for line in _verification_lines(url):
            _say(out, line)
        _say(out)
        for c in DEMO_CAUTIONS:
            _say(out, f"! {c}")
        _say(out, f"(demo ready in {time.perf_counter() - t_start:.1f} s)")
        if not serve:
            return 0
        return _serve(port, spot_ids, out, on_serving)
    finally:
        server.stop()


def _serve(port: int, spot_ids: list[str], out: TextIO, on_serving: Callable[[], None] | None) -> int:
    import uvicorn

    from app.api.main import create_app

    api = f"http://127.0.0.1:{port}"
    spot = spot_ids[-1] if spot_ids else "SPOT"
    _say(out)
    _say(out, f"API on {api} with the scheduler polling the feed (Ctrl-C stops). Try:")
    for path in ("/v1/spots", f"/v1/spots/{spot}/outlook?hours=24", f"/v1/agencies/{AGENCY_ID}/hazards",
                 f"/v1/agencies/{AGENCY_ID}/alerts.atom"):
        _say(out, f"  curl -s '{api}{path}'")
    for path in (f"/v1/spots/{spot_ids[2] if len(spot_ids) > 2 else spot}/window.svg", f"/v1/spots/{spot}/outlook.svg"):
        _say(out, f"  curl -s -o {path.rsplit('/', 1)[-1]} '{api}{path}'")
    _say(out, f"Pages in a browser: {api}/ (spots)   {api}/agencies/{AGENCY_ID} (lifeguard board)   "
              f"{api}/spots/{spot} (outlook)   {api}/sources (feed health)")
    _say(out, "Plots in a browser:")
    for sid in spot_ids:
        _say(out, f"  {api}/v1/spots/{sid}/window.svg   {api}/v1/spots/{sid}/outlook.svg")
    server = uvicorn.Server(uvicorn.Config(create_app(), host="127.0.0.1", port=port, log_level="warning"))
    if on_serving is not None:
        on_serving()
    server.run()  # returns after Ctrl-C / SIGTERM (uvicorn's own handlers); lifespan stops the scheduler
    _say(out, "stopped")
    return 0
