"""CAP alert lifecycle per agency and watched spot, from the agency's hazard summary.

- A spot whose highest level in the horizon is at or above the agency's `alert_level` gets an Alert.
- When that level or its onset changes, an Update referencing every earlier message of the chain;
  likewise when the shore-break expected (or its first step) changes, or the highest rip-current
  likelihood ahead moves by `RIP_UPDATE_STEP` or more from the last message's (or appears or goes).
- When it drops below, a Cancel referencing them; the chain is then closed.
Messages are stored in the Alert table (the CAP XML as sent), so the feed and /v1/alerts serve
exactly what was issued. Identifiers have no spaces or commas; the area is a circle around the spot
(CAP `lat,lon radius_km`).
"""

from __future__ import annotations

import uuid
import xml.etree.ElementTree as ET
from collections.abc import Sequence
from datetime import UTC, datetime, timedelta
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from app.cautions import RIP_CAUTION
from app.db.tables import Agency, Alert, Spot, utcnow
from app.formats.cap import CAP_NS, AlertSpec, CapReference, build_cap

__all__ = ["AREA_RADIUS_KM", "EVENT", "RIP_UPDATE_STEP", "alert_spec_of", "current_alerts", "feed_alerts", "sync_alerts"]

AREA_RADIUS_KM = 2.0
# a change of the rip likelihood this large re-issues the alert; smaller drifts from one refresh to
# the next would flood recipients with Updates that say nothing new (our choice, not a standard)
RIP_UPDATE_STEP = 0.1
EVENT = "Hazardous surf"
SEVERITY = {1: "Minor", 2: "Moderate", 3: "Severe"}


def _ident(agency_id: str, spot_id: str, sent: datetime) -> str:
    return f"{agency_id}.{spot_id}.{sent.strftime('%Y%m%dT%H%M%SZ')}.{uuid.uuid4().hex[:8]}"


def _onset_of(alert: Alert) -> datetime | None:
    try:
        root = ET.fromstring(alert.xml)
    except ET.ParseError:
        return None
    el = root.find(f"{{{CAP_NS}}}info/{{{CAP_NS}}}onset")
    if el is None or not el.text:
        return None
    return datetime.fromisoformat(el.text.replace("-00:00", "+00:00"))


def _params_of(alert: Alert) -> dict[str, str]:
    """The `parameter` name/value pairs of a stored message ({} if it cannot be read)."""
    try:
        root = ET.fromstring(alert.xml)
    except ET.ParseError:
        return {}
    out = {}
    for p in root.iterfind(f"{{{CAP_NS}}}info/{{{CAP_NS}}}parameter"):
        name, value = p.find(f"{{{CAP_NS}}}valueName"), p.find(f"{{{CAP_NS}}}value")
        if name is not None and name.text:
            out[name.text] = (value.text or "") if value is not None else ""
    return out


def _utc_z(t: datetime) -> str:
    return t.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def _nearshore_changed(latest: Alert, rip: float | None, shore_break_onset: datetime | None, now: datetime) -> bool:
    """Whether the rip likelihood or the shore-break differ enough from `latest`'s to re-issue. A
    shore-break onset already reached counts as "under way" on both sides, so an ongoing one (whose
    first step moves with the current hour) is not re-issued every hour."""
    params = _params_of(latest)
    raw_sb = params.get("shoalcast_shore_break_onset")
    try:
        sb_then = datetime.fromisoformat(raw_sb.replace("Z", "+00:00")) if raw_sb else None
    except ValueError:
        sb_then = None

    def state(t: datetime | None) -> str | None:
        return None if t is None else ("under way" if t <= now else _utc_z(t))

    if state(sb_then) != state(shore_break_onset):
        return True
    raw = params.get("shoalcast_rip_current_likelihood")
    try:
        rip_then = None if raw is None else float(raw)
    except ValueError:
        rip_then = None
    if (rip_then is None) != (rip is None):
        return True
    # rounded as the message prints it, so a message is compared with what it said
    return rip is not None and abs(round(rip, 2) - rip_then) >= RIP_UPDATE_STEP - 1e-9


def _latest(session: Session, agency_id: str, spot_id: str) -> Alert | None:
    return session.scalars(
        select(Alert).where(Alert.agency_id == agency_id, Alert.spot_id == spot_id, Alert.active.is_(True))
        .order_by(Alert.sent.desc())
    ).first()


def _chain(session: Session, latest: Alert) -> list[Alert]:
    ids = [*latest.references, latest.id]
    rows = {a.id: a for a in session.scalars(select(Alert).where(Alert.id.in_(ids)))}
    return [rows[i] for i in ids if i in rows]


def _text(h: Any, key: str) -> Any:
    return h.get(key) if isinstance(h, dict) else getattr(h, key, None)


def alert_spec_of(
    *, identifier: str, sender: str, sent: datetime, msg_type: str, agency: Agency, spot: Spot, level: int,
    label: str, onset: datetime | None, expires: datetime, references: Sequence[Alert] = (), web: str | None = None,
    rip: float | None = None, shore_break_onset: datetime | None = None,
) -> AlertSpec:
    cancel = msg_type == "Cancel"
    params = {"shoalcast_level": str(level), "shoalcast_spot": spot.id}
    extra = ""
    if rip is not None:
        params["shoalcast_rip_current_likelihood"] = f"{rip:.2f}"
        params["shoalcast_rip_current_model"] = "Dusek & Seim (2013) logistic form; provisional coefficients, not the paper's"
        extra += f" Rip-current likelihood up to {rip:.0%}. {RIP_CAUTION}"
    params["shoalcast_shore_break"] = "true" if shore_break_onset is not None else "false"
    if shore_break_onset is not None:
        params["shoalcast_shore_break_onset"] = _utc_z(shore_break_onset)
        extra += " Shore-break (breakers plunging on a steep beach near high water) expected."
    urgent = onset is None or onset <= sent + timedelta(hours=1)
    return AlertSpec(
        identifier=identifier,
        sender=sender,
        sent=sent,
        msg_type=msg_type,
        references=tuple(CapReference(sender=sender, identifier=a.id, sent=a.sent) for a in references),
        event=EVENT,
        categories=("Met", "Safety"),
        response_types=("AllClear",) if cancel else ("Avoid", "Monitor"),
        urgency="Past" if cancel else ("Immediate" if urgent else "Expected"),
        severity="Minor" if cancel else SEVERITY.get(level, "Moderate"),
        certainty="Likely",
        onset=None if cancel else onset,
        expires=expires,
        sender_name=agency.name,
        headline=(f"{EVENT} at {spot.name} has eased below {agency.name}'s alert level" if cancel
                  else f"{EVENT} at {spot.name}: {label} (level {level})"),
        description=(f"Forecast surf at {spot.name} is below level {agency.alert_level}." if cancel
                     else f"Forecast surf at {spot.name} reaches {agency.name} level {level} ({label}).{extra}"),
        instruction="Check the beach flags and ask lifeguards before entering the water.",
        area_desc=spot.name,
        circle=(round(spot.latitude, 6), round(spot.longitude, 6), AREA_RADIUS_KM),
        parameters=params,
        web=web,
    )


def sync_alerts(
    session: Session, agency_id: str, spots: Sequence[Any], *, sender: str, base_url: str = "",
    now: datetime | None = None, horizon_hours: float = 24.0,
) -> list[Alert]:
    """Issue the Alert/Update/Cancel messages the hazard summary `spots` (SpotHazard or dicts with
    spot_id, max_level, max_label, onset, valid_until, and optionally max_rip_current_likelihood and
    shore_break_onset) calls for; returns the new messages."""
    agency = session.get(Agency, agency_id)
    if agency is None:
        return []
    now = (now or utcnow()).astimezone(UTC).replace(microsecond=0)
    issued: list[Alert] = []
    for h in spots:
        spot = session.get(Spot, _text(h, "spot_id"))
        if spot is None:
            continue
        level = _text(h, "max_level")
        onset = _text(h, "onset")
        latest = _latest(session, agency_id, spot.id)
        is_open = latest is not None and latest.msg_type in ("Alert", "Update")
        above = level is not None and level >= agency.alert_level
        rip, sb_onset = _text(h, "max_rip_current_likelihood"), _text(h, "shore_break_onset")
        if above:
            if (is_open and latest.level == level
                    and _onset_of(latest) == (onset.replace(microsecond=0) if onset else None)
                    and not _nearshore_changed(latest, rip, sb_onset, now)):  # fmt: skip
                continue
            msg_type = "Update" if is_open else "Alert"
            chain = _chain(session, latest) if is_open else []
        elif is_open:
            msg_type, chain = "Cancel", _chain(session, latest)
        else:
            continue
        expires = _text(h, "valid_until") or now + timedelta(hours=horizon_hours)
        if expires <= now:
            expires = now + timedelta(hours=1)
        identifier = _ident(agency_id, spot.id, now)
        spec = alert_spec_of(
            identifier=identifier, sender=sender, sent=now, msg_type=msg_type, agency=agency, spot=spot,
            level=int(level if level is not None else 0), label=str(_text(h, "max_label") or ""),
            onset=onset, expires=expires, references=chain,
            web=f"{base_url.rstrip('/')}/v1/alerts/{identifier}" if base_url else None,
            rip=rip, shore_break_onset=sb_onset,
        )
        xml = build_cap(spec).decode("utf-8")
        if latest is not None:
            latest.active = False
        row = Alert(id=identifier, agency_id=agency_id, spot_id=spot.id, msg_type=msg_type,
                    level=int(level if level is not None else 0), sent=now, expires=expires,
                    references=[a.id for a in chain], active=True, xml=xml)
        session.add(row)
        issued.append(row)
    session.flush()
    return issued


def current_alerts(session: Session, agency_id: str) -> list[Alert]:
    """The newest message of each spot's chain (Alert/Update in force, or the Cancel that closed it)."""
    return list(session.scalars(
        select(Alert).where(Alert.agency_id == agency_id, Alert.active.is_(True)).order_by(Alert.sent.desc(), Alert.id)
    ))


def feed_alerts(session: Session, agency_id: str) -> list[Alert]:
    return current_alerts(session, agency_id)


def parse_spec_fields(alert: Alert) -> dict[str, Any]:
    """Event, severity and area of a stored alert (for the Atom entry)."""
    root = ET.fromstring(alert.xml)
    info = root.find(f"{{{CAP_NS}}}info")

    def t(path: str) -> str | None:
        el = info.find(f"{{{CAP_NS}}}{path}") if info is not None else None
        return el.text if el is not None else None

    return {"event": t("event"), "severity": t("severity"), "area_desc": t("area/" + f"{{{CAP_NS}}}areaDesc"),
            "headline": t("headline")}
