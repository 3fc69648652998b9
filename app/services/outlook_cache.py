"""Cached outlooks: one stored body per (spot, options), reused while its inputs are unchanged.

`outlook_key` hashes exactly an outlook's inputs; a stored row with that key is answered as it
is. Single flight: when many requests find the same outlook out of date at once (pollers right
after an ingest), one computes it and the others answer with the previous outlook meanwhile
rather than all computing the same thing (only a first-ever outlook makes them wait). The flight
is single across processes too: on PostgreSQL the one computing also holds a transaction-level
advisory lock of the (spot, variant), so with `serve --workers N` a new ingest is computed once,
not once per process (the others answer the previous outlook, or wait for a first one and read it).
"""

from __future__ import annotations

import hashlib
import json
import logging
import threading
from datetime import timedelta
from typing import Any

from sqlalchemy import select, text
from sqlalchemy.orm import Session

from app.db.tables import OutlookCache, Source, utcnow
from app.errors import BadInput, Conflict, NotFound
from app.schemas.outlooks import OutlookBody
from app.schemas.outlooks import OutlookOptions as OptionsBody
from app.services import outlook_inputs as inputs
from app.services.calibration import active_calibration, calibration_key
from app.services.conditions import condition_key
from app.services.outlook_compute import OUTLOOK_VERSION, compute_outlook
from app.services.outlook_inputs import OutlookOptions

log = logging.getLogger(__name__)


def outlook_key(session: Session, spot_id: str, options: OutlookOptions | None = None, **fields: Any) -> str:
    """Hash of exactly an outlook's inputs: spot profile, tables (input hash + engine version),
    the observations it may use (id + content hash), the policy, the options (`OutlookOptions`,
    or its fields as keywords) and OUTLOOK_VERSION."""
    from app.services.spots import get_spot

    opts = OutlookOptions.of(options, **fields)
    spot = get_spot(session, spot_id)
    t0 = opts.first_hour(utcnow())
    end = t0 + timedelta(hours=opts.hours)
    sources = []
    for sid in spot.sources or []:
        src = session.get(Source, sid)
        sources.append([sid, None if src is None else [src.latitude, src.longitude]])
    doc = {
        "version": OUTLOOK_VERSION,
        "spot": [spot.id, spot.profile_sha256, spot.latitude, spot.longitude, spot.faces_deg],
        "points": [
            [bp.id, bp.name, bp.x, bp.y, bp.reference_depth_m,
             None if bp.table is None else [bp.table.id, bp.table.input_hash, bp.table.engine_version]]
            for bp in spot.break_points
        ],  # fmt: skip
        "bathymetry": None if spot.bathymetry is None else spot.bathymetry.sha256,
        "sources": sources,
        "observations": [[c.id, c.sha] for c in inputs.candidates(session, spot, t0, end)],
        "policy": inputs.policy_of(session, opts.agency_id, spot.id).to_mapping(),
        "options": opts.key(t0),
        "conditions": condition_key(session, spot, t0, end),
    }
    cal = active_calibration(session, spot.id)
    if cal is not None:  # only when present: uncalibrated keys stay as they were
        doc["calibration"] = calibration_key(cal)
    return hashlib.sha256(json.dumps(doc, sort_keys=True, default=str).encode()).hexdigest()


_inflight: dict[tuple[str, str], threading.Lock] = {}
_inflight_guard = threading.Lock()


def inflight_lock(spot_id: str, variant_id: str) -> threading.Lock:
    """The process-wide lock of one (spot, variant): held by whoever computes it."""
    with _inflight_guard:
        return _inflight.setdefault((spot_id, variant_id), threading.Lock())


def _advisory_key(spot_id: str, variant_id: str) -> int:
    """A signed 64-bit key for PostgreSQL's advisory locks, from the (spot, variant)."""
    digest = hashlib.sha256(f"outlook:{spot_id}:{variant_id}".encode()).digest()
    return int.from_bytes(digest[:8], "big", signed=True)


def database_lock(session: Session, spot_id: str, variant_id: str, *, wait: bool) -> bool:
    """Hold the (spot, variant) across processes until this transaction ends (PostgreSQL advisory
    lock); False when another process holds it and `wait` is off. Other databases: True (one
    process per SQLite file is the supported setup; the process-wide lock covers it)."""
    if session.get_bind().dialect.name != "postgresql":
        return True
    key = _advisory_key(spot_id, variant_id)
    if wait:
        session.execute(text("SELECT pg_advisory_xact_lock(:k)"), {"k": key})
        return True
    return bool(session.execute(text("SELECT pg_try_advisory_xact_lock(:k)"), {"k": key}).scalar())


def cached_row(session: Session, spot_id: str, variant_id: str) -> OutlookCache | None:
    return session.scalars(
        select(OutlookCache)
        .where(OutlookCache.spot_id == spot_id, OutlookCache.variant == variant_id)
        .execution_options(populate_existing=True)
    ).first()


def get_or_compute(
    session: Session, spot_id: str, options: OutlookOptions | None = None, **fields: Any
) -> tuple[OutlookBody, bool]:
    """(outlook, whether it was computed now): the stored one when its key matches, else computed
    under the single-flight lock and stored (committed before the lock is released)."""
    opts = OutlookOptions.of(options, **fields)
    key = outlook_key(session, spot_id, opts)
    v = opts.variant()
    row = cached_row(session, spot_id, v)
    if row is not None and row.input_hash == key:
        if row.stale:  # marked by ingest, but nothing it uses changed
            row.stale = False
            session.flush()
        return OutlookBody.model_validate(row.body), False
    lock = inflight_lock(spot_id, v)
    if not lock.acquire(blocking=row is None):
        assert row is not None
        return OutlookBody.model_validate(row.body), False
    try:
        if not database_lock(session, spot_id, v, wait=row is None):  # another process computes it
            assert row is not None
            return OutlookBody.model_validate(row.body), False
        row = cached_row(session, spot_id, v)
        if row is not None and row.input_hash == key:  # computed while we waited
            return OutlookBody.model_validate(row.body), False
        body = compute_outlook(session, spot_id, options=opts)
        data = body.model_dump(mode="json")
        if row is None:
            row = OutlookCache(spot_id=spot_id, variant=v)
            session.add(row)
        row.input_hash, row.stale, row.computed_at, row.body = key, False, utcnow(), data
        session.flush()
        session.commit()  # publish before releasing the locks (the advisory one goes with it), so waiters find it
        return body, True
    finally:
        lock.release()


def get_outlook(session: Session, spot_id: str, options: OutlookOptions | None = None, **fields: Any) -> OutlookBody:
    """The cached outlook when its inputs are unchanged, else computed and stored (see `outlook_key`)."""
    return get_or_compute(session, spot_id, options, **fields)[0]


def refresh_stale(session: Session) -> list[str]:
    """Bring every stale cached outlook up to date (the scheduler calls this after ingest).

    Returns the ids of the spots whose outlooks were recomputed. A spot that can no longer be
    computed (its tables were removed, say) keeps its stale row and is logged, the others go on.
    """
    done = []
    for row in list(session.scalars(select(OutlookCache).where(OutlookCache.stale.is_(True)))):
        try:
            o = OptionsBody.model_validate(row.body.get("options", {}))
            opts = OutlookOptions(o.hours, o.start, o.units, o.agency_id, o.water_level_m)
            _, computed = get_or_compute(session, row.spot_id, opts)
        except (ValueError, BadInput, NotFound, Conflict) as exc:
            log.warning("outlook of spot %s (variant %s) not refreshed: %s", row.spot_id, row.variant, exc)
            continue
        if computed:
            done.append(row.spot_id)
    return sorted(set(done))


__all__ = ["get_or_compute", "get_outlook", "outlook_key", "refresh_stale"]
