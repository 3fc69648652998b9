"""Validate -> store: the one code path for `shoalcast ingest`, API uploads and the scheduler.

A batch (the files of one fetch or one command) is parsed, then stored in one transaction together
with its rejects and the source's health, so an interrupted batch is either wholly stored or wholly
retried. Records are unique on (source, time, issue time): the same content again changes nothing;
different content for the same key replaces the old record (a correction).
"""

from __future__ import annotations

import gzip
import io
from collections.abc import Mapping, Sequence
from dataclasses import fields
from datetime import datetime
from typing import Any

import numpy as np
from sqlalchemy import select
from sqlalchemy.orm import Session

from app.db.tables import Observation, OutlookCache, Reject, Source, SourceHealth, Spot, utcnow
from app.errors import BadInput, NotFound
from app.formats.records import MetRecord, ParseResult, SpectrumRecord
from app.formats.records import Reject as ParseReject
from app.observability import FETCH_FAILURES, INGEST_RECORDS
from app.schemas.sources import IngestReport

__all__ = [
    "MAX_REJECTS_STORED",
    "ingest_files",
    "mark_outlooks_stale",
    "parse_payload",
    "record_failure",
    "record_from_observation",
    "store_result",
]

MAX_REJECTS_STORED = 500  # per batch; all are counted in health, the first ones kept with reasons
_ARRAY_FIELDS = ("frequency", "density", "bandwidth", "r1", "r2", "alpha1_deg", "alpha2_deg", "directions_deg", "efth")


def _text(data: bytes) -> str:
    if data[:2] == b"\x1f\x8b":
        data = gzip.decompress(data)
    return data.decode("utf-8", errors="replace")


def parse_payload(fmt: str, files: Mapping[str, bytes], *, station: str | None = None) -> ParseResult:
    """Parse the files of one batch with the reader for `fmt`. Never raises for bad content."""
    if fmt == "spectral-text-realtime":
        from app.formats.ndbc_realtime import parse_realtime_set

        return parse_realtime_set({n: _text(d) for n, d in files.items()}, station=station)
    if fmt == "spectral-text-historical":
        from app.formats.ndbc_historical import parse_historical_set

        return parse_historical_set({n: _text(d) for n, d in files.items()}, station=station)
    if fmt == "met-text":
        from app.formats.ndbc_met import parse_met

        return _merge([parse_met(_text(d), name=n, station=station) for n, d in files.items()])
    if fmt == "cf-netcdf":
        from app.formats.cf_met import parse_cf_file

        return _merge([parse_cf_file(d, name=n) for n, d in files.items()])
    raise BadInput(f"unknown source format {fmt!r}", field="format")


def _merge(results: Sequence[ParseResult]) -> ParseResult:
    records: list[Any] = []
    rejects: list[ParseReject] = []
    notes: list[str] = []
    for r in results:
        records.extend(r.records)
        rejects.extend(r.rejects)
        notes.extend(r.notes)
    records.sort(key=lambda rec: (rec.time, getattr(rec, "station", "")))
    return ParseResult(records=tuple(records), rejects=tuple(rejects), notes=tuple(notes))


def _clean(text: str | None, limit: int) -> str | None:
    """Text safe for any database: PostgreSQL refuses NUL characters in text columns."""
    return None if text is None else text.replace("\x00", "\\0")[:limit]


def _issue_key(issue_time: datetime | None) -> str:
    return "" if issue_time is None else issue_time.strftime("%Y-%m-%dT%H:%M:%SZ")


def _arrays_blob(record: SpectrumRecord) -> bytes:
    buf = io.BytesIO()
    arrays = {n: getattr(record, n) for n in _ARRAY_FIELDS if getattr(record, n) is not None}
    np.savez_compressed(buf, **arrays)
    return buf.getvalue()


def _values(record: SpectrumRecord | MetRecord) -> dict[str, Any]:
    if isinstance(record, MetRecord):
        return {f.name: getattr(record, f.name) for f in fields(record)
                if f.name not in ("time", "station", "issue_time")}  # fmt: skip
    return {"separation_frequency": record.separation_frequency, "source_file": _clean(record.source_file, 500)}


def record_from_observation(obs: Observation) -> SpectrumRecord:
    """Rebuild the SpectrumRecord an observation row was stored from."""
    if obs.kind != "spectrum" or obs.arrays is None:
        raise BadInput(f"observation {obs.id} is not a spectrum")
    with np.load(io.BytesIO(obs.arrays), allow_pickle=False) as z:
        arrays = {n: z[n] for n in z.files}
    return SpectrumRecord(
        station=obs.station,
        time=obs.time,
        issue_time=obs.issue_time,
        separation_frequency=obs.values.get("separation_frequency"),
        source_file=obs.values.get("source_file"),
        **arrays,
    )


def _health(session: Session, source_id: str) -> SourceHealth:
    health = session.get(SourceHealth, source_id)
    if health is None:
        health = SourceHealth(source_id=source_id, stored=0, rejected=0, validators={})
        session.add(health)
    return health


def store_result(session: Session, source: Source, result: ParseResult, *, files: Sequence[str]) -> IngestReport:
    """Store parsed records and rejects for `source` (inside the caller's transaction)."""
    report = IngestReport(source_id=source.id, files=list(files), notes=list(result.notes))
    records = list(result.records)
    if records:
        times = [r.time for r in records]
        existing = {
            (o.kind, o.time, o.issue_key): o
            for o in session.scalars(
                select(Observation).where(
                    Observation.source_id == source.id,
                    Observation.time >= min(times),
                    Observation.time <= max(times),
                )
            )
        }
        seen: set[tuple[str, datetime, str]] = set()
        for rec in records:
            is_met = isinstance(rec, MetRecord)
            kind = "met" if is_met else "spectrum"
            key = (kind, rec.time, _issue_key(getattr(rec, "issue_time", None)))
            if key in seen:  # two stations or files gave the same key within one batch: first wins
                report.unchanged += 1
                continue
            seen.add(key)
            digest = rec.content_hash()
            old = existing.get(key)
            if old is not None and old.content_sha256 == digest:
                report.unchanged += 1
                continue
            blob = None if is_met else _arrays_blob(rec)
            if old is not None:
                old.content_sha256, old.arrays, old.values = digest, blob, _values(rec)
                old.station = rec.station
                old.ingested_at = utcnow()
                report.replaced += 1
            else:
                session.add(
                    Observation(
                        source_id=source.id,
                        station=_clean(rec.station, 64) or "",
                        kind=kind,
                        time=rec.time,
                        issue_time=getattr(rec, "issue_time", None),
                        issue_key=key[2],
                        content_sha256=digest,
                        arrays=blob,
                        values=_values(rec),
                    )
                )
                report.stored += 1
        report.first_time, report.last_time = min(times), max(times)
    for rej in result.rejects[:MAX_REJECTS_STORED]:
        session.add(
            Reject(
                source_id=source.id,
                file=_clean(rej.file, 500) or "",
                line=rej.line,
                field=_clean(rej.field, 100),
                reason=_clean(rej.reason, 4000) or "",
                text=_clean(rej.text or "", 500),
            )
        )
    report.rejected = len(result.rejects)
    report.rejects = [_clean(str(r), 500) or "" for r in result.rejects[:20]]
    health = _health(session, source.id)
    now = utcnow()
    health.last_attempt = now
    health.last_success = now
    health.last_error = None
    health.stored = (health.stored or 0) + report.stored + report.replaced
    health.rejected = (health.rejected or 0) + report.rejected
    if report.stored or report.replaced:
        mark_outlooks_stale(session, source.id)
    session.flush()
    for outcome in ("stored", "replaced", "unchanged", "rejected"):
        if getattr(report, outcome):
            INGEST_RECORDS.inc(getattr(report, outcome), source=source.id, outcome=outcome)
    return report


def record_failure(session: Session, source_id: str, message: str) -> None:
    """Note a failed fetch in the source's health (the scheduler keeps going)."""
    health = _health(session, source_id)
    now = utcnow()
    health.last_attempt = now
    health.last_error = _clean(message, 2000)
    health.last_error_at = now
    session.flush()
    FETCH_FAILURES.inc(source=source_id)


def mark_outlooks_stale(session: Session, source_id: str) -> list[str]:
    """Mark the cached outlooks of every spot fed by `source_id` as stale; return those spot ids."""
    spot_ids = [s.id for s in session.scalars(select(Spot)) if source_id in (s.sources or [])]
    if spot_ids:
        for row in session.scalars(select(OutlookCache).where(OutlookCache.spot_id.in_(spot_ids))):
            row.stale = True
    return spot_ids


def ingest_files(session: Session, source_id: str, files: Mapping[str, bytes]) -> IngestReport:
    """Parse and store the files of one batch for a registered source."""
    source = session.get(Source, source_id)
    if source is None:
        raise NotFound(f"no source with id {source_id!r}")
    if not files:
        raise BadInput("no files given", field="files")
    result = parse_payload(source.format, files, station=source.config.get("station"))
    return store_result(session, source, result, files=list(files))
