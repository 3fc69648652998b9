"""Agencies: set policies (PUT), read them, poll hazards cheaply, and the Atom index of CAP alerts.

The hazards ETag comes from `hazard_version` (the data version, app.db.version) without building
the body, so a poller's 304 costs one primary key read; the body carries the cautions and is
serialised once per data version.
"""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from starlette.responses import Response

from app.api.deps import (
    VARY,
    ApiKeyDep,
    SessionDep,
    SettingsDep,
    cache_control,
    conditional,
    fresh,
    json_response,
    read_data_version,
    request_session,
)
from app.api.http import etag_for, not_modified
from app.api.routes._common import READ, WRITE, problems
from app.api.routes.outlooks import ServiceUnavailable
from app.db.tables import Agency, HazardPolicy
from app.errors import BadInput
from app.formats.atom import ATOM_MEDIA_TYPE, FeedEntry, build_atom_feed
from app.formats.cap import CAUTION
from app.schemas.agencies import AgencyConfig, AgencyPublic
from app.schemas.outlooks import AgencyHazards
from app.services import agencies as agency_service

router = APIRouter(tags=["agencies"])


def _hazards_module() -> Any:
    try:
        from app.services import hazards  # type: ignore[attr-defined]
    except ImportError as exc:
        raise ServiceUnavailable("hazard summaries are not available in this build (app.services.hazards)") from exc
    return hazards


def _agency_version(session: Any, agency_id: str) -> tuple[Any, ...]:
    agency = agency_service.get_agency(session, agency_id)
    policies = tuple(session.execute(
        HazardPolicy.__table__.select().with_only_columns(HazardPolicy.spot_key, HazardPolicy.updated_at)
        .where(HazardPolicy.agency_id == agency_id).order_by(HazardPolicy.spot_key)).all())
    return (agency.updated_at, tuple(agency.spots), agency.alert_level, agency.name, agency.contact, policies)


@router.put("/agencies/{agency_id}", summary="Add or replace an agency: watched spots, alert level and hazard policies",
            response_model=AgencyPublic, responses=problems(*WRITE))
def put_agency(agency_id: str, config: AgencyConfig, session: SessionDep, _key: ApiKeyDep) -> Response:
    if config.id != agency_id:
        raise BadInput(f"body field `id` is {config.id!r} but the path says {agency_id!r}", field="id")
    existed = session.get(Agency, agency_id) is not None
    agency = agency_service.add_agency(session, config)
    session.commit()
    return json_response(agency_service.agency_public(session, agency), status_code=200 if existed else 201)


@router.get("/agencies/{agency_id}", summary="An agency with its watched spots and hazard policies",
            response_model=AgencyPublic, responses=problems(*READ))
def get_agency(agency_id: str, request: Request, session: SessionDep, settings: SettingsDep) -> Response:
    etag = etag_for("agency-1", _agency_version(session, agency_id))

    def build() -> Response:
        agency = agency_service.get_agency(session, agency_id)
        return json_response(agency_service.agency_public(session, agency))

    return conditional(request, etag, build, cache=cache_control(settings))


@router.get(
    "/agencies/{agency_id}/hazards",
    summary="Hazards at every watched spot: level now, highest level in the horizon, onset, valid until, cautions",
    response_model=AgencyHazards,
    responses=problems(*READ, 503),
)
def get_hazards(agency_id: str, request: Request) -> Response:
    hazards = _hazards_module()
    version = hazards.hazard_tag(read_data_version(request), agency_id)
    etag = etag_for("hazards-2", version)
    cache = cache_control(None, poll=True)  # type: ignore[arg-type]
    if fresh(request, etag):  # the pollers' path: one primary key read, nothing else
        return not_modified(etag, cache_control=cache, vary=VARY)
    body = hazards.cached_json(agency_id, version)
    if body is not None:  # made at this data version, so the agency exists (a deletion moves the version)
        return conditional(request, etag, lambda: Response(body, media_type="application/json"), cache=cache)
    with request_session(request) as session:
        agency_service.get_agency(session, agency_id)  # 404 before anything else
        return conditional(request, etag, lambda: Response(hazards.agency_hazards_json(session, agency_id, version),
                                                           media_type="application/json"), cache=cache)


@router.get(
    "/agencies/{agency_id}/alerts.atom",
    summary="Atom index of the agency's current CAP alerts (each entry links its CAP XML)",
    response_class=Response,
    responses={200: {"content": {ATOM_MEDIA_TYPE: {"schema": {"type": "string"}}}, "description": "Atom 1.0 feed"},
               **problems(*READ)},
)
def get_alerts_feed(agency_id: str, request: Request, session: SessionDep, settings: SettingsDep) -> Response:
    from app.services import alerts as alert_service

    agency = agency_service.get_agency(session, agency_id)
    try:
        hazards = _hazards_module()
    except ServiceUnavailable:
        hazards = None
    if hazards is not None:  # bring the alert chains up to date with the current hazard summary
        summary = hazards.agency_hazards(session, agency_id)
        alert_service.sync_alerts(session, agency_id, summary.spots, sender=settings.cap_sender,
                                  base_url=settings.public_base_url, horizon_hours=float(summary.horizon_hours))
        session.commit()
    rows = alert_service.feed_alerts(session, agency_id)
    etag = etag_for("atom-1", agency.id, agency.name, tuple((a.id, a.sent) for a in rows))

    def build() -> Response:
        base = settings.public_base_url.rstrip("/")
        entries = []
        for a in rows:
            f = alert_service.parse_spec_fields(a)
            title = f["headline"] or f"{f['event']}: {f['area_desc']}"
            entries.append(FeedEntry(
                id=f"urn:shoalcast:alert:{settings.cap_sender}:{a.id}",
                title=title if a.msg_type == "Alert" else f"{a.msg_type}: {title}",
                updated=a.sent, href=f"{base}/v1/alerts/{a.id}",
                summary=f"{f['severity']} {f['event']} for {f['area_desc']}. {CAUTION}",
                event=f["event"], severity=f["severity"], expires=a.expires, area_desc=f["area_desc"],
            ))
        xml = build_atom_feed(entries, feed_id=f"urn:shoalcast:feed:{agency.id}",
                              title=f"{agency.name}: surf hazard alerts",
                              self_href=f"{base}/v1/agencies/{agency.id}/alerts.atom")
        return Response(xml, media_type=ATOM_MEDIA_TYPE)

    return conditional(request, etag, build, cache="no-cache", vary="Accept-Encoding")


__all__ = ["router"]
