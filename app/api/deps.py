"""FastAPI dependencies (Annotated aliases) and the conditional-GET helper the read routes share.

- `SettingsDep`: the app's Settings (set by `create_app`, so tests can pass their own).
- `SessionDep`: one SQLAlchemy session per request; commits when the handler returns, rolls back on error.
- `require_scope("write")`: an X-API-Key dependency; missing/unknown/revoked key -> 401, wrong scope -> 403
  (FastAPI >= 0.122 returns 401 for missing credentials, FastAPI pull request 13786; 403 stays for scope).
- `conditional(...)`: weak ETag from the data version; If-None-Match -> 304 before the body is built.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from contextlib import AbstractContextManager
from typing import Annotated, Any

from fastapi import Depends, Request, Security
from fastapi.security import APIKeyHeader
from sqlalchemy.orm import Session
from starlette.responses import Response

from app.api.http import if_none_match_matches, not_modified
from app.config import Settings
from app.db.session import scoped
from app.services.keys import ApiKeyPublic, verify_key

__all__ = [
    "ApiKeyDep",
    "SessionDep",
    "SettingsDep",
    "VARY",
    "cache_control",
    "conditional",
    "fresh",
    "read_data_version",
    "request_session",
    "require_scope",
]

VARY = "Accept, Accept-Encoding"


def get_app_settings(request: Request) -> Settings:
    return request.app.state.settings


SettingsDep = Annotated[Settings, Depends(get_app_settings)]


def get_session(request: Request) -> Iterator[Session]:
    with scoped(request.app.state.session_factory) as session:
        yield session


SessionDep = Annotated[Session, Depends(get_session)]


def read_data_version(request: Request) -> int:
    """The data version (app.db.version.Reader): the 304 paths read only this, so they need no ORM
    session (and no session dependency, which costs two thread hops)."""
    from app.db import version

    return version.reader(request.app.state.database_url).read()


def request_session(request: Request) -> AbstractContextManager[Session]:
    """A session for the rest of a handler that first answered what it could without one (commits
    on success, rolls back on error, like SessionDep)."""
    return scoped(request.app.state.session_factory)

api_key_header = APIKeyHeader(name="X-API-Key", auto_error=False, description="API key for writes (`shoalcast key create`).")


def require_scope(scope: str) -> Callable[..., ApiKeyPublic]:
    def check(session: SessionDep, key: Annotated[str | None, Security(api_key_header)] = None) -> ApiKeyPublic:
        return verify_key(session, key, scope)

    check.__name__ = f"require_{scope}"
    return check


ApiKeyDep = Annotated[ApiKeyPublic, Depends(require_scope("write"))]


def cache_control(settings: Settings | None, *, poll: bool = False) -> str:
    if poll:  # lifeguard pollers: store, but revalidate every time (cheap 304s)
        return "no-cache"
    age = max(0, int(settings.refresh_seconds)) if settings is not None else 0
    return f"public, max-age={age}, stale-while-revalidate={age}"


def fresh(request: Request, etag: str) -> bool:
    """The request holds `etag` by name (If-None-Match listing it; `*` does not count): a 304 may be
    sent before anything else is looked up (the tag was made from the current data version)."""
    value = request.headers.get("if-none-match")
    return (request.method in ("GET", "HEAD") and value is not None and value.strip() != "*"
            and if_none_match_matches(value, etag))


def conditional(
    request: Request,
    etag: str,
    build: Callable[[], Response],
    *,
    cache: str,
    vary: str = VARY,
) -> Response:
    """304 when If-None-Match holds `etag` (the body is never built), else `build()` with the headers."""
    headers = {"ETag": etag, "Cache-Control": cache, "Vary": vary}
    if request.method in ("GET", "HEAD") and if_none_match_matches(request.headers.get("if-none-match"), etag):
        return not_modified(etag, cache_control=cache, vary=vary)
    response = build()
    response.headers.update(headers)
    return response


def json_response(content: Any, *, media_type: str = "application/json", status_code: int = 200) -> Response:
    """JSON bytes of a pydantic model or plain data (pydantic serialisers keep RFC 3339 Z times)."""
    from pydantic import BaseModel
    from pydantic_core import to_json

    if isinstance(content, BaseModel):
        body = content.model_dump_json().encode()
    else:
        body = to_json(content)
    return Response(body, media_type=media_type, status_code=status_code)
