"""Spot outlooks (the `shoalcast outlook --json` shape) and the outlook chart as SVG.

The ETag is the data version (app.db.version, one primary key read; it moves with any change of the
spot, its tables, sources and observations, or the agency's policies), the options and (without
`from`) the current hour the outlook starts at. A matching If-None-Match is answered before
anything else is read; a 200 of a cached outlook is bytes serialised once per ETag.
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Annotated, Any, Literal

from fastapi import APIRouter, Query, Request
from starlette.responses import Response

from app.api.deps import (
    VARY,
    SettingsDep,
    cache_control,
    conditional,
    fresh,
    read_data_version,
    request_session,
)
from app.api.http import etag_for, not_modified
from app.api.routes._common import READ, problems
from app.db import version as data_version
from app.db.tables import Agency, Spot
from app.errors import BadInput, NotFound, ShoalcastError
from app.schemas.outlooks import OutlookBody
from app.services import spots as spot_service
from app.services.memo import VersionMemo
from app.services.outlook_compute import OUTLOOK_VERSION

router = APIRouter(tags=["outlooks"])
SERIALIZER = "outlook-api-1"
SVG_MEDIA_TYPE = "image/svg+xml"


class ServiceUnavailable(ShoalcastError):
    status = 503
    title = "Service unavailable"


def outlook_version(session: Any, spot: Spot | str, agency_id: str | None) -> str:
    """The data version of a spot's outlook (app.db.version: bumped by every change of the spot, its
    tables, sources, observations and the agency's policies) with the engine version: one primary
    key read, so a 304 costs next to nothing."""
    return outlook_tag(data_version.current(session), spot, agency_id)


def outlook_tag(version: int, spot: Spot | str, agency_id: str | None) -> str:
    """`outlook_version` from a data version already read."""
    return repr((OUTLOOK_VERSION, version, spot if isinstance(spot, str) else spot.id, agency_id))


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


def _tag(request: Request, spot_id: str, agency: str | None, frm: str | None, kind: str, hours: int, units: str
         ) -> tuple[datetime | None, str]:
    """The start and the ETag of a representation: the data version, the start (without `from` the
    current hour the outlook starts at) and the options."""
    start = _parse_from(frm)
    now_hour = datetime.now(UTC).replace(minute=0, second=0, microsecond=0)
    version = outlook_tag(read_data_version(request), spot_id, agency)
    return start, etag_for(SERIALIZER, kind, version, start or now_hour, hours, units, agency)


def _check(session: Any, spot_id: str, agency: str | None) -> Spot:
    spot = spot_service.get_spot(session, spot_id)
    if agency is not None and session.get(Agency, agency) is None:
        raise NotFound(f"no agency with id {agency!r}")
    return spot


# Serialised bodies per ETag (the ETag holds the data version, so an entry is never out of date):
# pollers of a cached outlook get bytes, not a re-read and re-serialised body per request.
_bodies: VersionMemo[bytes] = VersionMemo(64)


@router.get(
    "/spots/{spot_id}/outlook",
    summary="The spot's outlook: breaker heights (typical, sets, largest), swell trains, peel and hazard per step",
    response_model=OutlookBody,
    responses=problems(*READ, 409, 503),
)
def get_outlook(
    spot_id: str, request: Request, settings: SettingsDep,
    hours: Hours = 72, units: UnitsQ = "metric", frm: FromQ = None, agency: AgencyQ = None,
) -> Response:
    start, etag = _tag(request, spot_id, agency, frm, "json", hours, units)
    cache = cache_control(settings)
    if fresh(request, etag):
        return not_modified(etag, cache_control=cache, vary=VARY)
    body = _bodies.get(etag)
    if body is not None:  # made at this data version, so the spot and agency exist (a deletion moves it)
        return conditional(request, etag, lambda: Response(body, media_type="application/json"), cache=cache)
    with request_session(request) as session:
        return _answer_json(request, session, spot_id, agency, etag, cache, hours, start, units)


def _answer_json(request: Request, session: Any, spot_id: str, agency: str | None, etag: str, cache: str,
                 hours: int, start: datetime | None, units: str) -> Response:
    spot = _check(session, spot_id, agency)

    def build() -> Response:
        def make() -> bytes:
            body = _outlook(session, spot.id, hours=hours, start=start, units=units, agency_id=agency)
            return body.model_dump_json().encode()

        return Response(_bodies.get_or_make(etag, make), media_type="application/json")

    return conditional(request, etag, build, cache=cache)


@router.get(
    "/spots/{spot_id}/outlook.svg",
    summary="The outlook as an SVG chart (breaker heights over time with sets and largest, swell trains)",
    response_class=Response,
    responses={200: {"content": {SVG_MEDIA_TYPE: {"schema": {"type": "string"}}}, "description": "SVG image"},
               **problems(*READ, 409, 503)},
)
def get_outlook_svg(
    spot_id: str, request: Request, settings: SettingsDep,
    hours: Hours = 72, units: UnitsQ = "metric", frm: FromQ = None, agency: AgencyQ = None,
) -> Response:
    start, etag = _tag(request, spot_id, agency, frm, "svg", hours, units)
    cache = cache_control(settings)
    if fresh(request, etag):
        return not_modified(etag, cache_control=cache, vary=VARY)
    with request_session(request) as session:
        return _answer_svg(request, session, spot_id, agency, etag, cache, hours, start, units)


def _answer_svg(request: Request, session: Any, spot_id: str, agency: str | None, etag: str, cache: str,
                hours: int, start: datetime | None, units: str) -> Response:
    spot = _check(session, spot_id, agency)

    def build() -> Response:
        from app.formats.svg_outlook import outlook_svg

        body = _outlook(session, spot.id, hours=hours, start=start, units=units, agency_id=agency)
        steps = body.model_dump(mode="json")["steps"]
        return Response(outlook_svg(steps, units=units, spot_name=spot.name), media_type=SVG_MEDIA_TYPE)

    return conditional(request, etag, build, cache=cache)


__all__ = ["ServiceUnavailable", "outlook_version", "router"]
