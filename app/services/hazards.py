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
from datetime import datetime, timedelta

from sqlalchemy.orm import Session

from app.config import get_settings
from app.db import version as data_version
from app.db.tables import Agency, Spot, utcnow
from app.errors import BadInput, Conflict, NotFound
from app.schemas.outlooks import AgencyHazards, SpotHazard
from app.services import outlooks
from app.services.memo import VersionMemo
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
    """A short string that changes whenever an input of the agency's hazards may have changed (for
    ETags and the memo): see `hazard_tag`. NotFound when there is no such agency."""
    if session.get(Agency, agency_id) is None:
        raise NotFound(f"no agency with id {agency_id!r}")
    return hazard_tag(data_version.current(session), agency_id, now=now)


def hazard_tag(version: int, agency_id: str, *, now: datetime | None = None) -> str:
    """`hazard_version` from a data version already read (app.db.version: bumped by every change of
    spots, tables, sources, observations, agencies and policies): with the agency, the outlook
    engine version, the settings the summary uses and the current hour (the horizon moves with it)."""
    settings = get_settings()
    now = utcnow() if now is None else now
    parts = (outlooks.OUTLOOK_VERSION, version, _now_hour(now).isoformat(), agency_id,
             settings.hazard_horizon_hours, settings.outlook_hours, settings.refresh_seconds)  # fmt: skip
    return hashlib.sha256(repr(parts).encode()).hexdigest()[:20]


_memo: VersionMemo[AgencyHazards] = VersionMemo(256)
_json_memo: VersionMemo[bytes] = VersionMemo(256)


def agency_hazards_at(session: Session, agency_id: str, version: str) -> AgencyHazards:
    """`agency_hazards` memoised per data version (`hazard_version`): hundreds of pollers between two
    ingests share one computation per process (the outlooks behind it are computed once for all
    processes, app.services.outlook_cache)."""
    return _memo.get_or_make((agency_id, version), lambda: agency_hazards(session, agency_id))


def cached_json(agency_id: str, version: str) -> bytes | None:
    """The bytes `agency_hazards_json` made for this version, if this process made them."""
    return _json_memo.get((agency_id, version))


def agency_hazards_json(session: Session, agency_id: str, version: str) -> bytes:
    """The JSON bytes of `agency_hazards_at`, serialised once per data version."""
    return _json_memo.get_or_make(
        (agency_id, version), lambda: agency_hazards_at(session, agency_id, version).model_dump_json().encode()
    )


__all__ = ["agency_hazards", "agency_hazards_at", "agency_hazards_json", "cached_json", "hazard_tag", "hazard_version"]
