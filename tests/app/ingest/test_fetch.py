"""Fetching against a real HTTP server on 127.0.0.1: conditional GET, retries, health, size limits,
damaged bodies, file:// sources, and restarts that neither lose nor duplicate."""

from __future__ import annotations

import random
from datetime import UTC, datetime

import pytest
from sqlalchemy import func, select

from app.db.session import dispose_engines, session_scope
from app.db.tables import Observation, SourceHealth
from app.ingest.fetch import backoff_delay, fetch_source, parse_retry_after, reset_fetcher

SET = ("zz901.data_spec", "zz901.swdir", "zz901.swdir2", "zz901.swr1", "zz901.swr2")


def _count(url: str, source_id: str) -> int:
    with session_scope(url) as s:
        return s.scalar(select(func.count(Observation.id)).where(Observation.source_id == source_id))


def _health(url: str, source_id: str) -> SourceHealth:
    with session_scope(url) as s:
        h = s.get(SourceHealth, source_id)
        assert h is not None
        s.expunge(h)
        return h


def _publish(server, helpers, records, *, etag: bool = True) -> list[str]:  # type: ignore[no-untyped-def]
    urls = []
    for name, body in helpers.realtime_files(records).items():
        route = server.routes.get("/" + name)
        if isinstance(route, helpers.Static):
            route.body = body
        else:
            server.routes["/" + name] = helpers.Static(body, etag=etag)
        urls.append(f"{server.base}/{name}")
    return urls


# -- pure pieces ---------------------------------------------------------------------------------------


def test_backoff_delay_stays_within_the_exponential_envelope() -> None:
    # full jitter: uniform in [0, min(cap, base * 2**attempt)] (common practice, "exponential backoff and jitter")
    rng = random.Random(5)
    for attempt in range(8):
        upper = min(3.0, 0.5 * 2**attempt)
        delays = [backoff_delay(attempt, base_s=0.5, cap_s=3.0, rng=rng) for _ in range(200)]
        assert all(0.0 <= d <= upper for d in delays)
        assert max(delays) > 0.5 * upper  # it is spread, not stuck at zero


def test_retry_after_seconds_and_http_date() -> None:
    # RFC 9110 §10.2.3: delay-seconds or an HTTP-date
    assert parse_retry_after("7") == 7.0
    now = datetime(2030, 1, 1, 0, 0, 0, tzinfo=UTC)
    assert parse_retry_after("Tue, 01 Jan 2030 00:00:30 GMT", now=now) == 30.0
    assert parse_retry_after("Tue, 01 Jan 2030 00:00:00 GMT", now=datetime(2030, 1, 1, 0, 1, tzinfo=UTC)) == 0.0
    assert parse_retry_after("soon") is None
    assert parse_retry_after(None) is None


# -- HTTP ----------------------------------------------------------------------------------------------


def test_200_is_stored_then_304_is_nothing_new(migrated_db, server, helpers, fetcher) -> None:  # type: ignore[no-untyped-def]
    urls = _publish(server, helpers, helpers.make_records(3))
    helpers.add_source(migrated_db, "west", urls)

    first = fetch_source(migrated_db, "west", fetcher=fetcher)
    assert first.status == "stored", first.error
    assert first.report.stored == 3 and first.report.rejected == 0
    assert sorted(first.changed) == sorted(SET)
    assert _count(migrated_db, "west") == 3
    h = _health(migrated_db, "west")
    assert h.last_success is not None and h.last_error is None and h.stored == 3
    assert all(h.validators[u].get("etag") for u in urls)

    second = fetch_source(migrated_db, "west", fetcher=fetcher)
    assert second.status == "not_modified"
    assert second.report is None and second.changed == []
    # the second round was conditional and the server answered 304
    for name in SET:
        assert server.headers_of("/" + name)[-1].get("if-none-match") == h.validators[f"{server.base}/{name}"]["etag"]
    assert _count(migrated_db, "west") == 3
    assert _health(migrated_db, "west").stored == 3


def test_one_changed_file_reingests_the_whole_set_from_the_cache(migrated_db, server, helpers, fetcher, tmp_path) -> None:  # type: ignore[no-untyped-def]
    records = helpers.make_records(2)
    urls = _publish(server, helpers, records)
    helpers.add_source(migrated_db, "west", urls)
    assert fetch_source(migrated_db, "west", fetcher=fetcher).status == "stored"

    # only the density file changes (a correction of the newest record's density)
    from app.formats.ndbc_realtime import write_realtime_set

    corrected = helpers.make_records(2, scale=2.0)
    server.routes["/zz901.data_spec"].body = write_realtime_set(corrected)["data_spec"].encode()
    before = {n: server.count("/" + n) for n in SET}
    out = fetch_source(migrated_db, "west", fetcher=fetcher)
    assert out.status == "stored", out.error
    assert out.changed == ["zz901.data_spec"]
    assert out.report.replaced == 2 and out.report.stored == 0
    # the other four answered 304 and came from the cache: one request each, no unconditional re-download
    assert all(server.count("/" + n) == before[n] + 1 for n in SET)
    # and the records still carry their coefficients (the whole set was parsed together)
    with session_scope(migrated_db) as s:
        from app.ingest.store import record_from_observation

        recs = [record_from_observation(o) for o in s.scalars(select(Observation))]
    assert all(r.r1 is not None for r in recs)

    # without the cache the unchanged files are downloaded again, unconditionally
    import shutil

    shutil.rmtree(tmp_path / "var" / "cache")
    server.routes["/zz901.data_spec"].body = write_realtime_set(records)["data_spec"].encode()
    out = fetch_source(migrated_db, "west", fetcher=fetcher)
    assert out.status == "stored" and out.report.replaced == 2
    assert "if-none-match" not in server.headers_of("/zz901.swr1")[-1]
    assert _count(migrated_db, "west") == 2


def test_same_bytes_without_validators_are_nothing_new(migrated_db, server, helpers, fetcher) -> None:  # type: ignore[no-untyped-def]
    urls = _publish(server, helpers, helpers.make_records(2), etag=False)
    helpers.add_source(migrated_db, "west", urls)
    assert fetch_source(migrated_db, "west", fetcher=fetcher).status == "stored"
    again = fetch_source(migrated_db, "west", fetcher=fetcher)
    assert again.status == "not_modified"  # same sha256 as stored
    assert _count(migrated_db, "west") == 2


def test_500_is_retried_then_health_shows_it_and_recovery_clears_it(migrated_db, server, helpers, fetcher) -> None:  # type: ignore[no-untyped-def]
    R = helpers.Reply
    body = helpers.realtime_files(helpers.make_records(2))["zz901.data_spec"]
    server.routes["/zz901.data_spec"] = [R(500), R(503), R(500), R(200, body)]
    helpers.add_source(migrated_db, "west", [f"{server.base}/zz901.data_spec"])

    out = fetch_source(migrated_db, "west", fetcher=fetcher)
    assert out.status == "error"
    assert server.count("/zz901.data_spec") == 3  # 1 + fetch retries (2)
    assert "HTTP 500" in out.error and "after 3 attempts" in out.error
    h = _health(migrated_db, "west")
    assert h.last_error == out.error and h.last_error_at is not None and h.last_success is None
    assert _count(migrated_db, "west") == 0

    ok = fetch_source(migrated_db, "west", fetcher=fetcher)
    assert ok.status == "stored" and ok.report.stored == 2
    h = _health(migrated_db, "west")
    assert h.last_error is None and h.last_success is not None


def test_timeouts_are_retried_then_recorded(migrated_db, server, helpers) -> None:  # type: ignore[no-untyped-def]
    R = helpers.Reply
    body = helpers.realtime_files(helpers.make_records(1))["zz901.data_spec"]
    server.routes["/zz901.data_spec"] = [R(200, body, delay_s=2.0), R(200, body, delay_s=2.0), R(200, body)]
    helpers.add_source(migrated_db, "west", [f"{server.base}/zz901.data_spec"])
    f = helpers.fast_fetcher(timeout_s=0.2, retries=1)
    try:
        out = fetch_source(migrated_db, "west", fetcher=f)
        assert out.status == "error" and "Timeout" in out.error
        assert server.count("/zz901.data_spec") == 2
        assert "Timeout" in _health(migrated_db, "west").last_error
        # the third answer is prompt: recovered
        assert fetch_source(migrated_db, "west", fetcher=f).status == "stored"
        assert _health(migrated_db, "west").last_error is None
    finally:
        f.close()


def test_429_with_retry_after_is_retried_and_404_is_not(migrated_db, server, helpers, fetcher) -> None:  # type: ignore[no-untyped-def]
    R = helpers.Reply
    body = helpers.realtime_files(helpers.make_records(1))["zz901.data_spec"]
    server.routes["/zz901.data_spec"] = [R(429, headers={"Retry-After": "120"}), R(200, body)]
    server.routes["/gone.data_spec"] = [R(404)]
    helpers.add_source(migrated_db, "west", [f"{server.base}/zz901.data_spec"])
    helpers.add_source(migrated_db, "gone", [f"{server.base}/gone.data_spec"])
    # Retry-After 120 s is capped by retry_after_cap_s (0.05 s here), so this returns promptly
    assert fetch_source(migrated_db, "west", fetcher=fetcher).status == "stored"
    assert server.count("/zz901.data_spec") == 2
    out = fetch_source(migrated_db, "gone", fetcher=fetcher)
    assert out.status == "error" and "HTTP 404" in out.error
    assert server.count("/gone.data_spec") == 1  # a 404 is not worth retrying


def test_connection_refused_is_an_error_in_health(migrated_db, helpers, fetcher) -> None:  # type: ignore[no-untyped-def]
    import socket

    with socket.socket() as s:  # a port nobody listens on
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    helpers.add_source(migrated_db, "west", [f"http://127.0.0.1:{port}/zz901.data_spec"])
    out = fetch_source(migrated_db, "west", fetcher=fetcher)
    assert out.status == "error" and "ConnectError" in out.error
    assert out.attempts == {}  # failed before any answer
    assert "ConnectError" in _health(migrated_db, "west").last_error


def test_garbage_and_truncated_bodies_become_rejects_and_good_rows_stay(migrated_db, server, helpers, fetcher) -> None:  # type: ignore[no-untyped-def]
    files = helpers.realtime_files(helpers.make_records(3))
    spec = files["zz901.data_spec"].decode().splitlines()
    # header, 3 rows newest first; add a junk row and cut the oldest row mid-way
    damaged = "\n".join([spec[0], spec[1], "2030 01 01 05 00 not a row at all", spec[2], spec[3][: len(spec[3]) // 2]])
    server.routes["/zz901.data_spec"] = helpers.Static(damaged.encode())
    server.routes["/garbage.data_spec"] = helpers.Static(bytes(range(1, 256)) * 4)
    helpers.add_source(migrated_db, "west", [f"{server.base}/zz901.data_spec"])
    helpers.add_source(migrated_db, "junk", [f"{server.base}/garbage.data_spec"])

    out = fetch_source(migrated_db, "west", fetcher=fetcher)
    assert out.status == "stored"
    assert out.report.stored == 2 and out.report.rejected >= 2
    junk = fetch_source(migrated_db, "junk", fetcher=fetcher)
    assert junk.status == "stored" and junk.report.stored == 0 and junk.report.rejected >= 1
    h = _health(migrated_db, "junk")
    assert h.last_error is None and h.rejected >= 1


def test_nul_bytes_in_a_body_become_rejects(migrated_db, server, helpers, fetcher, request) -> None:  # type: ignore[no-untyped-def]
    server.routes["/nul.data_spec"] = helpers.Static(b"\x00" * 40 + b"\n2030 01 01 00 00 \x00\x01 junk\n")
    helpers.add_source(migrated_db, "nul", [f"{server.base}/nul.data_spec"])
    out = fetch_source(migrated_db, "nul", fetcher=fetcher)  # must not raise, whatever happens
    assert out.status == "stored", out.error
    assert out.report.rejected >= 1


def test_a_broken_transfer_is_retried_not_stored_half(migrated_db, server, helpers, fetcher) -> None:  # type: ignore[no-untyped-def]
    R = helpers.Reply
    body = helpers.realtime_files(helpers.make_records(3))["zz901.data_spec"]
    server.routes["/zz901.data_spec"] = [R(200, body, truncate=True)]
    helpers.add_source(migrated_db, "west", [f"{server.base}/zz901.data_spec"])
    out = fetch_source(migrated_db, "west", fetcher=fetcher)
    assert out.status == "error" and "after 3 attempts" in out.error
    assert _count(migrated_db, "west") == 0


@pytest.mark.parametrize("chunked", [False, True], ids=["content-length", "chunked"])
def test_size_limit_refuses_big_bodies(migrated_db, server, helpers, chunked) -> None:  # type: ignore[no-untyped-def]
    R = helpers.Reply
    server.routes["/big.data_spec"] = [R(200, b"#" + b"x" * 5000, chunked=chunked)]
    helpers.add_source(migrated_db, "west", [f"{server.base}/big.data_spec"])
    f = helpers.fast_fetcher(max_bytes=4096)
    try:
        out = fetch_source(migrated_db, "west", fetcher=f)
    finally:
        f.close()
    assert out.status == "error" and "larger than the limit of 4096 bytes" in out.error
    assert server.count("/big.data_spec") == 1  # not retried
    assert "4096" in _health(migrated_db, "west").last_error


# -- file:// -------------------------------------------------------------------------------------------


def test_file_urls_use_mtime_and_size_as_validators(migrated_db, helpers, fetcher, tmp_path) -> None:  # type: ignore[no-untyped-def]
    import os

    folder = tmp_path / "feed"
    folder.mkdir()
    for name, body in helpers.realtime_files(helpers.make_records(2)).items():
        (folder / name).write_bytes(body)
    urls = [(folder / n).as_uri() for n in SET]
    helpers.add_source(migrated_db, "disk", urls)
    assert fetch_source(migrated_db, "disk", fetcher=fetcher).report.stored == 2
    assert fetch_source(migrated_db, "disk", fetcher=fetcher).status == "not_modified"

    newer = helpers.realtime_files(helpers.make_records(3))
    path = folder / "zz901.data_spec"
    path.write_bytes(newer["zz901.data_spec"])
    st = path.stat()
    os.utime(path, ns=(st.st_atime_ns, st.st_mtime_ns + 10**9))  # coarse clocks: make the change visible
    out = fetch_source(migrated_db, "disk", fetcher=fetcher)
    assert out.status == "stored" and out.changed == ["zz901.data_spec"]
    assert out.report.stored == 1 and out.report.unchanged == 2

    path.unlink()
    gone = fetch_source(migrated_db, "disk", fetcher=fetcher)
    assert gone.status == "error" and "cannot read" in gone.error
    assert _count(migrated_db, "disk") == 3


# -- restarts ------------------------------------------------------------------------------------------


def test_nothing_lost_or_duplicated_across_restarts(migrated_db, server, helpers) -> None:  # type: ignore[no-untyped-def]
    urls = _publish(server, helpers, helpers.make_records(2))
    helpers.add_source(migrated_db, "west", urls)

    def fresh_process_poll():  # type: ignore[no-untyped-def]
        # what a restarted worker starts from: no client, no engines, nothing in memory
        reset_fetcher()
        dispose_engines()
        f = helpers.fast_fetcher()
        try:
            return fetch_source(migrated_db, "west", fetcher=f)
        finally:
            f.close()

    assert fresh_process_poll().report.stored == 2
    assert fresh_process_poll().status == "not_modified"
    _publish(server, helpers, helpers.make_records(4))  # two newer records appear upstream
    out = fresh_process_poll()
    assert out.report.stored == 2 and out.report.unchanged == 2
    assert fresh_process_poll().status == "not_modified"
    with session_scope(migrated_db) as s:
        times = list(s.scalars(select(Observation.time).order_by(Observation.time)))
    assert len(times) == len(set(times)) == 4
    assert _health(migrated_db, "west").stored == 4
