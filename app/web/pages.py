"""The HTML pages: `/` spots, `/spots/{id}` outlook, `/agencies/{id}` lifeguard board (and its
self-refreshing fragment), `/sources` feed health, and the palette stylesheet.

Handlers read the same services as the JSON API and send weak ETags, so a reload or the board's
once-a-minute check costs a 304 when nothing changed. Errors raised here (unknown ids, bad query
values) become HTML pages through the app's exception handlers (`app.web.errors`).
"""

from __future__ import annotations

import hashlib
from datetime import UTC, datetime, timedelta
from typing import Any

import sqlalchemy as sa
from fastapi import APIRouter, Request
from starlette.responses import HTMLResponse, Response

from app.api.deps import SessionDep, SettingsDep, cache_control, conditional
from app.api.http import etag_for
from app.db.tables import Observation, Spot, TransferTableRow
from app.errors import ShoalcastError
from app.services.memo import VersionMemo
from app.web import palette, views
from app.web.locator import Place, locator_svg
from app.web.render import render

__all__ = ["router"]

router = APIRouter(include_in_schema=False)
PAGE_VERSION = "pages-2"  # part of every page ETag: bump when a template changes what it shows
STALE_AFTER = timedelta(hours=3)
# Rendered spot pages per ETag, as the JSON outlook keeps its bytes: the ETag holds the data version,
# the hour, the preferences and the latest verification, so an entry is never out of date, and a
# reload costs the ETag's reads instead of reading the stored outlook and rendering it again.
_pages: VersionMemo[bytes] = VersionMemo(64)


def _html(body: str) -> HTMLResponse:
    return HTMLResponse(body)


def _nav(session: Any) -> list[dict[str, str]]:
    from app.services.agencies import list_agencies

    return [{"id": a.id, "name": a.name} for a in list_agencies(session)]


def _now() -> datetime:
    return datetime.now(UTC)


def _cautions() -> list[str]:
    from app.services import outlooks

    return list(outlooks.CAUTIONS)


@router.get("/static/palette.css")
def palette_css() -> Response:
    """The colours, generated from `app.web.palette` (the module the contrast tests check)."""
    return Response(palette.css_variables(), media_type="text/css",
                    headers={"Cache-Control": "public, max-age=3600"})


@router.get("/")
def spots_page(request: Request, session: SessionDep, settings: SettingsDep) -> Response:
    from app.ingest.sources import list_sources
    from app.services import outlooks
    from app.services.agencies import get_agency
    from app.services.spots import list_spots

    prefs = views.parse_prefs(request.query_params, default_hours=settings.outlook_hours)
    if prefs.agency is not None:
        get_agency(session, prefs.agency)  # 404 page for an unknown agency
    now = _now()
    spots = list_spots(session)
    rows = []
    places = []
    for n, spot in enumerate(spots, start=1):
        places.append(Place(spot.name, spot.latitude, spot.longitude, faces_deg=spot.faces_deg, number=n))
        row: dict[str, Any] = {"n": n, "id": spot.id, "name": spot.name, "faces": views.compass(spot.faces_deg),
                               "typical": "–", "hazard": views.level_badge(None, None), "note": None,
                               "points": len(spot.break_points)}
        try:
            body = outlooks.get_outlook(session, spot.id, hours=prefs.hours, start=None, units=prefs.units,
                                        agency_id=prefs.agency).model_dump(mode="json")
        except ShoalcastError as exc:
            row["note"] = exc.detail
        else:
            view = views.outlook_view(body, timezone=spot.timezone, prefs=prefs, now=now)
            if view["now"] is None:
                row["note"] = "no offshore data covers the coming hours"
            else:
                row["typical"] = view["now"]["typical"]
                row["hazard"] = view["now"]["hazard"]
                row["at"] = view["now"]["time_first"]
        rows.append(row)
    for src in list_sources(session):
        places.append(Place(src.name, src.latitude, src.longitude, kind="source"))
    html = render("spots.html", page_title="Spots", rows=rows, prefs=prefs, unit="ft" if prefs.units == "imperial" else "m",
                  locator=locator_svg(places, title="Where the spots and offshore sources lie"),
                  cautions=_cautions(), nav_agencies=_nav(session))
    return _html(html)


def _tables_built(session: Any, spot_id: str) -> list[str]:
    from app.db.tables import BreakPoint

    rows = session.execute(
        sa.select(BreakPoint.name).join(TransferTableRow, TransferTableRow.break_point_id == BreakPoint.id)
        .where(BreakPoint.spot_id == spot_id).order_by(BreakPoint.position)
    ).scalars().all()
    return list(rows)


def _newest_input(session: Any, spot: Spot) -> datetime | None:
    if not spot.sources:
        return None
    t = session.execute(sa.select(sa.func.max(Observation.time)).where(Observation.source_id.in_(list(spot.sources)))).scalar()
    if t is not None and t.tzinfo is None:  # SQLite aggregates bypass the column type
        t = t.replace(tzinfo=UTC)
    return t


def _latest_verification(session: Any, spot_id: str) -> Any:
    from app.services.verification import latest_verification

    return latest_verification(session, spot_id)


@router.get("/spots/{spot_id}")
def spot_page(spot_id: str, request: Request, session: SessionDep, settings: SettingsDep) -> Response:
    from app.api.routes.outlooks import outlook_version
    from app.services import outlooks
    from app.services.agencies import get_agency
    from app.services.spots import spot_row

    prefs = views.parse_prefs(request.query_params, default_hours=settings.outlook_hours)
    spot = spot_row(session, spot_id)  # the row alone: a reload answered from `_pages` loads no grids
    if prefs.agency is not None:
        get_agency(session, prefs.agency)  # 404 page for an unknown agency
    now = _now()
    hour = now.replace(minute=0, second=0, microsecond=0)
    verified = _latest_verification(session, spot.id)
    etag = etag_for(PAGE_VERSION, "spot", outlook_version(session, spot, prefs.agency), prefs, hour,
                    None if verified is None else verified.id)

    def build() -> Response:
        page = _pages.get(etag)
        if page is None:
            html, error = render_page()
            page = html.encode()
            if error is None:  # a page explaining a failure is made again next time
                _pages.put(etag, page)
        return HTMLResponse(page)

    def render_page() -> tuple[str, str | None]:
        error = None
        body: dict[str, Any] = {"steps": [], "notes": [], "cautions": _cautions()}
        try:
            body = outlooks.get_outlook(session, spot.id, hours=prefs.hours, start=None, units=prefs.units,
                                        agency_id=prefs.agency).model_dump(mode="json")
        except ShoalcastError as exc:  # no tables yet, say: the page explains instead of failing
            error = exc.detail
        view = views.outlook_view(body, timezone=spot.timezone, prefs=prefs, now=now)
        newest = _newest_input(session, spot)
        if newest is not None and now - newest > STALE_AFTER:
            age = (now - newest).total_seconds() / 3600
            view["notes"].insert(0, f"Stale data: the newest offshore spectrum is from {views.when(newest)} UTC, "
                                    f"{age:.0f} hours ago.")
        windows = _tables_built(session, spot.id)
        html = render("spot.html", page_title=spot.name, spot=spot, faces=views.compass(spot.faces_deg), view=view,
                      prefs=prefs, error=error, windows=windows, cautions=view["cautions"] or _cautions(),
                      show_tz=view["show_local"], zone=view["zone"], show_hours=True,
                      nav_agencies=_nav(session), verification=views.verification_view(session, verified))
        return html, error

    return conditional(request, etag, build, cache=cache_control(settings))


def _board(session: Any, agency_id: str) -> tuple[dict[str, Any], list[dict[str, Any]], str]:
    from app.services import hazards

    version = hazards.hazard_version(session, agency_id)
    summary = hazards.agency_hazards_at(session, agency_id, version).model_dump(mode="json")
    ids = [s["spot_id"] for s in summary["spots"]]
    zones = dict(session.execute(sa.select(Spot.id, Spot.timezone).where(Spot.id.in_(ids))).all()) if ids else {}
    return summary, views.board_rows(summary, zones), version


def _fragment_etag(version: str) -> str:
    return etag_for(PAGE_VERSION, "board-fragment", version)


@router.get("/agencies/{agency_id}")
def board_page(agency_id: str, request: Request, session: SessionDep) -> Response:
    from app.services import hazards
    from app.services.agencies import get_agency

    refresh = views.parse_refresh(request.query_params)
    agency = get_agency(session, agency_id)
    version = hazards.hazard_version(session, agency_id)
    etag = etag_for(PAGE_VERSION, "board", version, refresh)

    def build() -> Response:
        summary, rows, version_ = _board(session, agency.id)
        html = render("board.html", page_title=f"{agency.name}: lifeguard board", agency=agency, rows=rows,
                      summary=summary, computed=views.when(summary["computed_at"], fmt="%H:%M:%S UTC"),
                      refresh=refresh, fragment_etag=_fragment_etag(version_), version=version_,
                      cautions=summary["cautions"], nav_agencies=_nav(session))
        return _html(html)

    return conditional(request, etag, build, cache=cache_control(None, poll=True))


@router.get("/agencies/{agency_id}/board")
def board_fragment(agency_id: str, request: Request, session: SessionDep) -> Response:
    """The board's table alone (what the page's script swaps in); 304 until the data version changes."""
    from app.services import hazards

    version = hazards.hazard_version(session, agency_id)

    def build() -> Response:
        summary, rows, version_ = _board(session, agency_id)
        return _html(render("_board.html", rows=rows, summary=summary, version=version_,
                            computed=views.when(summary["computed_at"], fmt="%H:%M:%S UTC")))

    return conditional(request, _fragment_etag(version), build, cache=cache_control(None, poll=True))


def _health(s: Any) -> str:
    h = s.health
    if h.last_success is None and h.last_error is None:
        return "not fetched yet"
    if h.last_error_at is not None and (h.last_success is None or h.last_error_at > h.last_success):
        return "failing"
    return "ok"


@router.get("/sources")
def sources_page(request: Request, session: SessionDep, settings: SettingsDep) -> Response:
    from app.ingest.sources import list_sources

    rows = list_sources(session)
    version = hashlib.sha256("".join(r.model_dump_json() for r in rows).encode()).hexdigest()
    etag = etag_for(PAGE_VERSION, "sources", version)

    def build() -> Response:
        items = [{
            "id": s.id, "name": s.name, "format": s.format, "status": _health(s),
            "last_success": views.when(s.health.last_success, fmt="%Y-%m-%d %H:%M UTC"),
            "last_error_at": views.when(s.health.last_error_at, fmt="%Y-%m-%d %H:%M UTC"),
            "last_error": s.health.last_error, "stored": s.health.stored, "rejected": s.health.rejected,
            "observations": s.observations, "latest": views.when(s.latest_time, fmt="%Y-%m-%d %H:%M UTC"),
            "poll": f"{s.poll_minutes:g} min",
        } for s in rows]
        return _html(render("sources.html", page_title="Feed health", items=items, cautions=_cautions(),
                            nav_agencies=_nav(session)))

    return conditional(request, etag, build, cache=cache_control(settings))
