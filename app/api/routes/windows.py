"""Swell windows: the transfer tables of a spot's break points (the `shoalcast window --json` shape)
and a polar plot of one point's window as SVG."""

from __future__ import annotations

from datetime import datetime
from typing import Annotated, Any

from fastapi import APIRouter, Query, Request
from pydantic import BaseModel, ConfigDict, Field
from starlette.responses import Response

from app.api.deps import SessionDep, SettingsDep, cache_control, conditional, json_response
from app.api.http import etag_for
from app.api.routes._common import READ, problems
from app.api.routes.spots import spots_version
from app.errors import NotFound
from app.services import spots as spot_service

router = APIRouter(tags=["windows"])
SERIALIZER = "window-1"
SVG_MEDIA_TYPE = "image/svg+xml"


class WindowPoint(BaseModel):
    model_config = ConfigDict(extra="allow")

    name: str
    reference_depth_m: float
    built: bool = Field(description="false until the point's transfer table is built (then only name and depth)")
    built_at: datetime | None = None
    periods_s: list[float] | None = None
    directions_deg: list[float] | None = Field(default=None, description="offshore FROM bin centres, nautical degrees")
    coefficient: list[list[float | None]] | None = Field(default=None, description="K = H_ref / H_offshore per [period][direction]")
    nearshore_direction_deg: list[list[float | None]] | None = Field(
        default=None, description="FROM at the reference depth; null where blocked")
    open_arcs_deg: list[list[list[float]]] | None = Field(default=None, description="per period: open [from, to] arcs, clockwise")
    continued_arcs_deg: list[list[list[float]]] | None = Field(
        default=None,
        description="per period: the open arcs whose rays left the grids short of the wave base and were continued "
                    "over assumed straight contours beyond the edge (K rests on that assumption there)")


class SwellWindow(BaseModel):
    model_config = ConfigDict(extra="allow")

    spot_id: str
    name: str
    faces_deg: float
    threshold: float
    wave_base_period_s: float | None = Field(
        default=None,
        description="Longest period whose wave base (L0/2) the spot's grids reach (as on GET /v1/spots/{id}); the "
                    "open directions of longer periods rest on straight contours assumed beyond the grids' edges "
                    "(`continued_arcs_deg`). Null: no open-ocean edge.")
    points: list[WindowPoint]


def window_body(session: Any, spot_id: str) -> SwellWindow:
    from app.services.tables import window_body as build

    body = SwellWindow.model_validate(build(session, spot_id))
    if not any(p.built for p in body.points):
        raise NotFound(f"spot {spot_id!r} has no transfer tables yet: POST /v1/spots/{spot_id}/tables to build them")
    return body


@router.get("/spots/{spot_id}/window", summary="The spot's swell window: transfer coefficient by period and offshore direction",
            response_model=SwellWindow, responses=problems(*READ))
def get_window(spot_id: str, request: Request, session: SessionDep, settings: SettingsDep) -> Response:
    version = spots_version(session, spot_id)
    spot = spot_service.get_spot(session, spot_id)
    etag = etag_for(SERIALIZER, "json", version)
    return conditional(request, etag, lambda: json_response(window_body(session, spot.id)), cache=cache_control(settings))


@router.get(
    "/spots/{spot_id}/window.svg",
    summary="The swell window as a polar plot (offshore direction x period, coefficient as shading)",
    response_class=Response,
    responses={200: {"content": {SVG_MEDIA_TYPE: {"schema": {"type": "string"}}}, "description": "SVG image"},
               **problems(*READ)},
)
def get_window_svg(
    spot_id: str, request: Request, session: SessionDep, settings: SettingsDep,
    point: Annotated[str | None, Query(description="break point name; default the first", max_length=100)] = None,
) -> Response:
    version = spots_version(session, spot_id)
    spot = spot_service.get_spot(session, spot_id)
    etag = etag_for(SERIALIZER, "svg", version, point)

    def build() -> Response:
        from app.formats.svg_window import swell_window_svg

        body = window_body(session, spot.id)
        chosen = next((p for p in body.points if p.built and (point is None or p.name == point)), None)
        if chosen is None:
            raise NotFound(f"spot {spot.id!r} has no break point {point!r} with a table")
        svg = swell_window_svg(chosen.periods_s, chosen.directions_deg, chosen.coefficient, spot.faces_deg,
                               f"{spot.name} ({chosen.name})")
        return Response(svg, media_type=SVG_MEDIA_TYPE)

    return conditional(request, etag, build, cache=cache_control(settings))


__all__ = ["SwellWindow", "router", "window_body"]
