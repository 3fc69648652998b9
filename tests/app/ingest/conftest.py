"""A real HTTP server on 127.0.0.1 with scripted replies, tiny realtime sets, and a source helper."""

from __future__ import annotations

import hashlib
import threading
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

import numpy as np
import pytest


@dataclass
class Reply:
    status: int = 200
    body: bytes = b""
    headers: dict[str, str] = field(default_factory=dict)
    delay_s: float = 0.0  # wait before answering (to run past the client's timeout)
    truncate: bool = False  # declare the full Content-Length, send half, close
    chunked: bool = False  # no Content-Length: the size limit must work on the stream


class Static:
    """A file with an ETag: 304 when If-None-Match matches, else 200. Change `body` to publish anew."""

    def __init__(self, body: bytes, *, etag: bool = True) -> None:
        self.body = body
        self.etag = etag

    def __call__(self, headers: dict[str, str]) -> Reply:
        tag = '"' + hashlib.sha256(self.body).hexdigest()[:16] + '"'
        if self.etag and headers.get("if-none-match") == tag:
            return Reply(304)
        return Reply(200, self.body, {"ETag": tag} if self.etag else {})


Route = Callable[[dict[str, str]], Reply] | list[Reply]


class Server:
    def __init__(self) -> None:
        self.routes: dict[str, Route] = {}
        self.requests: list[tuple[str, dict[str, str]]] = []
        self.stop = threading.Event()
        self.lock = threading.Lock()
        server = self

        class Handler(BaseHTTPRequestHandler):
            def log_message(self, *args: object) -> None:  # keep test output quiet
                pass

            def do_GET(self) -> None:  # noqa: N802 - stdlib name
                headers = {k.lower(): v for k, v in self.headers.items()}
                with server.lock:
                    server.requests.append((self.path, headers))
                    route = server.routes.get(self.path)
                    if route is None:
                        reply = Reply(404, b"no such file")
                    elif isinstance(route, list):
                        reply = route.pop(0) if len(route) > 1 else route[0]
                    else:
                        reply = route(headers)
                if reply.delay_s and server.stop.wait(reply.delay_s):
                    return
                try:
                    self.send_response(reply.status)
                    for k, v in reply.headers.items():
                        self.send_header(k, v)
                    if reply.chunked:
                        self.send_header("Transfer-Encoding", "chunked")
                        self.end_headers()
                        for i in range(0, len(reply.body), 1024):
                            piece = reply.body[i : i + 1024]
                            self.wfile.write(f"{len(piece):x}\r\n".encode() + piece + b"\r\n")
                        self.wfile.write(b"0\r\n\r\n")
                        return
                    self.send_header("Content-Length", str(len(reply.body)))
                    self.end_headers()
                    if reply.status != 304:
                        self.wfile.write(reply.body[: len(reply.body) // 2] if reply.truncate else reply.body)
                    if reply.truncate:
                        self.close_connection = True
                except (BrokenPipeError, ConnectionResetError):  # the client gave up (timeout)
                    pass

        self.httpd = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
        self.httpd.daemon_threads = True
        self.base = f"http://127.0.0.1:{self.httpd.server_address[1]}"

    def count(self, path: str) -> int:
        with self.lock:
            return sum(1 for p, _ in self.requests if p == path)

    def headers_of(self, path: str) -> list[dict[str, str]]:
        with self.lock:
            return [h for p, h in self.requests if p == path]


@pytest.fixture
def server() -> Iterator[Server]:
    srv = Server()
    thread = threading.Thread(target=srv.httpd.serve_forever, kwargs={"poll_interval": 0.05}, daemon=True)
    thread.start()
    try:
        yield srv
    finally:
        srv.stop.set()
        srv.httpd.shutdown()
        srv.httpd.server_close()
        thread.join(timeout=5)


FREQ = np.array([0.05, 0.08, 0.11, 0.14, 0.2])
T0 = datetime(2030, 1, 1, 0, 0, tzinfo=UTC)  # fictional times


def make_records(n: int, *, start: datetime = T0, scale: float = 1.0) -> list:
    from app.formats.records import SpectrumRecord

    out = []
    for i in range(n):
        dens = scale * np.array([0.5, 2.0, 1.2, 0.6, 0.1]) * (1 + 0.1 * i)
        out.append(
            SpectrumRecord(
                station="zz901",
                time=start + timedelta(hours=i),
                frequency=FREQ,
                density=dens,
                r1=np.full(5, 0.6),
                r2=np.full(5, 0.3),
                alpha1_deg=np.full(5, 265.0),
                alpha2_deg=np.full(5, 270.0),
                separation_frequency=0.1,
            )
        )
    return out


def realtime_files(records: list, station: str = "zz901") -> dict[str, bytes]:
    """{file name: bytes} for the five-file realtime set of `records`."""
    from app.formats.ndbc_realtime import write_realtime_set

    return {f"{station}.{suffix}": text.encode() for suffix, text in write_realtime_set(records).items()}


def add_test_source(url: str, source_id: str, urls: list[str], *, fmt: str = "spectral-text-realtime", poll_minutes: float = 30.0) -> None:
    from app.db.session import session_scope
    from app.ingest.sources import add_source
    from app.schemas.sources import SourceConfig

    config = SourceConfig(id=source_id, name=f"Test source {source_id}", format=fmt, latitude=10.0, longitude=19.5,
                          urls=urls, poll_minutes=poll_minutes)
    with session_scope(url) as session:
        add_source(session, config)


def fast_fetcher(**kw):  # type: ignore[no-untyped-def]
    from app.ingest.fetch import Fetcher

    options = dict(timeout_s=0.5, retries=2, max_bytes=1_000_000, backoff_base_s=0.01, backoff_cap_s=0.05,
                   retry_after_cap_s=0.05)
    options.update(kw)
    return Fetcher(**options)


@pytest.fixture
def fetcher() -> Iterator:
    f = fast_fetcher()
    yield f
    f.close()


@pytest.fixture
def helpers():  # type: ignore[no-untyped-def]
    """The module-level helpers, for tests (import mode importlib cannot import conftest by name)."""

    class H:
        Reply = Reply
        Static = Static
        make_records = staticmethod(make_records)
        realtime_files = staticmethod(realtime_files)
        add_source = staticmethod(add_test_source)
        fast_fetcher = staticmethod(fast_fetcher)

    return H
