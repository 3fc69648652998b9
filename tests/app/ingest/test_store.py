"""validate -> store: idempotent on (source, time, issue time), corrections replace, bad rows are
rejected with file/line/field while the good rows beside them are kept — on SQLite and PostgreSQL."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from sqlalchemy import func, select

from app.db.session import session_scope
from app.db.tables import Observation, OutlookCache, Reject, Source, SourceHealth, Spot
from app.errors import BadInput, NotFound
from app.formats.ndbc_realtime import write_realtime_set
from app.formats.records import SpectrumRecord
from app.ingest.sources import add_source, check_remote_url
from app.ingest.store import ingest_files, record_from_observation
from app.schemas.sources import SourceConfig

FREQ = np.array([0.05, 0.0625, 0.08, 0.1, 0.125, 0.16, 0.2, 0.25])
T0 = datetime(2026, 11, 30, 0, 50, tzinfo=UTC)


def records(n: int = 4, scale: float = 1.0) -> list[SpectrumRecord]:
    out = []
    for i in range(n):
        dens = scale * np.array([0.05, 0.4, 1.6, 1.1, 0.6, 0.3, 0.12, 0.05]) * (1 + 0.1 * i)
        out.append(
            SpectrumRecord(
                station="st01", time=T0 + timedelta(hours=i), frequency=FREQ, density=np.round(dens, 3),
                r1=np.full(8, 0.8), r2=np.full(8, 0.55), alpha1_deg=np.full(8, 265.0), alpha2_deg=np.full(8, 262.0),
            )
        )
    return out


def files(recs: list[SpectrumRecord]) -> dict[str, bytes]:
    return {f"st01.{suffix}": text.encode() for suffix, text in write_realtime_set(recs).items()}


@pytest.fixture
def source(migrated_db: str) -> str:
    cfg = SourceConfig(id="st01", name="Station one", format="spectral-text-realtime", latitude=10.0,
                       longitude=20.0, depth_m=3000, urls=["http://buoys.example.org/st01.data_spec"])
    with session_scope(migrated_db) as s:
        add_source(s, cfg)
        s.add(Spot(id="fed-spot", name="Fed", latitude=10, longitude=20, faces_deg=270, profile={},
                   profile_sha256="x", sources=["st01"]))
        s.add(Spot(id="other-spot", name="Other", latitude=10, longitude=20, faces_deg=270, profile={},
                   profile_sha256="y", sources=["elsewhere"]))
        s.flush()  # no relationship orders these inserts for us
        for sid in ("fed-spot", "other-spot"):
            s.add(OutlookCache(spot_id=sid, input_hash="h", body={}, stale=False))
    return migrated_db


def count(url: str, table) -> int:  # type: ignore[no-untyped-def]
    with session_scope(url) as s:
        return int(s.scalar(select(func.count()).select_from(table)))


def test_store_then_same_again_changes_nothing(source: str) -> None:
    with session_scope(source) as s:
        r1 = ingest_files(s, "st01", files(records()))
    assert (r1.stored, r1.replaced, r1.unchanged, r1.rejected) == (4, 0, 0, 0)
    with session_scope(source) as s:
        r2 = ingest_files(s, "st01", files(records()))
    assert (r2.stored, r2.replaced, r2.unchanged) == (0, 0, 4)
    assert count(source, Observation) == 4
    with session_scope(source) as s:
        h = s.get(SourceHealth, "st01")
        assert h is not None and h.stored == 4 and h.last_success is not None and h.last_error is None


def test_round_trip_of_stored_arrays(source: str) -> None:
    recs = records()
    with session_scope(source) as s:
        ingest_files(s, "st01", files(recs))
    with session_scope(source) as s:
        obs = s.scalars(select(Observation).order_by(Observation.time)).all()
        back = [record_from_observation(o) for o in obs]
    assert [b.time for b in back] == [r.time for r in recs]
    for b, r in zip(back, recs, strict=True):
        np.testing.assert_allclose(b.density, r.density)
        np.testing.assert_allclose(b.alpha1_deg, r.alpha1_deg)


def test_correction_replaces_and_marks_dependent_outlooks_stale(source: str) -> None:
    with session_scope(source) as s:
        ingest_files(s, "st01", files(records()))
        for row in s.scalars(select(OutlookCache)):
            row.stale = False
    corrected = records()
    corrected[2] = records(scale=1.5)[2]
    with session_scope(source) as s:
        rep = ingest_files(s, "st01", files(corrected))
    assert (rep.stored, rep.replaced, rep.unchanged) == (0, 1, 3)
    assert count(source, Observation) == 4
    with session_scope(source) as s:
        stale = {r.spot_id: r.stale for r in s.scalars(select(OutlookCache))}
    assert stale == {"fed-spot": True, "other-spot": False}


def test_bad_rows_are_rejected_with_where_and_good_rows_kept(source: str) -> None:
    f = files(records())
    lines = f["st01.data_spec"].decode().splitlines()
    lines[2] = lines[2].replace("(0.080)", "(zero)")  # a junk token in the third line
    f["st01.data_spec"] = ("\n".join(lines) + "\n").encode()
    with session_scope(source) as s:
        rep = ingest_files(s, "st01", f)
    assert rep.stored == 3 and rep.rejected >= 1
    with session_scope(source) as s:
        rej = s.scalars(select(Reject)).all()
    assert any(r.file == "st01.data_spec" and r.line == 3 for r in rej), [(r.file, r.line, r.reason) for r in rej]


def test_unknown_source_and_empty_batch(source: str) -> None:
    with session_scope(source) as s:
        with pytest.raises(NotFound):
            ingest_files(s, "nope", {"a": b""})
        with pytest.raises(BadInput):
            ingest_files(s, "st01", {})


@pytest.mark.parametrize(
    "url",
    ["file:///etc/passwd", "http://127.0.0.1:9000/x", "http://localhost/x", "http://10.1.2.3/x", "ftp://example.org/x"],
)
def test_api_sources_may_not_target_local_files_or_loopback(url: str) -> None:
    with pytest.raises(BadInput):
        check_remote_url(url)


def test_remote_url_allowed() -> None:
    check_remote_url("https://buoys.example.org/st01.data_spec")


def test_source_replace_keeps_observations(source: str) -> None:
    with session_scope(source) as s:
        ingest_files(s, "st01", files(records()))
    cfg = SourceConfig(id="st01", name="Renamed", format="spectral-text-realtime", latitude=10.0, longitude=20.0,
                       urls=["http://buoys.example.org/st01.data_spec"], poll_minutes=10)
    with session_scope(source) as s:
        add_source(s, cfg)
    with session_scope(source) as s:
        src = s.get(Source, "st01")
        assert src is not None and src.name == "Renamed" and src.poll_minutes == 10
    assert count(source, Observation) == 4
