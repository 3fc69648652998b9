"""The source registry: add (from TOML or the API), list with health."""

from __future__ import annotations

import ipaddress
import socket
from pathlib import Path
from urllib.parse import urlsplit

from sqlalchemy import func, select
from sqlalchemy.orm import Session, selectinload

from app.db.tables import Observation, Source, SourceHealth
from app.errors import BadInput, NotFound
from app.schemas.sources import SourceConfig, SourceHealthPublic, SourcePublic
from app.schemas.toml import load_toml_model

__all__ = ["add_source", "check_remote_url", "get_source", "list_sources", "load_source_toml", "source_public"]


def load_source_toml(path: Path | str) -> SourceConfig:
    """Read SOURCE.toml; `paths` become file:// URLs relative to the file's folder."""
    path = Path(path)
    config = load_toml_model(path, SourceConfig)
    if config.paths:
        base = path.parent.resolve()
        urls = list(config.urls) + [(base / p).resolve().as_uri() for p in config.paths]
        config = config.model_copy(update={"urls": urls, "paths": []})
    return config


def check_remote_url(url: str) -> None:
    """Refuse file:// and loopback/private targets (for sources added through the API)."""
    try:
        parts = urlsplit(url)
        host = (parts.hostname or "").lower().rstrip(".")
    except ValueError as exc:  # e.g. "Invalid IPv6 URL"
        raise BadInput(f"URL {url!r}: {exc}", field="urls") from exc
    if parts.scheme not in ("http", "https"):
        raise BadInput(f"URL {url!r}: only http and https are allowed here", field="urls")
    if not host or host == "localhost" or host.endswith(".localhost"):
        raise BadInput(f"URL {url!r}: loopback targets are not allowed", field="urls")
    ip = _ip_of(host)
    if ip is None:
        return
    if ip.is_loopback or ip.is_private or ip.is_link_local or ip.is_unspecified or ip.is_multicast:
        raise BadInput(f"URL {url!r}: loopback and private addresses are not allowed", field="urls")


def _ip_of(host: str) -> ipaddress.IPv4Address | ipaddress.IPv6Address | None:
    """The address a literal host names, in any spelling the resolver accepts (127.1, 0x7f000001,
    2130706433, ...); None for a DNS name."""
    try:
        return ipaddress.ip_address(host)
    except ValueError:
        pass
    try:
        return ipaddress.IPv4Address(socket.inet_aton(host))
    except OSError:
        return None


def add_source(session: Session, config: SourceConfig, *, remote_only: bool = False) -> Source:
    """Add or replace a source (its observations and health are kept when it is replaced)."""
    if remote_only:
        for url in config.urls:
            check_remote_url(url)
    if not config.urls:
        raise BadInput("a source needs at least one URL or path", field="urls")
    source = session.get(Source, config.id)
    if source is None:
        source = Source(id=config.id)
        session.add(source)
    source.name = config.name
    source.format = config.format
    source.latitude = config.latitude
    source.longitude = config.longitude
    source.depth_m = config.depth_m
    source.urls = list(config.urls)
    source.poll_minutes = config.poll_minutes
    source.config = config.model_dump(mode="json")
    source.public_only = remote_only
    if session.get(SourceHealth, config.id) is None:
        session.add(SourceHealth(source_id=config.id, stored=0, rejected=0, validators={}))
    session.flush()
    return source


def get_source(session: Session, source_id: str) -> Source:
    source = session.get(Source, source_id)
    if source is None:
        raise NotFound(f"no source with id {source_id!r}")
    return source


def source_public(source: Source, *, count: int, latest) -> SourcePublic:  # type: ignore[no-untyped-def]
    h = source.health
    health = SourceHealthPublic(
        last_attempt=h.last_attempt if h else None,
        last_success=h.last_success if h else None,
        last_error=h.last_error if h else None,
        last_error_at=h.last_error_at if h else None,
        stored=h.stored if h else 0,
        rejected=h.rejected if h else 0,
    )
    return SourcePublic(
        id=source.id,
        name=source.name,
        format=source.format,
        latitude=source.latitude,
        longitude=source.longitude,
        depth_m=source.depth_m,
        urls=list(source.urls),
        poll_minutes=source.poll_minutes,
        observations=count,
        latest_time=latest,
        health=health,
    )


def list_sources(session: Session) -> list[SourcePublic]:
    stats = {
        sid: (n, latest)
        for sid, n, latest in session.execute(
            select(Observation.source_id, func.count(Observation.id), func.max(Observation.time)).group_by(Observation.source_id)
        )
    }
    out = []
    for source in session.scalars(select(Source).options(selectinload(Source.health)).order_by(Source.id)):
        n, latest = stats.get(source.id, (0, None))
        if latest is not None and latest.tzinfo is None:  # SQLite aggregate bypasses the column type
            from datetime import UTC

            latest = latest.replace(tzinfo=UTC)
        out.append(source_public(source, count=n, latest=latest))
    return out
