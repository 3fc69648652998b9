"""Spot outlooks (the `shoalcast outlook --json` shape) and the outlook chart as SVG.

The ETag is the data version: the spot and its tables, the newest input from each of its sources,
the agency's policies, the options and (without `from`) the current hour the outlook starts at.
"""

from __future__ import annotations

import hashlib
from datetime import UTC, datetime
from typing import Annotated, Any, Literal

import sqlalchemy as sa
from fastapi import APIRouter, Query, Request
from starlette.responses import Response

from app.api.deps import SessionDep, SettingsDep, cache_control, conditional, json_response
from app.api.http import etag_for
from app.api.routes._common import READ, problems
from app.api.routes.spots import spots_version
from app.db.tables import Agency, Calibration, HazardPolicy, Observation, Spot
from app.errors import BadInput, NotFound, ShoalcastError
from app.schemas.outlooks import OutlookBody
from app.services import spots as spot_service

router = APIRouter(tags=["outlooks"])
SERIALIZER = "outlook-api-1"
SVG_MEDIA_TYPE = "image/svg+xml"


class ServiceUnavailable(ShoalcastError):
    status = 503
    title = "Service unavailable"


def outlook_version(session: Any, spot: Spot, agency_id: str | None) -> str:
    h = hashlib.sha256(spots_version(session, spot.id).encode())
    for source_id in sorted(spot.sources):
        row = session.execute(
            sa.select(sa.func.count(), sa.func.max(Observation.ingested_at), sa.func.max(Observation.time))
            .where(Observation.source_id == source_id)
        ).one()
        h.update(repr((source_id, tuple(row))).encode())
    h.update(repr(session.execute(  # a calibration applied or removed changes the heights
        sa.select(sa.func.count(), sa.func.max(Calibration.id), sa.func.max(Calibration.removed_at))
        .where(Calibration.spot_id == spot.id)).one()).encode())
    if agency_id is not None:
        h.update(repr(session.execute(sa.select(Agency.updated_at).where(Agency.id == agency_id)).one_or_none()).encode())
        for row in session.execute(sa.select(HazardPolicy.spot_key, HazardPolicy.updated_at).where(
                HazardPolicy.agency_id == agency_id).order_by(HazardPolicy.spot_key)):
            h.update(repr(tuple(row)).encode())
    return h.hexdigest()


def _parse_from(value: str | None) -> datetime | None:
    if value is None:
        return None
    try:
        t = datetime.fromisoformat(value.strip())
    except ValueError as exc:
        raise BadInput(f"query parameter `from`: not an RFC 3339 time: {value!r}", field="from") from exc
    if t.tzinfo is None:
        raise BadInput(f"query parameter `from`: needs a UTC offset or Z: {value!r}", field="from")
    return t.astimezone(UTC)


def _outlook(session: Any, spot_id: str, *, hours: int, start: datetime | None, units: str, agency_id: str | None) -> Any:
    try:
        from app.services.outlooks import get_outlook  # type: ignore[attr-defined]
    except ImportError as exc:
        raise ServiceUnavailable("outlooks are not available in this build (app.services.outlooks.get_outlook)") from exc
    body = get_outlook(session, spot_id, hours=hours, start=start, units=units, agency_id=agency_id)
    return body if isinstance(body, OutlookBody) else OutlookBody.model_validate(body)


Hours = Annotated[int, Query(ge=1, le=240, description="length of the outlook [h]")]
UnitsQ = Annotated[Literal["metric", "imperial"], Query(description="metric (m, default) or imperial (ft)")]
# RFC 3339 date-time with an offset, spelled out so the schema says what the parser takes
FROM_PATTERN = (r"^(19|20)[0-9]{2}-(0[1-9]|1[0-2])-(0[1-9]|[12][0-9]|3[01])T([01][0-9]|2[0-3]):[0-5][0-9]"
                r"(:[0-5][0-9](\.[0-9]{1,6})?)?(Z|[+-]([01][0-9]|2[0-3]):[0-5][0-9])$")
FromQ = Annotated[str | None, Query(alias="from", description="RFC 3339 start time with Z or an offset; default the current hour",
                                    examples=["2026-03-24T10:00:00Z"], max_length=40, pattern=FROM_PATTERN)]
AgencyQ = Annotated[str | None, Query(description="use this agency's hazard policy", max_length=64,
                                      pattern=r"^[a-z0-9][a-z0-9-]*$")]


def _prepare(session: Any, spot_id: str, agency: str | None, frm: str | None) -> tuple[Spot, datetime | None, str]:
    spot = spot_service.get_spot(session, spot_id)
    if agency is not None and session.get(Agency, agency) is None:
        raise NotFound(f"no agency with id {agency!r}")
    start = _parse_from(frm)
    now_hour = datetime.now(UTC).replace(minute=0, second=0, microsecond=0)
    version = outlook_version(session, spot, agency)
    return spot, start, etag_for(version, start or now_hour)


@router.get(
    "/spots/{spot_id}/outlook",
    summary="The spot's outlook: breaker heights (typical, sets, largest), swell trains, peel and hazard per step",
    response_model=OutlookBody,
    responses=problems(*READ, 409, 503),
)
def get_outlook(
    spot_id: str, request: Request, session: SessionDep, settings: SettingsDep,
    hours: Hours = 72, units: UnitsQ = "metric", frm: FromQ = None, agency: AgencyQ = None,
) -> Response:
    spot, start, version = _prepare(session, spot_id, agency, frm)
    etag = etag_for(SERIALIZER, "json", version, hours, units, agency)

    def build() -> Response:
        body = _outlook(session, spot.id, hours=hours, start=start, units=units, agency_id=agency)
        return json_response(body)

    return conditional(request, etag, build, cache=cache_control(settings))


@router.get(
    "/spots/{spot_id}/outlook.svg",
    summary="The outlook as an SVG chart (breaker heights over time with sets and largest, swell trains)",
    response_class=Response,
    responses={200: {"content": {SVG_MEDIA_TYPE: {"schema": {"type": "string"}}}, "description": "SVG image"},
               **problems(*READ, 409, 503)},
)
def get_outlook_svg(
    spot_id: str, request: Request, session: SessionDep, settings: SettingsDep,
    hours: Hours = 72, units: UnitsQ = "metric", frm: FromQ = None, agency: AgencyQ = None,
) -> Response:
    spot, start, version = _prepare(session, spot_id, agency, frm)
    etag = etag_for(SERIALIZER, "svg", version, hours, units, agency)

    def build() -> Response:
        from app.formats.svg_outlook import outlook_svg

        body = _outlook(session, spot.id, hours=hours, start=start, units=units, agency_id=agency)
        steps = body.model_dump(mode="json")["steps"]
        return Response(outlook_svg(steps, units=units, spot_name=spot.name), media_type=SVG_MEDIA_TYPE)

    return conditional(request, etag, build, cache=cache_control(settings))


__all__ = ["ServiceUnavailable", "outlook_version", "router"]
