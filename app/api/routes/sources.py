"""Offshore sources: list with health, add (remote URLs only unless allowed), upload observation files."""

from __future__ import annotations

import hashlib
from typing import Annotated

from fastapi import APIRouter, File, Request, UploadFile
from pydantic import Field
from starlette.responses import Response

from app.api.deps import ApiKeyDep, SessionDep, SettingsDep, cache_control, conditional, json_response
from app.api.http import etag_for
from app.api.routes._common import READ, WRITE, problems
from app.errors import BadInput, TooLarge
from app.ingest import sources as source_service
from app.schemas.sources import IngestReport, SourceConfig, SourcePublic

router = APIRouter(tags=["sources"])
SERIALIZER = "sources-1"
MAX_FILES = 20


class SourceCreate(SourceConfig):
    """A source as posted to the API: at least one http(s)/file URL to fetch from, no server paths
    (the schema says what the service accepts, so schema-valid bodies are not refused)."""

    urls: list[Annotated[str, Field(pattern=r"^(https?|file)://")]] = Field(min_length=1, max_length=20)
    paths: list[str] = Field(default_factory=list, max_length=0,
                             description="not accepted here: paths are for sources added from a TOML file on the server")


@router.get("/sources", summary="Offshore sources with their health (last success, last error, counts)",
            response_model=list[SourcePublic], responses=problems(*READ))
def list_sources(request: Request, session: SessionDep, settings: SettingsDep) -> Response:
    rows = source_service.list_sources(session)
    # the version is the data the list is made of (ids, counts, health times); small by design
    version = hashlib.sha256("".join(r.model_dump_json() for r in rows).encode()).hexdigest()
    etag = etag_for(SERIALIZER, version)
    return conditional(request, etag, lambda: json_response([r.model_dump(mode="json") for r in rows]),
                       cache=cache_control(settings))


@router.post("/sources", summary="Add or replace a source (http/https URLs only, unless the server allows local ones)",
             status_code=201, response_model=SourcePublic, responses={201: {"description": "Created or replaced", "links": {
                 "ListSources": {"operationId": "sources-list_sources",
                                 "description": "the sources with their health, now including this one"}}},
                 **problems(*WRITE)})
def add_source(config: SourceCreate, session: SessionDep, settings: SettingsDep, _key: ApiKeyDep) -> Response:
    if config.paths:
        raise BadInput("`paths` are for sources added from a TOML file on the server; use `urls`", field="paths")
    source = source_service.add_source(session, config, remote_only=not settings.allow_local_sources)
    session.commit()
    public = next(s for s in source_service.list_sources(session) if s.id == source.id)
    response = json_response(public, status_code=201)
    response.headers["Location"] = "/v1/sources"
    return response


@router.post(
    "/sources/{source_id}/observations",
    summary="Upload observation or forecast files for a source; returns what was stored and rejected",
    response_model=IngestReport,
    responses=problems(*WRITE),
)
async def upload_observations(
    source_id: str, session: SessionDep, settings: SettingsDep, _key: ApiKeyDep,
    files: Annotated[list[UploadFile], File(description="one or more files in the source's format",
                                            min_length=1, max_length=MAX_FILES)],
) -> Response:
    from app.ingest.store import ingest_files

    source_service.get_source(session, source_id)
    if not files or len(files) > MAX_FILES:
        raise BadInput(f"upload 1..{MAX_FILES} files in `files`, got {len(files)}", field="files")
    payload: dict[str, bytes] = {}
    total = 0
    for n, f in enumerate(files):
        data = await f.read(settings.max_upload_bytes + 1)
        total += len(data)
        if total > settings.max_upload_bytes:
            raise TooLarge(f"the uploaded files are over the limit of {settings.max_upload_bytes} bytes", field="files")
        name = (f.filename or f"file-{n}").replace("\\", "/").rsplit("/", 1)[-1] or f"file-{n}"
        payload[name] = data
    report = ingest_files(session, source_id, payload)
    return json_response(report)


__all__ = ["router"]
