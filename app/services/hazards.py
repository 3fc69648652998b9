"""Agency hazard summaries from cached outlooks: small, cheap to poll, with an ETag version.

Per spot of the agency: the level now, the highest level in the horizon and when it starts
(`models.hazard.hazard_summary`), the rip-current likelihood now and its highest in the horizon,
the shore-break flag now and its first step ahead; valid until the last step or the next refresh,
whichever is first.
"""

from __future__ import annotations

import bisect
import hashlib
import logging
import threading
from datetime import datetime, timedelta

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from app.config import get_settings
from app.db.tables import Agency, HazardPolicy, Observation, Spot, TransferTableRow, utcnow
from app.errors import BadInput, Conflict, NotFound
from app.schemas.outlooks import AgencyHazards, SpotHazard
from app.services import outlooks
from models.hazard import hazard_summary

log = logging.getLogger(__name__)


def _now_hour(now: datetime) -> datetime:
    return now.replace(minute=0, second=0, microsecond=0)


def agency_hazards(
    session: Session, agency_id: str, *, horizon_hours: float | None = None, now: datetime | None = None
) -> AgencyHazards:
    """Hazard level per spot of `agency_id`, from cached outlooks (computed when missing or stale)."""
    from app.services.agencies import get_agency

    settings = get_settings()
    agency = get_agency(session, agency_id)
    horizon = float(settings.hazard_horizon_hours if horizon_hours is None else horizon_hours)
    if not horizon >= 0:
        raise BadInput(f"`horizon_hours` must be >= 0, got {horizon_hours!r}", field="horizon_hours")
    now = utcnow() if now is None else now
    hours = max(int(settings.outlook_hours), int(horizon) + 1)
    refresh = timedelta(seconds=settings.refresh_seconds)
    spots = []
    for spot_id in agency.spots:
        spot = session.get(Spot, spot_id)
        name = spot.name if spot is not None else spot_id
        try:
            body = outlooks.get_outlook(
                session, spot_id, hours=hours, start=_now_hour(now), agency_id=agency_id
            )
        except (NotFound, Conflict, BadInput) as exc:
            spots.append(_empty(spot_id, name, str(getattr(exc, "detail", exc))))
            continue
        if not body.steps:
            spots.append(_empty(spot_id, name, "no offshore spectra cover the horizon", body.cautions))
            continue
        times = [s.time for s in body.steps]
        s = hazard_summary(times, [st.hazard.level for st in body.steps], horizon_hours=horizon, now=now)
        label = body.steps[s.onset_index].hazard.label
        i_cur = max(bisect.bisect_right(times, now) - 1, 0)  # as hazard_summary picks the current step
        cur = body.steps[i_cur].hazard
        ahead = [st.hazard for st in body.steps if now <= st.time <= now + timedelta(hours=horizon)] + [cur]
        rips = [h.rip_current_likelihood for h in ahead if h.rip_current_likelihood is not None]
        sb_times = [st.time for st in body.steps[i_cur:] if st.hazard.shore_break and st.time <= now + timedelta(hours=horizon)]
        spots.append(
            SpotHazard(
                spot_id=spot_id,
                name=name,
                level=s.current_level,
                label=body.steps[i_cur].hazard.label,
                max_level=s.max_level,
                max_label=label,
                onset=s.onset_time,
                valid_until=min(times[-1], body.computed_at + refresh),
                policy=body.policy,
                policy_is_default=body.policy_is_default,
                rip_current_likelihood=cur.rip_current_likelihood,
                max_rip_current_likelihood=max(rips) if rips else None,
                shore_break=cur.shore_break,
                shore_break_onset=sb_times[0] if sb_times else None,
                cautions=body.cautions,
            )
        )
    return AgencyHazards(
        agency_id=agency.id,
        name=agency.name,
        computed_at=now,
        horizon_hours=horizon,
        version=hazard_version(session, agency_id, now=now),
        cautions=list(outlooks.CAUTIONS),
        spots=spots,
    )


def _empty(spot_id: str, name: str, note: str, cautions: list[str] | None = None) -> SpotHazard:
    return SpotHazard(
        spot_id=spot_id, name=name, level=None, label=None, max_level=None, max_label=None, onset=None,
        valid_until=None, note=note, cautions=cautions or list(outlooks.CAUTIONS),
    )  # fmt: skip


def hazard_version(session: Session, agency_id: str, *, now: datetime | None = None) -> str:
    """A short string that changes whenever an input of the agency's hazards changes (for ETags):
    the agency and its policies, its spots (profile, tables), the newest observations of their
    sources, the outlook engine version and the current hour (the horizon moves with it)."""
    agency = session.get(Agency, agency_id)
    if agency is None:
        raise NotFound(f"no agency with id {agency_id!r}")
    now = utcnow() if now is None else now
    parts: list[str] = [
        outlooks.OUTLOOK_VERSION,
        _now_hour(now).isoformat(),
        agency.id,
        agency.updated_at.isoformat(),
    ]
    parts += sorted(agency.spots)
    for row in session.execute(
        select(HazardPolicy.spot_key, HazardPolicy.updated_at).where(HazardPolicy.agency_id == agency_id)
    ):
        parts.append(f"p:{row[0]}:{row[1].isoformat()}")
    sources: set[str] = set()
    for spot in session.scalars(select(Spot).where(Spot.id.in_(agency.spots))):
        parts.append(f"s:{spot.id}:{spot.profile_sha256}:{spot.updated_at.isoformat()}")
        sources.update(spot.sources or [])
    for row in session.execute(
        select(TransferTableRow.spot_id, TransferTableRow.id, TransferTableRow.input_hash).where(
            TransferTableRow.spot_id.in_(agency.spots)
        )
    ):
        parts.append(f"t:{row[0]}:{row[1]}:{row[2]}")
    if sources:
        for row in session.execute(
            select(
                Observation.source_id,
                func.count(),
                func.max(Observation.id),
                func.max(Observation.ingested_at),
            )
            .where(Observation.source_id.in_(sorted(sources)))
            .group_by(Observation.source_id)
        ):
            parts.append(f"o:{row[0]}:{row[1]}:{row[2]}:{row[3]}")
    return hashlib.sha256("\n".join(sorted(parts)).encode()).hexdigest()[:20]


_memo: dict[tuple[str, str], AgencyHazards] = {}
_memo_lock = threading.Lock()
_MEMO_SIZE = 256


def agency_hazards_at(session: Session, agency_id: str, version: str) -> AgencyHazards:
    """`agency_hazards` memoised per data version (`hazard_version`): hundreds of pollers between two
    ingests share one computation per process."""
    key = (agency_id, version)
    with _memo_lock:
        hit = _memo.get(key)
    if hit is not None:
        return hit
    body = agency_hazards(session, agency_id)
    with _memo_lock:
        if len(_memo) >= _MEMO_SIZE:
            _memo.clear()
        _memo[key] = body
    return body


__all__ = ["agency_hazards", "agency_hazards_at", "hazard_version"]
