"""Spots: list (JSON or GeoJSON), one spot, replace by upload (profile TOML + bathymetry), delete,
table rebuild jobs (202 + a job to poll)."""

from __future__ import annotations

import dataclasses
import hashlib
import json
import logging
import tempfile
import threading
import uuid
from datetime import datetime
from pathlib import Path
from typing import Annotated, Any, Literal

import sqlalchemy as sa
from fastapi import APIRouter, File, Query, Request, UploadFile
from pydantic import BaseModel, Field
from starlette.responses import Response

from app.api.deps import ApiKeyDep, SessionDep, SettingsDep, cache_control, conditional, json_response
from app.api.http import etag_for
from app.api.routes._common import READ, WRITE, problems
from app.db.tables import Job, Spot, TransferTableRow, utcnow
from app.errors import NotFound, ProfileError, TooLarge
from app.formats import geojson
from app.schemas.spots import SpotPublic
from app.services import spots as spot_service

router = APIRouter(tags=["spots"])
jobs_router = APIRouter(tags=["jobs"])
log = logging.getLogger(__name__)

SERIALIZER = "spots-1"


class SpotFeatureCollection(BaseModel):
    """RFC 7946 FeatureCollection: Point coordinates are [longitude, latitude]."""

    type: Literal["FeatureCollection"]
    bbox: list[float] | None = None
    features: list[dict[str, Any]]


class JobPublic(BaseModel):
    id: str
    kind: str
    status: Literal["queued", "running", "done", "failed"]
    created_at: datetime
    started_at: datetime | None
    finished_at: datetime | None
    params: dict[str, Any]
    result: dict[str, Any]
    error: str | None
    href: str = Field(description="poll this path for the job's status")


def spots_version(session: Any, spot_id: str | None = None) -> str:
    """A digest of what spot responses are made of (profile, grid, update times, table builds)."""
    q = sa.select(Spot.id, Spot.profile_sha256, Spot.updated_at).order_by(Spot.id)
    t = sa.select(TransferTableRow.spot_id, TransferTableRow.break_point_id, TransferTableRow.built_at).order_by(
        TransferTableRow.break_point_id)
    if spot_id is not None:
        q, t = q.where(Spot.id == spot_id), t.where(TransferTableRow.spot_id == spot_id)
    h = hashlib.sha256()
    for row in session.execute(q):
        h.update(repr(tuple(row)).encode())
    h.update(b"|")
    for row in session.execute(t):
        h.update(repr(tuple(row)).encode())
    return h.hexdigest()


# OpenAPI links (3.x "links"): what a client, and schemathesis' stateful run, may call next with the
# id the response names. The spot links follow a write; the job link follows a rebuild's 202.
SPOT_LINKS = {
    "GetSpot": {"operationId": "spots-get_spot", "parameters": {"spot_id": "$response.body#/id"},
                "description": "the spot just written"},
    "GetOutlook": {"operationId": "outlooks-get_outlook", "parameters": {"spot_id": "$response.body#/id"},
                   "description": "its outlook (409 until its tables are built)"},
    "GetWindow": {"operationId": "windows-get_window", "parameters": {"spot_id": "$response.body#/id"},
                  "description": "its swell window (404 until its tables are built)"},
    "RebuildTables": {"operationId": "spots-rebuild_tables", "parameters": {"spot_id": "$response.body#/id"},
                      "description": "build its transfer tables (202 + a job)"},
}
JOB_LINKS = {
    "GetJob": {"operationId": "jobs-get_job", "parameters": {"job_id": "$response.body#/id"},
               "description": "poll the rebuild job"},
}


def _wants_geojson(request: Request, format: str | None) -> bool:
    if format is not None:
        return format == "geojson"
    accept = request.headers.get("accept", "")
    return geojson.MEDIA_TYPE in accept and "application/json" not in accept.split(geojson.MEDIA_TYPE)[0]


@router.get(
    "/spots",
    summary="List spots (JSON, or a GeoJSON FeatureCollection with ?format=geojson or Accept: application/geo+json)",
    response_model=list[SpotPublic],
    responses={**problems(*READ), 200: {"content": {geojson.MEDIA_TYPE: {"schema": {
        "$ref": "#/components/schemas/SpotFeatureCollection"}}}, "links": {
        "GetFirstSpot": {"operationId": "spots-get_spot", "parameters": {"spot_id": "$response.body#/0/id"},
                         "description": "the first listed spot (JSON list)"},
        "ReplaceFirstSpot": {"operationId": "spots-put_spot", "parameters": {"spot_id": "$response.body#/0/id"},
                             "description": "replace the first listed spot (JSON list)"}}}},
)
def list_spots(
    request: Request, session: SessionDep, settings: SettingsDep,
    format: Annotated[Literal["json", "geojson"] | None, Query(description="json (default) or geojson")] = None,
) -> Response:
    gj = _wants_geojson(request, format)
    etag = etag_for(SERIALIZER, "geojson" if gj else "json", spots_version(session))

    def build() -> Response:
        rows = [spot_service.spot_public(s) for s in spot_service.list_spots(session)]
        if not gj:
            return json_response([r.model_dump(mode="json") for r in rows])
        items = [
            {"id": r.id, "name": r.name, "latitude": r.latitude, "longitude": r.longitude, "faces_deg": r.faces_deg,
             "timezone": r.timezone, "break_points": len(r.break_points), "href": f"/v1/spots/{r.id}"}
            for r in rows
        ]
        return json_response(geojson.spots_feature_collection(items), media_type=geojson.MEDIA_TYPE)

    return conditional(request, etag, build, cache=cache_control(settings))


@router.get("/spots/{spot_id}", summary="One spot: position, facing, grid summary and break points",
            response_model=SpotPublic, responses=problems(*READ))
def get_spot(spot_id: str, request: Request, session: SessionDep, settings: SettingsDep) -> Response:
    version = spots_version(session, spot_id)
    spot = spot_service.get_spot(session, spot_id)  # 404 before any 304
    etag = etag_for(SERIALIZER, "one", version)
    return conditional(request, etag, lambda: json_response(spot_service.spot_public(spot)), cache=cache_control(settings))


async def _read_limited(upload: UploadFile, limit: int, name: str) -> bytes:
    data = await upload.read(limit + 1)
    if len(data) > limit:
        raise TooLarge(f"upload `{name}` is over the limit of {limit} bytes", field=name)
    return data


def _regional_files(specs: Any, parts: list[tuple[str, bytes]]) -> list[tuple[str, str, bytes]]:
    """(field, path, bytes) of each `[[regional_bathymetry]]` entry, its upload matched by file name;
    a missing, doubled or unnamed upload is refused naming the field."""
    by_name: dict[str, bytes] = {}
    for name, data in parts:
        if not name or name in by_name:
            what = "has no file name" if not name else f"{name!r} is sent twice"
            raise ProfileError(f"upload `regional`: a file part {what}; each is matched to a "
                               "`regional_bathymetry.N.file` of the profile by its file name", field="regional")
        by_name[name] = data
    out = []
    for n, spec in enumerate(specs):
        field = f"regional_bathymetry.{n}.file"
        data = by_name.pop(Path(spec.file).name, None)
        if data is None:
            raise ProfileError(f"profile field `{field}` names {spec.file!r} but no `regional` upload has the file name "
                               f"{Path(spec.file).name!r}: send one `regional` file part per [[regional_bathymetry]] "
                               "entry, named as its `file`", field=field)
        out.append((field, spec.file, data))
    if by_name:
        raise ProfileError(f"upload `regional`: {', '.join(repr(k) for k in sorted(by_name))} is not the `file` of any "
                           "[[regional_bathymetry]] entry of the profile", field="regional")
    return out


@router.put(
    "/spots/{spot_id}",
    summary="Add or replace a spot from a profile TOML, its bathymetry file and any regional grids (multipart)",
    response_model=SpotPublic,
    status_code=200,
    responses={200: {"description": "Replaced", "links": SPOT_LINKS},
               201: {"description": "Created", "model": SpotPublic, "links": SPOT_LINKS}, **problems(*WRITE)},
)
async def put_spot(
    spot_id: str,
    session: SessionDep,
    settings: SettingsDep,
    _key: ApiKeyDep,
    profile: Annotated[UploadFile, File(description="spot profile TOML; its `bathymetry.file` names the other upload")],
    bathymetry: Annotated[UploadFile, File(description="bathymetry grid (ESRI ASCII, NetCDF or XYZ)")],
    regional: Annotated[list[UploadFile] | None, File(
        description="the regional grids of the profile's `[[regional_bathymetry]]` entries: one `regional` file part "
                    "per entry, its filename the entry's `file` name (any order)")] = None,
) -> Response:
    limit = settings.max_upload_bytes
    profile_bytes = await _read_limited(profile, limit, "profile")
    grid_bytes = await _read_limited(bathymetry, limit, "bathymetry")
    regional_parts = [(Path(up.filename or "").name, await _read_limited(up, limit, f"regional[{k}]"))
                      for k, up in enumerate(regional or [])]  # fmt: skip
    try:
        text = profile_bytes.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise ProfileError("upload `profile`: not UTF-8 text", field="profile") from exc
    parsed = spot_service.parse_profile_text(text, where="profile")
    if parsed.id != spot_id:
        raise ProfileError(f"profile field `id` is {parsed.id!r} but the path says {spot_id!r}", field="id")
    with tempfile.TemporaryDirectory(prefix="shoalcast-upload-") as tmp:
        base = Path(tmp).resolve()
        files = [("bathymetry.file", parsed.bathymetry.file, grid_bytes)]
        files += _regional_files(parsed.regional_bathymetry, regional_parts)
        for field, name, data in files:
            target = (base / name).resolve()
            if Path(name).is_absolute() or not target.is_relative_to(base) or target == base:
                raise ProfileError(f"profile field `{field}`: {name!r} must be a relative path inside the upload", field=field)
            if target.exists():
                raise ProfileError(f"profile field `{field}`: {name!r} is already the file of another grid", field=field)
            target.parent.mkdir(parents=True, exist_ok=True)
            target.write_bytes(data)
        (base / "profile.toml").write_text(text, encoding="utf-8")
        loaded = spot_service.load_profile(base / "profile.toml")
    existed = session.get(Spot, spot_id) is not None
    spot_service.store_spot(session, loaded)
    session.commit()
    spot = spot_service.get_spot(session, spot_id)
    return json_response(spot_service.spot_public(spot), status_code=200 if existed else 201)


@router.delete("/spots/{spot_id}", summary="Delete a spot with its grid, tables and outlooks", status_code=204,
               responses=problems(*WRITE), response_class=Response)
def delete_spot(spot_id: str, session: SessionDep, _key: ApiKeyDep) -> Response:
    spot_service.delete_spot(session, spot_id)
    return Response(status_code=204)


def _job_public(job: Job) -> JobPublic:
    return JobPublic(id=job.id, kind=job.kind, status=job.status, created_at=job.created_at,  # type: ignore[arg-type]
                     started_at=job.started_at, finished_at=job.finished_at, params=dict(job.params or {}),
                     result=dict(job.result or {}), error=job.error, href=f"/v1/jobs/{job.id}")


def _run_table_job(session_factory: Any, database_url: str, job_id: str, spot_id: str) -> None:
    with session_factory() as session:
        job = session.get(Job, job_id)
        job.status, job.started_at = "running", utcnow()
        session.commit()
        try:
            from app.services.tables import build_tables

            report = build_tables(database_url, [spot_id], force=True)
            job = session.get(Job, job_id)
            job.status = "done"
            job.result = json.loads(json.dumps(dataclasses.asdict(report), default=str))
        except Exception as exc:  # noqa: BLE001 - a failed build is reported on the job, not raised
            session.rollback()
            log.exception("table build for %s failed", spot_id)
            job = session.get(Job, job_id)
            job.status, job.error = "failed", f"{type(exc).__name__}: {exc}"[:2000]
        job.finished_at = utcnow()
        session.commit()


def _run_table_job_safely(*args: Any) -> None:
    try:
        _run_table_job(*args)
    except Exception:  # noqa: BLE001 - e.g. the database went away; the job stays "running" and is logged
        log.exception("table job %s could not be recorded", args[2])


@router.post(
    "/spots/{spot_id}/tables",
    summary="Rebuild the spot's transfer tables in the background (202 + a job to poll)",
    status_code=202,
    response_model=JobPublic,
    responses={202: {"description": "Accepted: the job to poll", "links": JOB_LINKS}, **problems(*WRITE)},
)
def rebuild_tables(spot_id: str, request: Request, session: SessionDep, _key: ApiKeyDep) -> Response:
    spot_service.get_spot(session, spot_id)
    job = Job(id=uuid.uuid4().hex, kind="tables", status="queued", params={"spot_id": spot_id})
    session.add(job)
    session.commit()
    thread = threading.Thread(target=_run_table_job_safely,
                              args=(request.app.state.session_factory, request.app.state.database_url, job.id, spot_id),
                              name=f"tables-{spot_id}", daemon=True)
    request.app.state.job_threads.append(thread)  # the lifespan waits for these on shutdown
    thread.start()
    response = json_response(_job_public(job), status_code=202)
    response.headers["Location"] = f"/v1/jobs/{job.id}"
    return response


@jobs_router.get("/jobs/{job_id}", summary="A background job's status and result", response_model=JobPublic,
                 responses=problems(404))
def get_job(job_id: str, session: SessionDep) -> Response:
    job = session.get(Job, job_id)
    if job is None:
        raise NotFound(f"no job with id {job_id!r}")
    response = json_response(_job_public(job))
    response.headers["Cache-Control"] = "no-store"
    return response


__all__ = ["jobs_router", "router", "spots_version"]
