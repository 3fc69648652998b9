"""Fetch a source's URLs and hand the batch to the one validate -> store path.

One shared `httpx.Client` (jobs run in the scheduler's thread pool; the client is thread-safe) with
timeouts, bounded retries (exponential backoff with full jitter on connect errors, timeouts, broken
transfers, 5xx, 408 and 429; Retry-After honoured up to a cap), conditional GET from the validators
stored per URL in `SourceHealth.validators`, and a streamed size limit. `file://` URLs are read from
disk with (mtime, size) as validators.

A source's URLs are one batch (a realtime set is five files joined on time), so when any of them
changed the whole set is parsed and stored together. Unchanged files come from a small on-disk cache
(`data_dir/cache/<source>/`), checked against the sha256 kept in the validators; a missing or stale
cache entry is simply downloaded again without conditions. Re-downloading everything would also be
correct, but the cache keeps a 304 a 304 and costs one file per URL.

Validators are written in the same transaction as the records, so they can never run ahead of what
was stored: a crash mid-ingest leaves both old, and the next poll retries the whole batch (the store
is idempotent, so a retry never duplicates). The cache is written after the commit; a crash between
the two only costs a re-download (sha mismatch).
"""

from __future__ import annotations

import email.utils
import hashlib
import logging
import os
import random
import threading
import time
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any
from urllib.parse import unquote, urlsplit
from urllib.request import url2pathname

import httpx
import sqlalchemy as sa
from sqlalchemy.orm import Session, sessionmaker

from app.config import get_settings
from app.db.session import get_engine, scoped
from app.db.tables import Source, SourceHealth, utcnow
from app.errors import FetchError
from app.ingest.guard import PUBLIC_ONLY, GuardedTransport, NonPublicAddress, Resolver, system_resolver
from app.ingest.store import parse_payload, record_failure, store_result
from app.schemas.sources import IngestReport

__all__ = [
    "FetchOutcome",
    "Fetched",
    "Fetcher",
    "backoff_delay",
    "fetch_source",
    "get_fetcher",
    "parse_retry_after",
    "reset_fetcher",
]

log = logging.getLogger(__name__)

RETRY_STATUS = frozenset({408, 429, 500, 502, 503, 504})
USER_AGENT = "shoalcast/0 (+offshore spectra poller)"


def backoff_delay(attempt: int, *, base_s: float, cap_s: float, rng: random.Random | None = None) -> float:
    """Full-jitter exponential backoff: uniform in [0, min(cap, base * 2**attempt)] (attempt from 0)."""
    upper = min(cap_s, base_s * (2.0**attempt))
    return (rng or random).uniform(0.0, upper)


def parse_retry_after(value: str | None, *, now: datetime | None = None) -> float | None:
    """Seconds to wait from a Retry-After header (delta-seconds or HTTP-date, RFC 9110 §10.2.3)."""
    if not value:
        return None
    value = value.strip()
    if value.isdigit():
        return float(value)
    try:
        when = email.utils.parsedate_to_datetime(value)
    except (TypeError, ValueError):
        return None
    if when.tzinfo is None:
        when = when.replace(tzinfo=UTC)
    return max(0.0, (when - (now or datetime.now(UTC))).total_seconds())


@dataclass(frozen=True)
class Fetched:
    """One URL's answer: `body` is None when it has not changed since `validators` were stored."""

    url: str
    name: str
    body: bytes | None
    validators: dict[str, Any]
    attempts: int = 1

    @property
    def not_modified(self) -> bool:
        return self.body is None


def file_name(url: str) -> str:
    """The file name a URL stands for (parsers recognise realtime files by suffix)."""
    path = unquote(urlsplit(url).path)
    return path.rstrip("/").rsplit("/", 1)[-1] or urlsplit(url).netloc or url


class Fetcher:
    """Conditional, size-limited, retried GETs over one shared client."""

    def __init__(
        self,
        *,
        timeout_s: float,
        retries: int,
        max_bytes: int,
        backoff_base_s: float = 0.5,
        backoff_cap_s: float = 30.0,
        retry_after_cap_s: float = 60.0,
        sleep: Callable[[float], None] = time.sleep,
        transport: httpx.BaseTransport | None = None,
        resolver: Resolver = system_resolver,
    ) -> None:
        self.timeout_s = timeout_s
        self.retries = max(0, retries)
        self.max_bytes = max_bytes
        self.backoff_base_s = backoff_base_s
        self.backoff_cap_s = backoff_cap_s
        self.retry_after_cap_s = retry_after_cap_s
        self._sleep = sleep
        self.client = httpx.Client(
            timeout=httpx.Timeout(timeout_s),
            follow_redirects=True,
            max_redirects=5,
            headers={"User-Agent": USER_AGENT},
            # every request passes the guard; only those marked public_only are checked
            transport=GuardedTransport(transport, resolver=resolver),
        )

    @classmethod
    def from_settings(cls, **overrides: Any) -> Fetcher:
        s = get_settings()
        kwargs: dict[str, Any] = dict(timeout_s=s.fetch_timeout_s, retries=s.fetch_retries, max_bytes=s.fetch_max_bytes)
        kwargs.update(overrides)
        return cls(**kwargs)

    def close(self) -> None:
        self.client.close()

    # -- one URL -----------------------------------------------------------------------------------

    def get(
        self, url: str, validators: Mapping[str, Any] | None = None, *, conditional: bool = True, public_only: bool = False
    ) -> Fetched:
        """GET `url`; body None when unchanged (304, same file stat, or same sha256 as stored).

        `public_only` (sources added through the API): no file:// and no connection to a loopback,
        private or otherwise non-public address, checked on every redirect hop (app.ingest.guard)."""
        old = dict(validators or {}) if conditional else {}
        scheme = urlsplit(url).scheme.lower()
        if scheme == "file" and public_only:
            raise FetchError(f"{url}: file:// URLs are not allowed for sources added through the API")
        if scheme == "file":
            fetched = self._get_file(url, old)
        elif scheme in ("http", "https"):
            fetched = self._get_http(url, old, public_only=public_only)
        else:
            raise FetchError(f"{url}: unsupported URL scheme {scheme!r}")
        # A server without validators (or a rewritten file with the same bytes) sends the same content
        # again: that is "nothing new" too.
        if fetched.body is not None and conditional and old.get("sha256") == fetched.validators.get("sha256"):
            return Fetched(url, fetched.name, None, {**old, **fetched.validators}, fetched.attempts)
        return fetched

    def _get_http(self, url: str, old: Mapping[str, Any], *, public_only: bool = False) -> Fetched:
        headers = {}
        if old.get("etag"):
            headers["If-None-Match"] = old["etag"]
        if old.get("last_modified"):
            headers["If-Modified-Since"] = old["last_modified"]
        attempts = 0
        while True:
            attempts += 1
            wait: float | None = None
            try:
                with self.client.stream("GET", url, headers=headers, extensions={PUBLIC_ONLY: public_only}) as resp:
                    if resp.status_code == 304:
                        return Fetched(url, file_name(url), None, dict(old), attempts)
                    if resp.status_code == 200:
                        body = self._read_limited(resp, url)
                        new = {"sha256": hashlib.sha256(body).hexdigest()}
                        if resp.headers.get("ETag"):
                            new["etag"] = resp.headers["ETag"]
                        if resp.headers.get("Last-Modified"):
                            new["last_modified"] = resp.headers["Last-Modified"]
                        return Fetched(url, file_name(url), body, new, attempts)
                    error = FetchError(f"{url}: HTTP {resp.status_code} {resp.reason_phrase}".rstrip())
                    if resp.status_code not in RETRY_STATUS:
                        raise error
                    after = parse_retry_after(resp.headers.get("Retry-After"))
                    if after is not None:
                        wait = min(after, self.retry_after_cap_s)
            except NonPublicAddress as exc:  # a policy refusal: retrying cannot help
                raise FetchError(f"{url}: {exc}") from exc
            except httpx.TransportError as exc:  # connect errors, timeouts, broken or truncated transfers
                error = FetchError(f"{url}: {type(exc).__name__}: {exc or 'no detail'}")
                error.__cause__ = exc
            except httpx.HTTPError as exc:  # e.g. too many redirects, invalid URL: not worth retrying
                raise FetchError(f"{url}: {type(exc).__name__}: {exc}") from exc
            if attempts > self.retries:
                raise FetchError(f"{error.detail} (after {attempts} attempts)") from error.__cause__
            if wait is None:
                wait = backoff_delay(attempts - 1, base_s=self.backoff_base_s, cap_s=self.backoff_cap_s)
            log.info("retrying %s in %.2f s: %s", url, wait, error.detail)
            self._sleep(wait)

    def _read_limited(self, resp: httpx.Response, url: str) -> bytes:
        declared = resp.headers.get("Content-Length")
        if declared and declared.isdigit() and int(declared) > self.max_bytes:
            raise FetchError(f"{url}: body of {int(declared)} bytes is larger than the limit of {self.max_bytes} bytes")
        chunks: list[bytes] = []
        size = 0
        for chunk in resp.iter_bytes():
            size += len(chunk)
            if size > self.max_bytes:
                raise FetchError(f"{url}: body is larger than the limit of {self.max_bytes} bytes")
            chunks.append(chunk)
        return b"".join(chunks)

    def _get_file(self, url: str, old: Mapping[str, Any]) -> Fetched:
        parts = urlsplit(url)
        path = Path(url2pathname(unquote(parts.path)))
        for attempt in range(1, 4):
            try:
                before = path.stat()
                stat = {"mtime_ns": before.st_mtime_ns, "size": before.st_size}
                if old.get("mtime_ns") == stat["mtime_ns"] and old.get("size") == stat["size"]:
                    return Fetched(url, path.name, None, dict(old), attempt)
                if before.st_size > self.max_bytes:
                    raise FetchError(f"{url}: file of {before.st_size} bytes is larger than the limit of {self.max_bytes} bytes")
                with path.open("rb") as fh:
                    body = fh.read(self.max_bytes + 1)
                after = path.stat()
            except OSError as exc:
                raise FetchError(f"{url}: cannot read {path}: {exc.strerror or exc}") from exc
            if len(body) > self.max_bytes:
                raise FetchError(f"{url}: file is larger than the limit of {self.max_bytes} bytes")
            # Being rewritten while we read: try again shortly rather than store a torn file.
            if (after.st_mtime_ns, after.st_size) == (before.st_mtime_ns, before.st_size) and len(body) == after.st_size:
                return Fetched(url, path.name, body, {**stat, "sha256": hashlib.sha256(body).hexdigest()}, attempt)
            self._sleep(backoff_delay(attempt - 1, base_s=min(self.backoff_base_s, 0.2), cap_s=1.0))
        raise FetchError(f"{url}: file kept changing while being read (tried 3 times)")


_fetcher: Fetcher | None = None
_fetcher_lock = threading.Lock()


def get_fetcher() -> Fetcher:
    """The process-wide fetcher (built from settings on first use)."""
    global _fetcher
    with _fetcher_lock:
        if _fetcher is None:
            _fetcher = Fetcher.from_settings()
        return _fetcher


def reset_fetcher() -> None:
    """Close and forget the shared fetcher (settings changed, tests, shutdown)."""
    global _fetcher
    with _fetcher_lock:
        if _fetcher is not None:
            _fetcher.close()
        _fetcher = None


# -- the on-disk cache of the last stored body per URL ---------------------------------------------------


def _cache_path(cache_dir: Path, source_id: str, url: str) -> Path:
    return cache_dir / source_id / hashlib.sha256(url.encode()).hexdigest()[:32]


def _cache_read(cache_dir: Path, source_id: str, url: str, sha256: str | None) -> bytes | None:
    try:
        body = _cache_path(cache_dir, source_id, url).read_bytes()
    except OSError:
        return None
    return body if sha256 and hashlib.sha256(body).hexdigest() == sha256 else None


def _cache_write(cache_dir: Path, source_id: str, url: str, body: bytes) -> None:
    path = _cache_path(cache_dir, source_id, url)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        tmp = path.with_suffix(f".tmp{os.getpid()}.{threading.get_ident()}")
        tmp.write_bytes(body)
        os.replace(tmp, path)  # atomic: a reader sees the old or the new body, never half
    except OSError as exc:  # the cache is an optimisation: a failed write costs a re-download later
        log.warning("cannot write fetch cache %s: %s", path, exc)


# -- a whole source ------------------------------------------------------------------------------------


@dataclass
class FetchOutcome:
    """What one poll of a source did. status: stored | not_modified | error."""

    source_id: str
    status: str
    files: list[str] = field(default_factory=list)
    changed: list[str] = field(default_factory=list)
    attempts: dict[str, int] = field(default_factory=dict)
    report: IngestReport | None = None
    error: str | None = None

    @property
    def new_records(self) -> int:
        return (self.report.stored + self.report.replaced) if self.report else 0

    def to_dict(self) -> dict[str, Any]:
        r = self.report
        return {
            "source_id": self.source_id,
            "status": self.status,
            "files": list(self.files),
            "changed": list(self.changed),
            "attempts": dict(self.attempts),
            "stored": r.stored if r else 0,
            "replaced": r.replaced if r else 0,
            "unchanged": r.unchanged if r else 0,
            "rejected": r.rejected if r else 0,
            "rejects": list(r.rejects) if r else [],
            "error": self.error,
        }


Target = str | sa.Engine | Session | None


def _sessionmaker(target: Target) -> sessionmaker[Session]:
    if isinstance(target, Session):
        bind = target.get_bind()
        engine = bind if isinstance(bind, sa.Engine) else bind.engine
    elif isinstance(target, sa.Engine):
        engine = target
    else:
        engine = get_engine(target)
    return sessionmaker(bind=engine, expire_on_commit=False)


def _note_failure(factory: sessionmaker[Session], source_id: str, message: str) -> None:
    try:
        with scoped(factory) as session:
            record_failure(session, source_id, message)
    except Exception:  # noqa: BLE001 - the database itself may be down; the log still has it
        log.exception("cannot record the failure of source %s", source_id)


def fetch_source(
    session_or_url: Target,
    source_id: str,
    *,
    fetcher: Fetcher | None = None,
    cache_dir: Path | None = None,
) -> FetchOutcome:
    """Poll every URL of a source once and store the batch if anything changed. Never raises for
    fetch or content problems: they end in the outcome and the source's health.

    `session_or_url`: a database URL (None = settings), an Engine, or a Session whose bind is used
    (this function runs its own short transactions: network I/O never holds a database lock).
    """
    factory = _sessionmaker(session_or_url)
    fetcher = fetcher or get_fetcher()
    cache_dir = cache_dir or (get_settings().data_dir / "cache")
    with scoped(factory) as session:
        source = session.get(Source, source_id)
        if source is None:
            return FetchOutcome(source_id, "error", error=f"no source with id {source_id!r}")
        urls = list(source.urls)
        public_only = bool(source.public_only)
        health = session.get(SourceHealth, source_id)
        stored_validators: dict[str, Any] = dict(health.validators or {}) if health else {}
    outcome = FetchOutcome(source_id, "error", files=[file_name(u) for u in urls])
    if not urls:
        outcome.error = "the source has no URLs"
        _note_failure(factory, source_id, outcome.error)
        return outcome
    try:
        fetched = [fetcher.get(u, stored_validators.get(u), public_only=public_only) for u in urls]
        outcome.attempts = {f.url: f.attempts for f in fetched}
        outcome.changed = [f.name for f in fetched if not f.not_modified]
        if not outcome.changed:
            with scoped(factory) as session:
                _note_success_without_change(session, source_id)
            outcome.status = "not_modified"
            return outcome
        # The whole set goes to the parser: unchanged files from the cache, else downloaded again.
        batch: list[Fetched] = []
        for f in fetched:
            if f.not_modified:
                body = _cache_read(cache_dir, source_id, f.url, f.validators.get("sha256"))
                if body is None:
                    f = fetcher.get(f.url, conditional=False, public_only=public_only)
                    outcome.attempts[f.url] += f.attempts
            batch.append(f if f.body is not None else Fetched(f.url, f.name, body, f.validators, f.attempts))
    except FetchError as exc:
        outcome.error = exc.detail
        _note_failure(factory, source_id, exc.detail)
        return outcome
    files = _named(batch)
    try:
        with scoped(factory) as session:
            source = session.get(Source, source_id)
            if source is None:  # removed while we fetched
                outcome.error = f"source {source_id!r} was removed during the fetch"
                return outcome
            result = parse_payload(source.format, files, station=(source.config or {}).get("station"))
            outcome.report = store_result(session, source, result, files=list(files))
            health = session.get(SourceHealth, source_id)
            assert health is not None  # store_result created it
            health.validators = {f.url: f.validators for f in batch}
            _before_commit_hook(source_id)
    except Exception as exc:  # noqa: BLE001 - a job must never die; the batch is retried next poll
        log.exception("storing source %s failed", source_id)
        # the driver's own message, first line: SQLAlchemy's text would carry the whole statement
        reason = str(getattr(exc, "orig", None) or exc).strip().splitlines()[0][:300] if str(exc) else ""
        outcome.error = f"store failed: {type(exc).__name__}: {reason}"
        _note_failure(factory, source_id, outcome.error)
        return outcome
    for f in batch:
        if f.body is not None:
            _cache_write(cache_dir, source_id, f.url, f.body)
    outcome.status = "stored"
    return outcome


def _named(batch: list[Fetched]) -> dict[str, bytes]:
    """{file name: body}; names made unique if two URLs end in the same name."""
    files: dict[str, bytes] = {}
    for f in batch:
        name = f.name
        n = 1
        while name in files:
            n += 1
            name = f"{n}-{f.name}"
        assert f.body is not None
        files[name] = f.body
    return files


def _note_success_without_change(session: Session, source_id: str) -> None:
    """A poll that found nothing new is still a success: it clears an earlier error."""
    health = session.get(SourceHealth, source_id)
    if health is None:
        health = SourceHealth(source_id=source_id, stored=0, rejected=0, validators={})
        session.add(health)
    now = utcnow()
    health.last_attempt = now
    health.last_success = now
    health.last_error = None


def _before_commit_hook(source_id: str) -> None:
    """Test seam: the crash tests replace this to stop a worker between store and commit."""
