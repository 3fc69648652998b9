"""Verification of a spot's outlook against observations, and its calibration factor.

POST takes the observed-heights CSV as the raw request body (`Content-Type: text/csv`), not
multipart: one document, one media type, the size limit of every other body. Bad rows are
rejected with line and reason in the report, the good rows are scored. docs/verification.md.
"""

from __future__ import annotations

from typing import Annotated

import sqlalchemy as sa
from fastapi import APIRouter, Query, Request
from starlette.responses import Response

from app.api.deps import ApiKeyDep, SessionDep, SettingsDep, cache_control, conditional, json_response
from app.api.http import etag_for
from app.api.routes._common import READ, WRITE, problems
from app.api.routes.outlooks import FROM_PATTERN, SVG_MEDIA_TYPE, FromQ, _parse_from
from app.db.tables import Calibration, Verification
from app.errors import NotFound, ShoalcastError
from app.schemas.verification import Calibrations, CalibrationVersion, VerificationReport
from app.services import calibration as cal_service
from app.services import spots as spot_service
from app.services import verification as service

router = APIRouter(tags=["verification"])
SERIALIZER = "verification-1"
CSV_MEDIA_TYPES = ("text/csv", "text/plain")
MAX_API_OBSERVATIONS = 1000  # each observation is a hindcast: larger runs belong to `shoalcast verify`

EXAMPLE_CSV = "time,breaker_height_m,point,observer\n2030-01-01T06:00:00Z,1.2,,tower 2\n"


class UnsupportedMediaType(ShoalcastError):
    status = 415
    title = "Unsupported media type"


_415 = {415: {"description": "The body is not text/csv.", "content": {"application/problem+json": {
    "schema": {"$ref": "#/components/schemas/Problem"}}}}}  # fmt: skip
ToQ = Annotated[str | None, Query(alias="to", description="only observations at or before this RFC 3339 time",
                                  max_length=40, pattern=FROM_PATTERN)]  # fmt: skip


def _who(key: object) -> str:
    return f"key:{getattr(key, 'name', 'api')}"


@router.post(
    "/spots/{spot_id}/verification",
    summary="Score the spot's outlook against observed breaker heights (CSV body); optionally store the factor",
    response_model=VerificationReport,
    responses={**problems(*WRITE, 409), **_415},
    openapi_extra={"requestBody": {"required": True, "description": (
        "CSV: header `time,breaker_height_m` (or `breaker_height_ft`), optional `point` and `observer`; "
        "RFC 3339 times with an offset. Damaged rows are rejected with line and reason; the rest are used."),
        "content": {"text/csv": {"schema": {"type": "string"}, "example": EXAMPLE_CSV}}}},
)
async def post_verification(
    spot_id: str,
    request: Request,
    session: SessionDep,
    key: ApiKeyDep,
    frm: FromQ = None,
    to: ToQ = None,
    apply: Annotated[bool, Query(description="store the calibration factor for the spot")] = False,
) -> Response:
    ctype = request.headers.get("content-type", "").split(";")[0].strip().lower()
    if ctype not in CSV_MEDIA_TYPES:
        raise UnsupportedMediaType(f"send the observations as text/csv, not {ctype or 'no content type'!r}",
                                   field="content-type")  # fmt: skip
    data = await request.body()
    spot = spot_service.get_spot(session, spot_id)
    start, end = _parse_from(frm), _parse_from(to)
    body = service.run_verification(session, spot.id, csv_data=data, name="upload", start=start, end=end,
                                    who=_who(key), apply=apply, limit=MAX_API_OBSERVATIONS)  # fmt: skip
    session.commit()
    return json_response(VerificationReport.model_validate(body))


def _latest(session: object, spot_id: str) -> Verification:
    spot_service.get_spot(session, spot_id)  # type: ignore[arg-type]
    row = service.latest_verification(session, spot_id)  # type: ignore[arg-type]
    if row is None:
        raise NotFound(f"spot {spot_id!r} has not been verified yet (POST observations, or `shoalcast verify`)")
    return row


@router.get("/spots/{spot_id}/verification", summary="The spot's latest verification: scores, by sector and band, pairs",
            response_model=VerificationReport, responses=problems(*READ))  # fmt: skip
def get_verification(spot_id: str, request: Request, session: SessionDep, settings: SettingsDep) -> Response:
    row = _latest(session, spot_id)
    etag = etag_for(SERIALIZER, "json", row.id)
    return conditional(request, etag, lambda: json_response(VerificationReport.model_validate(row.body)),
                       cache=cache_control(settings))  # fmt: skip


@router.get(
    "/spots/{spot_id}/verification.svg",
    summary="The latest verification as SVG: observed against forecast with the 1:1 line, or over time",
    response_class=Response,
    responses={200: {"content": {SVG_MEDIA_TYPE: {"schema": {"type": "string"}}}, "description": "SVG image"},
               **problems(*READ)},  # fmt: skip
)
def get_verification_svg(
    spot_id: str, request: Request, session: SessionDep, settings: SettingsDep,
    kind: Annotated[str, Query(description="scatter (default) or series", pattern="^(scatter|series)$")] = "scatter",
) -> Response:  # fmt: skip
    from app.formats.svg_verification import scatter_svg, series_svg

    row = _latest(session, spot_id)
    etag = etag_for(SERIALIZER, "svg", kind, row.id)
    draw = scatter_svg if kind == "scatter" else series_svg
    return conditional(request, etag, lambda: Response(draw(row.body), media_type=SVG_MEDIA_TYPE),
                       cache=cache_control(settings))  # fmt: skip


def calibrations_of(session: object, spot_id: str) -> Calibrations:
    spot_service.get_spot(session, spot_id)  # type: ignore[arg-type]
    rows = cal_service.history(session, spot_id)  # type: ignore[arg-type]
    active = next((r for r in reversed(rows) if r.removed_at is None), None)
    return Calibrations(spot_id=spot_id, active=None if active is None else cal_service.calibration_body(active),
                        versions=[CalibrationVersion.model_validate(cal_service.calibration_body(r)) for r in rows])  # type: ignore[arg-type]  # fmt: skip


@router.get("/spots/{spot_id}/calibration", summary="The spot's calibration factor: the active version and the history",
            response_model=Calibrations, responses=problems(*READ))  # fmt: skip
def get_calibration(spot_id: str, request: Request, session: SessionDep, settings: SettingsDep) -> Response:
    spot_service.get_spot(session, spot_id)
    state = session.execute(sa.select(sa.func.count(), sa.func.max(Calibration.id), sa.func.max(Calibration.removed_at))
                            .where(Calibration.spot_id == spot_id)).one()  # fmt: skip
    etag = etag_for(SERIALIZER, "calibration", tuple(state))
    return conditional(request, etag, lambda: json_response(calibrations_of(session, spot_id)),
                       cache=cache_control(settings, poll=True))  # fmt: skip


@router.delete("/spots/{spot_id}/calibration", summary="Remove the active calibration factor (outlooks go back to raw)",
               response_model=CalibrationVersion, responses=problems(*WRITE))  # fmt: skip
def delete_calibration(spot_id: str, session: SessionDep, key: ApiKeyDep) -> Response:
    spot_service.get_spot(session, spot_id)
    row = cal_service.remove_calibration(session, spot_id, who=_who(key))
    session.commit()
    return json_response(CalibrationVersion.model_validate(cal_service.calibration_body(row)))


__all__ = ["router"]
