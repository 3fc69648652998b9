"""A small loopback HTTP file server for the demo feed, with conditional GET.

It serves one directory on 127.0.0.1 so the scheduler fetches the synthetic feed over real HTTP:
every file gets a strong ``ETag`` (hash of its bytes) and a ``Last-Modified``; ``If-None-Match``
(weak comparison, lists and ``*``) and, when that is absent, ``If-Modified-Since`` give
``304 Not Modified`` with no body (RFC 9110 §13). Only regular files directly inside the
directory tree are served; anything else is 404.

    with FeedServer("demo/feed") as server:      # a free port unless `port=` is given
        print(server.url)                        # http://127.0.0.1:PORT
        ...

or from a shell: ``python -m app.demo.server DIR [--port N]`` (Ctrl-C stops it cleanly).
"""

from __future__ import annotations

import argparse
import hashlib
import os
import threading
from email.utils import formatdate, parsedate_to_datetime
from http import HTTPStatus
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from pathlib import Path
from urllib.parse import unquote, urlsplit

__all__ = ["FeedServer", "main"]

_TYPES = {
    ".nc": "application/x-netcdf",
    ".toml": "application/toml",
    ".json": "application/json",
}


def _content_type(path: Path) -> str:
    return _TYPES.get(path.suffix, "text/plain; charset=utf-8")


def _etag_matches(header: str, etag: str) -> bool:
    """Weak comparison of an If-None-Match list against our (strong) ETag."""
    if header.strip() == "*":
        return True
    ours = etag.removeprefix("W/")
    return any(tag.strip().removeprefix("W/") == ours for tag in header.split(","))


class _Handler(BaseHTTPRequestHandler):
    server_version = "shoalcast-demo-feed"
    protocol_version = "HTTP/1.1"

    def _resolve(self) -> Path | None:
        root: Path = self.server.root  # type: ignore[attr-defined]
        rel = unquote(urlsplit(self.path).path).lstrip("/")
        try:
            target = (root / rel).resolve()
        except (OSError, ValueError):
            return None
        if target != root and root not in target.parents:
            return None  # no escaping the served directory
        return target if target.is_file() and not target.name.startswith(".") else None

    def _respond(self, head_only: bool) -> None:
        path = self._resolve()
        if path is None:
            body = b"not found\n"
            self.send_response(HTTPStatus.NOT_FOUND)
            self.send_header("Content-Type", "text/plain; charset=utf-8")
            self.send_header("Content-Length", str(len(body)))
            self.end_headers()
            if not head_only:
                self.wfile.write(body)
            self.server.record(self.path, 404)  # type: ignore[attr-defined]
            return
        data = path.read_bytes()
        mtime = int(os.stat(path).st_mtime)  # HTTP dates have 1-s resolution
        etag = '"' + hashlib.sha256(data).hexdigest()[:32] + '"'
        last_modified = formatdate(mtime, usegmt=True)
        status = HTTPStatus.OK
        inm = self.headers.get("If-None-Match")
        ims = self.headers.get("If-Modified-Since")
        if inm is not None:
            if _etag_matches(inm, etag):
                status = HTTPStatus.NOT_MODIFIED
        elif ims is not None:
            try:
                since = parsedate_to_datetime(ims).timestamp()
            except (TypeError, ValueError, IndexError, OverflowError):
                since = None  # an unparsable date is ignored (RFC 9110 §13.1.3)
            if since is not None and mtime <= since:
                status = HTTPStatus.NOT_MODIFIED
        self.send_response(status)
        self.send_header("ETag", etag)
        self.send_header("Last-Modified", last_modified)
        self.send_header("Cache-Control", "no-cache")
        if status == HTTPStatus.OK:
            self.send_header("Content-Type", _content_type(path))
            self.send_header("Content-Length", str(len(data)))
        self.end_headers()
        if status == HTTPStatus.OK and not head_only:
            self.wfile.write(data)
        self.server.record(self.path, int(status))  # type: ignore[attr-defined]

    def do_GET(self) -> None:  # noqa: N802 (http.server's naming)
        self._respond(head_only=False)

    def do_HEAD(self) -> None:  # noqa: N802
        self._respond(head_only=True)

    def log_message(self, format: str, *args) -> None:  # quiet: the demo prints its own lines
        pass


class _Server(ThreadingHTTPServer):
    daemon_threads = True
    allow_reuse_address = True

    def __init__(self, address, root: Path):
        self.root = root
        self.log: list[tuple[str, int]] = []
        self._log_lock = threading.Lock()
        super().__init__(address, _Handler)

    def record(self, path: str, status: int) -> None:
        with self._log_lock:
            self.log.append((path, status))


class FeedServer:
    """Serve `directory` on http://`host`:`port` from a background thread (port 0 = any free port).

    Use as a context manager, or call `start()` / `stop()`; `stop()` is safe to call twice.
    `requests` lists (path, status) of every request served, so a demo can show real polls.
    """

    def __init__(self, directory: str | os.PathLike, *, host: str = "127.0.0.1", port: int = 0):
        root = Path(directory).resolve()
        if not root.is_dir():
            raise ValueError(f"`directory` must be an existing directory, got {str(directory)!r}")
        self.root = root
        self.host = host
        self.port = int(port)
        self._server: _Server | None = None
        self._thread: threading.Thread | None = None

    @property
    def url(self) -> str:
        if self._server is None:
            raise RuntimeError("the feed server is not running")
        return f"http://{self.host}:{self.port}"

    @property
    def requests(self) -> list[tuple[str, int]]:
        if self._server is None:
            return []
        with self._server._log_lock:
            return list(self._server.log)

    def start(self) -> FeedServer:
        if self._server is not None:
            return self
        server = _Server((self.host, self.port), self.root)
        self.port = server.server_address[1]
        self._server = server
        self._thread = threading.Thread(target=server.serve_forever, kwargs={"poll_interval": 0.2},
                                        name=f"demo-feed-{self.port}", daemon=True)
        self._thread.start()
        return self

    def stop(self) -> None:
        server, thread = self._server, self._thread
        if server is None:
            return
        server.shutdown()
        server.server_close()
        if thread is not None:
            thread.join(timeout=5)
        self._server = None
        self._thread = None

    def __enter__(self) -> FeedServer:
        return self.start()

    def __exit__(self, *exc) -> None:
        self.stop()


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Serve a directory on 127.0.0.1 with ETag/304 (demo feed).")
    parser.add_argument("directory")
    parser.add_argument("--port", type=int, default=0)
    args = parser.parse_args(argv)
    server = FeedServer(args.directory, port=args.port).start()
    print(f"serving {server.root} at {server.url} (Ctrl-C stops)", flush=True)
    try:
        threading.Event().wait()
    except KeyboardInterrupt:
        pass
    finally:
        server.stop()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
