"""The FastAPI app: `create_app(settings)` with a lifespan, /v1 routers, CORS, GZip, a body-size
limit and RFC 9457 problem+json for every error.

The lifespan owns the engine and, when `settings.scheduler_enabled`, an in-process scheduler that
only runs while this process holds the single-scheduler lock (PostgreSQL advisory lock or a file
lock): with N workers one schedules and the others stand by.
"""

from __future__ import annotations

import logging
import threading
import uuid
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager
from http import HTTPStatus
from typing import Any

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.middleware.cors import CORSMiddleware
from fastapi.middleware.gzip import GZipMiddleware
from fastapi.routing import APIRoute
from sqlalchemy.orm import sessionmaker
from starlette.exceptions import HTTPException as StarletteHTTPException
from starlette.responses import Response
from starlette.types import ASGIApp, Message, Receive, Scope, Send

from app.api.http import problem
from app.config import Settings, get_settings
from app.errors import ShoalcastError
from app.observability import CONTENT_TYPE as METRICS_CONTENT_TYPE
from app.observability import REGISTRY, ObservabilityMiddleware, configure_logging
from app.runtime import limit_blas_threads

__all__ = ["create_app"]

log = logging.getLogger("app.api")

API_VERSION = "1.0.0"
DESCRIPTION = (
    "Nearshore wave outlooks for surf spots, hazard levels for lifeguard agencies (JSON and CAP 1.2 "
    "alerts with an Atom index), swell windows and spots as GeoJSON.\n\n"
    "Every response carrying hazard levels carries cautions: guidance only; conditions change; follow "
    "lifeguards, official warnings and local rules.\n\n"
    "Read endpoints send weak ETags; send If-None-Match to get a 304. Writes need an API key in "
    "`X-API-Key`. Errors are RFC 9457 `application/problem+json`."
)


def _operation_id(route: APIRoute) -> str:
    tag = route.tags[0] if route.tags else "default"
    return f"{tag}-{route.name}"


class BodyLimitMiddleware:
    """413 problem+json for bodies over the limit: at once from Content-Length, or while a streamed
    (chunked) body is read. Multipart uploads get `max_upload_bytes`, everything else `max_body_bytes`."""

    def __init__(self, app: ASGIApp, *, max_body_bytes: int, max_upload_bytes: int) -> None:
        self.app = app
        self.max_body = max_body_bytes
        self.max_upload = max_upload_bytes

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        headers = {k.decode("latin-1").lower(): v.decode("latin-1") for k, v in scope.get("headers", [])}
        limit = self.max_upload if headers.get("content-type", "").startswith("multipart/") else self.max_body
        length = headers.get("content-length")
        if length is not None and length.strip().isdigit() and int(length) > limit:
            await self._reject(scope, receive, send, limit)
            return
        seen = 0
        started = False
        too_large = False

        async def limited_receive() -> Message:
            # Over the limit: tell the app the client went away (frameworks turn exceptions raised
            # here into 400s) and answer 413 ourselves once it returns.
            nonlocal seen, too_large
            if too_large:
                return {"type": "http.disconnect"}
            message = await receive()
            if message["type"] == "http.request":
                seen += len(message.get("body", b""))
                if seen > limit:
                    too_large = True
                    return {"type": "http.disconnect"}
            return message

        async def guarded_send(message: Message) -> None:
            nonlocal started
            if too_large and not started:
                return  # the app's reply to a cut-off body is replaced by the 413
            if message["type"] == "http.response.start":
                started = True
            await send(message)

        try:
            await self.app(scope, limited_receive, guarded_send)
        except Exception:
            if not too_large or started:
                raise
        if too_large and not started:
            await self._reject(scope, receive, send, limit)

    @staticmethod
    async def _reject(scope: Scope, receive: Receive, send: Send, limit: int) -> None:
        response = problem(413, "Payload too large", f"the request body is over the limit of {limit} bytes",
                           instance=scope.get("path"), limit_bytes=limit)
        await response(scope, receive, send)


def _field_of(loc: tuple[Any, ...] | list[Any]) -> str:
    parts = [str(p) for p in loc]
    where = {"query": "query parameter", "path": "path parameter", "header": "header", "body": "body field"}
    if parts and parts[0] in where:
        name = ".".join(parts[1:]) or "body"
        return f"{where[parts[0]]} `{name}`"
    return f"`{'.'.join(parts)}`"


def _allowed_methods(request: Request) -> list[str]:
    from starlette.routing import Match

    methods: set[str] = set()
    for route in request.app.routes:
        match, _ = route.matches({**request.scope, "method": "GET"})
        if match != Match.NONE and getattr(route, "methods", None):
            methods |= set(route.methods)
    return sorted(methods)


def _install_handlers(app: FastAPI) -> None:
    from app.web.errors import html_error, wants_html  # the pages answer errors with HTML pages

    @app.exception_handler(ShoalcastError)
    async def _shoalcast(request: Request, exc: ShoalcastError):  # type: ignore[no-untyped-def]
        if wants_html(request):
            return html_error(exc.status, exc.title, exc.detail)
        extra = {"field": exc.field} if exc.field else {}
        headers = {"WWW-Authenticate": 'APIKey header="X-API-Key"'} if exc.status == 401 else None
        return problem(exc.status, exc.title, exc.detail, instance=request.url.path, headers=headers, **extra)

    @app.exception_handler(RequestValidationError)
    async def _validation(request: Request, exc: RequestValidationError):  # type: ignore[no-untyped-def]
        errors = [
            {"field": _field_of(e.get("loc", ())), "message": str(e.get("msg", "invalid")), "type": str(e.get("type", ""))}
            for e in exc.errors()
        ]
        detail = "; ".join(f"{e['field']}: {e['message']}" for e in errors[:5]) or "invalid request"
        if wants_html(request):
            return html_error(400, "Bad request", detail)
        return problem(422, "Invalid request", detail, instance=request.url.path, errors=errors)

    @app.exception_handler(StarletteHTTPException)
    async def _http(request: Request, exc: StarletteHTTPException):  # type: ignore[no-untyped-def]
        try:
            title = HTTPStatus(exc.status_code).phrase
        except ValueError:
            title = "Error"
        detail = exc.detail if isinstance(exc.detail, str) else title
        if exc.status_code == 404 and detail == "Not Found":
            detail = f"no resource at {request.url.path}"
        if exc.status_code < 400:
            from starlette.responses import Response

            return Response(status_code=exc.status_code, headers=exc.headers)
        headers = dict(exc.headers or {})
        if exc.status_code == 405:  # Starlette lists only the first matching route's methods
            headers["Allow"] = ", ".join(_allowed_methods(request))
        if wants_html(request):
            return html_error(exc.status_code, title, detail, headers=headers)
        return problem(exc.status_code, title, detail, instance=request.url.path, headers=headers)

    @app.exception_handler(Exception)
    async def _unexpected(request: Request, exc: Exception):  # type: ignore[no-untyped-def]
        request_id = uuid.uuid4().hex[:16]
        log.error("unhandled error on %s %s (request %s)", request.method, request.url.path, request_id, exc_info=exc)
        if wants_html(request):
            return html_error(500, "Internal error", f"an unexpected error occurred (request id {request_id})")
        return problem(500, "Internal error", f"an unexpected error occurred (request id {request_id}); it has been logged",
                       instance=request.url.path, request_id=request_id)


class SchedulerState:
    """What /readyz reports: disabled, standby (another process holds the lock) or active."""

    def __init__(self) -> None:
        self.worker: Any = None
        self.thread: threading.Thread | None = None
        self.stop = threading.Event()
        self.error: str | None = None

    @property
    def state(self) -> str:
        if self.worker is None:
            return "disabled" if self.error is None else "error"
        return "active" if self.worker.active.is_set() else "standby"

    def start(self, database_url: str) -> None:
        try:
            from app.ingest.scheduler import Worker

            self.worker = Worker(database_url)
        except Exception as exc:  # noqa: BLE001 - the API serves without a scheduler; /readyz says why
            self.error = f"{type(exc).__name__}: {exc}"
            log.exception("in-process scheduler not started")
            return
        self.thread = threading.Thread(target=self.worker.run, args=(self.stop,), name="shoalcast-scheduler", daemon=True)
        self.thread.start()

    def shutdown(self) -> None:
        self.stop.set()
        if self.thread is not None:
            self.thread.join(timeout=30)


def create_app(settings: Settings | None = None) -> FastAPI:
    settings = settings or get_settings()
    limit_blas_threads(settings.blas_threads)

    @asynccontextmanager
    async def lifespan(app: FastAPI) -> AsyncIterator[None]:
        from app.db.session import get_engine

        configure_logging(settings)
        url = settings.resolved_database_url()
        if url.startswith("sqlite"):  # the embedded default migrates itself (one file, one user)
            from app.db import migrate

            migrate.upgrade(url)
        engine = get_engine(url)
        app.state.database_url = url
        app.state.session_factory = sessionmaker(bind=engine, expire_on_commit=False)
        scheduler = SchedulerState()
        app.state.scheduler = scheduler
        app.state.job_threads = []
        if settings.scheduler_enabled:
            scheduler.start(url)
        try:
            yield
        finally:
            scheduler.shutdown()
            for thread in app.state.job_threads:
                thread.join(timeout=120)  # table builds finish their transaction

    app = FastAPI(
        title="shoalcast",
        version=API_VERSION,
        description=DESCRIPTION,
        lifespan=lifespan,
        generate_unique_id_function=_operation_id,
        docs_url="/docs",
        redoc_url=None,
    )
    app.state.settings = settings
    _install_handlers(app)

    from app.api.routes import agencies, alerts, health, outlooks, sources, spots, verification, windows

    app.include_router(health.router)
    for module in (spots, outlooks, windows, sources, agencies, alerts, verification):
        app.include_router(module.router, prefix="/v1")
    app.include_router(spots.jobs_router, prefix="/v1")

    from app.web import install as install_pages

    install_pages(app)  # HTML pages at /, /spots/{id}, /agencies/{id}, /sources; assets under /static

    @app.get("/metrics", include_in_schema=False)
    def metrics() -> Response:
        """Prometheus text exposition: request counts and latency, ingest, rejects, table builds."""
        return Response(REGISTRY.render(), media_type=METRICS_CONTENT_TYPE)

    # Order: the body limit sits innermost-but-one so a 413 still gets CORS headers and gzip.
    app.add_middleware(BodyLimitMiddleware, max_body_bytes=settings.max_body_bytes,
                       max_upload_bytes=settings.max_upload_bytes)
    app.add_middleware(GZipMiddleware, minimum_size=1024)
    origins = list(settings.cors_origins)
    app.add_middleware(
        CORSMiddleware,
        allow_origins=origins,
        allow_credentials=False,
        allow_methods=["GET", "HEAD", "PUT", "POST", "DELETE", "OPTIONS"],
        allow_headers=["X-API-Key", "If-None-Match", "Content-Type", "Accept"],
        expose_headers=["ETag", "Location", "Cache-Control", "X-Request-ID"],
        max_age=600,
    )
    app.add_middleware(ObservabilityMiddleware)  # outermost: counts and times every answer
    return app
