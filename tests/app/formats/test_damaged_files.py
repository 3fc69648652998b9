"""Property tests: damaged files only ever give good records plus rejects with reasons.

Clean sets are made with our writer, then lines are damaged (truncated, junk token, NaN, negative
density, dropped pair, duplicated, moved). The reader must never raise, never build a record whose
values differ from the clean ones, keep every undamaged row, and name file, line, field and reason.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from app.formats.ndbc_met import parse_met
from app.formats.ndbc_realtime import parse_realtime_set, write_realtime_set
from app.formats.records import SpectrumRecord

FREQ = np.array([0.04, 0.05, 0.06, 0.08, 0.1, 0.125, 0.15, 0.2])
T0 = datetime(2031, 5, 1, tzinfo=UTC)
SUFFIXES = ("data_spec", "swdir", "swdir2", "swr1", "swr2")
DAMAGES = ("truncate", "junk", "nan", "negative", "drop_pair", "duplicate", "move")


def clean_records(n):
    out = []
    for h in range(n):
        k = np.arange(FREQ.size)
        out.append(SpectrumRecord(
            station="s9", time=T0 + timedelta(hours=h), frequency=FREQ,
            density=np.round(0.1 + k * (h + 1) * 0.05, 3), separation_frequency=0.11,
            r1=np.round(0.3 + 0.05 * k, 2), r2=np.round(0.2 + 0.03 * k, 2),
            alpha1_deg=np.round(200 + 10.0 * k + h, 1), alpha2_deg=np.round(190 + 9.0 * k, 1)))
    return out


def damage(line, kind, pos):
    head, rest = line[:17], line[17:]
    if kind == "truncate":
        return [line[: max(1, min(pos, len(line) - 1))]]
    if kind == "junk":
        toks = line.split(" ")
        toks.insert(6 + pos % (len(toks) - 6), "x#7")
        return [" ".join(toks)]
    pairs = rest.split(") ")
    i = pos % len(pairs)
    if kind == "nan":
        val, _, freq = pairs[i].rpartition(" (")
        parts = val.split(" ")
        parts[-1] = "nan"
        pairs[i] = " ".join(parts) + " (" + freq
        return [head + ") ".join(pairs)]
    if kind == "negative":
        val, _, freq = pairs[i].rpartition(" (")
        parts = val.split(" ")
        parts[-1] = "-" + parts[-1].lstrip("-")
        pairs[i] = " ".join(parts) + " (" + freq
        return [head + ") ".join(pairs)]
    if kind == "drop_pair":
        if i == 0:  # keep the Sep_Freq token of .data_spec with the row head
            first = pairs[0].split(" ")
            sep = first[0] + " " if len(first) > 2 else ""
            return [head + sep + ") ".join(pairs[1:])]
        del pairs[i]
        body = ") ".join(pairs)
        return [head + body if body.endswith(")") else head + body + ")"]
    if kind == "duplicate":
        return [line, line]
    return [line]  # "move" is handled by the caller


@st.composite
def damaged_sets(draw):
    n = draw(st.integers(3, 7))
    recs = clean_records(n)
    files = {k: v.splitlines() for k, v in write_realtime_set(recs).items()}
    damaged_times = set()
    ops = draw(st.lists(st.tuples(st.sampled_from(SUFFIXES), st.integers(1, n), st.sampled_from(DAMAGES),
                                  st.integers(0, 400)), min_size=1, max_size=n - 1))
    for suffix, row, kind, pos in ops:
        lines = files[suffix]
        if row >= len(lines) or lines[row] == "":
            continue
        line = lines[row]
        try:
            t = datetime.strptime(line[:16], "%Y %m %d %H %M").replace(tzinfo=UTC)
        except ValueError:
            continue  # this line was already cut short by an earlier op
        if kind == "move":
            lines.insert(len(lines), lines.pop(row))
            continue
        if kind not in ("duplicate",):
            damaged_times.add(t)
        lines[row: row + 1] = damage(line, kind, pos)
    return recs, {f"s9.{k}": "\n".join(v) + "\n" for k, v in files.items()}, damaged_times


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(damaged_sets())
def test_damaged_realtime_sets_give_good_rows_and_rejects(case):
    clean, files, damaged = case
    res = parse_realtime_set(files)  # must not raise
    by_time = {r.time: r for r in clean}
    for rej in res.rejects:
        assert rej.file in files and isinstance(rej.line, int) and rej.line >= 2
        assert rej.field and rej.reason
    times = [r.time for r in res.records]
    assert times == sorted(times) and len(set(times)) == len(times)
    for rec in res.records:
        ref = by_time[rec.time]
        idx = np.searchsorted(FREQ, rec.frequency)
        np.testing.assert_allclose(FREQ[idx], rec.frequency)  # only bands that exist in the clean grid
        np.testing.assert_allclose(rec.density, ref.density[idx])  # never altered values
        if rec.has_coefficients:
            for k in ("r1", "r2", "alpha1_deg", "alpha2_deg"):
                np.testing.assert_allclose(getattr(rec, k), getattr(ref, k)[idx])
    got = {r.time: r for r in res.records}
    for t in by_time:
        if t not in damaged:  # every undamaged row is kept, complete
            assert t in got
            assert got[t].has_coefficients and got[t].frequency.size == FREQ.size


MET_HEAD = ("#YY  MM DD hh mm WDIR WSPD GST  WVHT   DPD   APD MWD   PRES  ATMP  WTMP  DEWP  VIS PTDY  TIDE\n"
            "#yr  mo dy hr mn degT m/s  m/s     m   sec   sec degT   hPa  degC  degC  degC  nmi  hPa    ft\n")
MET_ROW = "2031 05 01 {h:02d} 50 {d:3d}  6.0  7.5   1.6  12.5   8.1 270 1015.2  14.1  15.0  10.2   MM +0.7    MM"
JUNK = st.sampled_from(["", "nan", "MM", "-5", "abc", "99999", "1e400", "(", "999"])


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 23), st.integers(0, 360), st.booleans(), st.integers(0, 18), JUNK),
                min_size=1, max_size=8))
def test_damaged_met_rows_never_raise(rows):
    lines = []
    for h, d, broken, col, junk in rows:
        line = MET_ROW.format(h=h, d=d)
        if broken:
            toks = line.split()
            toks[col] = junk
            line = " ".join(t for t in toks if t)
        lines.append(line)
    res = parse_met(MET_HEAD + "\n".join(lines) + "\n", name="m.txt")
    assert len(res.records) + len(res.rejects) <= len(lines)
    for r in res.rejects:
        assert r.line >= 3 and r.field and r.reason
    for rec in res.records:
        assert rec.wind_dir_deg is None or 0 <= rec.wind_dir_deg <= 360
    clean_hours = [h for h, _, broken, _, _ in rows if not broken]
    for h in clean_hours:
        assert any(r.time.hour == h for r in res.records)
