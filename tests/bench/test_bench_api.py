"""bench.bench_api's reading of wrk's report and its refusal of a client-bound baseline.

The sample is the text wrk 4.1.0 (Debian package) prints with `--latency` (captured from a run;
the layout is the one in wrk's README), with microseconds, milliseconds and seconds as units.
"""

from __future__ import annotations

import pytest

from bench import bench_api

SAMPLE = """\
Running 1s test @ http://127.0.0.1:18999/
  1 threads and 5 connections
  Thread Stats   Avg      Stdev     Max   +/- Stdev
    Latency     6.09ms    3.48ms  26.52ms   77.04%
    Req/Sec   832.80    193.93     1.22k    80.00%
  Latency Distribution
     50%  815.00us
     75%    7.70ms
     90%   10.52ms
     99%    1.02s
  831 requests in 1.00s, 503.96KB read
  Socket errors: connect 0, read 2, write 0, timeout 3
  Non-2xx or 3xx responses: 7
Requests/sec:    829.87
Transfer/sec:    503.27KB
"""


def test_parse_wrk_reads_rate_percentiles_and_errors() -> None:
    m = bench_api.parse_wrk(SAMPLE)
    assert m["rps"] == pytest.approx(829.87)
    assert m["p50_ms"] == pytest.approx(0.815) and m["p99_ms"] == pytest.approx(1020.0)
    assert (m["requests"], m["socket_errors"], m["bad"]) == (831, 5, 7)


def test_parse_wrk_refuses_what_it_cannot_read() -> None:
    with pytest.raises(ValueError, match="not understood"):
        bench_api.parse_wrk("wrk: command failed")


def test_no_ratio_under_the_floor() -> None:
    assert bench_api.ratio_or_none(600.0, bench_api.BARE_FLOOR - 1) is None
    assert bench_api.ratio_or_none(600.0, 2000.0) == pytest.approx(0.3)
    m = {"p50_ms": 1.0, "p99_ms": 2.0, "socket_errors": 0, "bad": 0}
    rows = bench_api.rows({"hazards 304": {**m, "rps": 400.0}, "hazards 200": {**m, "rps": 600.0}},
                          {"hazards 304": {**m, "rps": 500.0}, "hazards 200": {**m, "rps": 2000.0}}, seconds=3)
    assert rows[1]["ratio"] is None and "no ratio" in rows[1]["result"]  # its baseline was client-bound
    assert rows[2]["ratio"] == pytest.approx(0.3)  # each path against the baseline run just before it
