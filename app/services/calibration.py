"""A spot's breaker-height calibration factor: stored, versioned, applied to outlook steps.

`shoalcast verify --apply` (or the API) stores the factor of a verification as a new version, with
who stored it, when, and the scores it came from; the previous version is marked superseded. While
a version is active every outlook step of the spot carries `calibrated: true`, the factor and the
raw (uncalibrated) heights; the hazard level is taken on the calibrated heights. Removing it
restores the raw outlook. The active version is part of the outlook cache key.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import replace
from datetime import UTC
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from app.db.tables import Calibration, utcnow
from app.errors import BadInput, NotFound
from app.schemas.outlooks import Step
from app.services.outlook_steps import build_steps
from models.hazard import HazardPolicy
from models.offshore import OffshoreBatch
from models.surf import PointSetup, SpotArrays

__all__ = [
    "MAX_FACTOR",
    "MIN_FACTOR",
    "active_calibration",
    "apply_factor",
    "calibration_body",
    "calibration_key",
    "history",
    "remove_calibration",
    "steps_with_calibration",
]

# A factor outside this range says the table or the observations are wrong, not that the heights
# need scaling (common practice: regional calibrations of wave models stay within about ±50 %).
MIN_FACTOR, MAX_FACTOR = 0.25, 4.0


def active_calibration(session: Session, spot_id: str) -> Calibration | None:
    return session.scalars(
        select(Calibration)
        .where(Calibration.spot_id == spot_id, Calibration.removed_at.is_(None))
        .order_by(Calibration.version.desc())
    ).first()


def history(session: Session, spot_id: str) -> list[Calibration]:
    return list(
        session.scalars(select(Calibration).where(Calibration.spot_id == spot_id).order_by(Calibration.version))
    )


def apply_factor(
    session: Session,
    spot_id: str,
    factor: float,
    *,
    stderr: float | None,
    who: str,
    metrics: dict[str, Any],
    verification_id: int | None = None,
) -> Calibration:
    """Store `factor` as the spot's new active version (the previous one is superseded)."""
    from app.services.spots import get_spot

    get_spot(session, spot_id)
    if not (isinstance(factor, int | float) and math.isfinite(factor) and MIN_FACTOR <= factor <= MAX_FACTOR):
        raise BadInput(
            f"calibration factor {factor!r} is outside {MIN_FACTOR}..{MAX_FACTOR}: check the observations and the "
            "spot's bathymetry before scaling its heights",
            field="calibration_factor",
        )
    now = utcnow()
    rows = history(session, spot_id)
    for old in rows:
        if old.removed_at is None:
            old.removed_at, old.removed_by = now, f"superseded by version {len(rows) + 1}"
    row = Calibration(
        spot_id=spot_id, version=(max((r.version for r in rows), default=0) + 1), factor=float(factor),
        factor_stderr=None if stderr is None or not math.isfinite(stderr) else float(stderr), created_by=who[:100],
        created_at=now, metrics=metrics, verification_id=verification_id,
    )  # fmt: skip
    session.add(row)
    session.flush()
    return row


def remove_calibration(session: Session, spot_id: str, *, who: str) -> Calibration:
    """Remove the active version (kept in the history); NotFound when there is none."""
    row = active_calibration(session, spot_id)
    if row is None:
        raise NotFound(f"spot {spot_id!r} has no active calibration")
    row.removed_at, row.removed_by = utcnow(), who[:100]
    session.flush()
    return row


def _z(t: Any) -> str | None:
    return None if t is None else t.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def calibration_body(row: Calibration) -> dict[str, Any]:
    """As JSON (times RFC 3339 Z)."""
    return {
        "spot_id": row.spot_id, "version": row.version, "factor": row.factor, "factor_stderr": row.factor_stderr,
        "created_by": row.created_by, "created_at": _z(row.created_at), "removed_by": row.removed_by,
        "removed_at": _z(row.removed_at), "active": row.removed_at is None, "verification_id": row.verification_id,
        "metrics": row.metrics,
    }  # fmt: skip


def calibration_key(row: Calibration | None) -> list[Any] | None:
    """The part of an outlook's cache key that says which factor it carries."""
    return None if row is None else [row.id, row.version, row.factor]


def steps_with_calibration(
    batch: OffshoreBatch,
    points: Sequence[PointSetup],
    arr: SpotArrays,
    policy: HazardPolicy,
    units: str,
    row: Calibration | None,
) -> list[Step]:
    """`build_steps`, and with an active factor c: heights (and hazard) on c × the raw heights,
    the raw heights beside them."""
    raw = build_steps(batch, points, arr, policy, units)
    if row is None:
        return raw
    c = float(row.factor)
    scaled = replace(arr, hb=arr.hb * c, kg=arr.kg * c)
    out = build_steps(batch, points, scaled, policy, units)
    for s, r in zip(out, raw, strict=True):
        s.calibrated = True
        s.calibration_factor = round(c, 3)
        s.raw_breaker_height_m = r.breaker_height_m
        s.raw_breaker_height_ft = r.breaker_height_ft
    return out
