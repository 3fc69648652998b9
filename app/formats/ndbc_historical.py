"""NDBC historical annual spectral files: swden `w`, swdir `d`, swdir2 `i`, swr1 `j`, swr2 `k`.

Layout (docs/formats.md §1.5): one header line whose column names after the time columns are the
frequencies [Hz] (`.0200 .0325 ...`); plain values, no parentheses; 999/999.0/999.00 missing. Time
layouts: `#YY MM DD hh mm` (2007+), `YYYY MM DD hh mm` without `#` (2005-06), `YYYY MM DD hh` (no
minutes, 2000-04) and 2-digit `YY` (pre-2000, taken as 19YY). Grids: 47 bands (2007+) and the old
38-band 0.03-0.40 Hz grid; several files (years) may be joined with different grids.

r1/r2 are stored ×100. Defensive rule, per file: divide by 100 only if some non-missing value > 1;
a note records which rule fired.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np

from app.formats import _ndbc_join as nj
from app.formats.records import ParseResult, Reject

__all__ = ["LETTERS", "kind_of", "parse_historical_file", "parse_historical_set", "read_historical_set"]

LETTERS = {"w": "density", "d": "alpha1", "i": "alpha2", "j": "r1", "k": "r2"}
_LABEL = {"density": "swden (w)", "alpha1": "swdir (d)", "alpha2": "swdir2 (i)", "r1": "swr1 (j)",
          "r2": "swr2 (k)"}
_NAME = re.compile(r"^(?P<station>[a-z0-9]+?)(?P<letter>[wdijk])b?(?P<year>\d{4}|[1-9a-c])(?:_old)?(?:\.|$)",
                   re.IGNORECASE)
_TIME_NAMES = {"#yy", "yy", "yyyy", "#yyyy", "mm", "dd", "hh", "#yr", "yr", "mo", "dy", "hr", "mn"}


def _split_name(name: str) -> tuple[str, str | None]:
    m = _NAME.match(Path(name).name)
    if m is None:
        return "", None
    return m.group("station"), LETTERS[m.group("letter").lower()]


def kind_of(name: str) -> str | None:
    """'density' | 'alpha1' | 'alpha2' | 'r1' | 'r2' from `<STN><letter><YYYY>.txt[.gz]`."""
    return _split_name(name)[1]


def _parse_header(line: str) -> tuple[int, np.ndarray] | str:
    tokens = line.split()
    n_time = 0
    for tok in tokens:
        if tok.lower() in _TIME_NAMES:
            n_time += 1
        else:
            break
    if n_time not in (4, 5):
        return f"expected 4 or 5 time columns (YY MM DD hh [mm]), found {n_time}"
    try:
        freq = np.array([float(t) for t in tokens[n_time:]])
    except ValueError:
        return "frequency header: column names after the time columns must be frequencies in Hz"
    if freq.size == 0 or np.any(freq <= 0) or np.any(np.diff(freq) <= 0):
        return "frequency header: frequencies must be positive and increasing"
    return n_time, freq


def _time(tokens: list[str]) -> datetime:
    y = int(tokens[0])
    if len(tokens[0]) <= 2:
        y += 1900  # 2-digit years appear only in pre-2000 files
    mi = int(tokens[4]) if len(tokens) == 5 else 0
    return datetime(y, int(tokens[1]), int(tokens[2]), int(tokens[3]), mi, tzinfo=UTC)


def parse_historical_file(text: str, *, name: str, kind: str | None = None
                          ) -> tuple[list[nj.Row], list[Reject], list[str]]:
    """Parse one annual file into checked rows, rejects and notes. `kind` defaults from `name`."""
    kind = kind or kind_of(name)
    if kind is None:
        raise ValueError(f"`name` {name!r} does not look like <STN>{{w,d,i,j,k}}<YYYY>.txt")
    rejects: list[Reject] = []
    notes: list[str] = []
    lines = text.splitlines()
    header = None
    parsed: list[tuple[int, str, datetime, np.ndarray]] = []
    for n, line in enumerate(lines, start=1):
        s = line.strip()
        if not s:
            continue
        if header is None:
            got = _parse_header(s.lstrip("#").strip() if s.startswith("#") and s[1:2].isspace() else s)
            if isinstance(got, str):
                rejects.append(Reject(name, n, "header", got, line))
                return [], rejects, notes
            header = got
            continue
        if s.startswith("#"):
            continue  # a units line, if any
        n_time, freq = header
        tokens = s.split()
        if len(tokens) != n_time + freq.size:
            rejects.append(Reject(name, n, "row", f"wrong count: expected {n_time} time + {freq.size} values, "
                                  f"got {len(tokens)} tokens", line))
            continue
        try:
            t = _time(tokens[:n_time])
        except ValueError as exc:
            rejects.append(Reject(name, n, "time", f"invalid date/time: {exc}", line))
            continue
        vals = nj.parse_float_tokens(tokens[n_time:], kind, name, n, line)
        if isinstance(vals, Reject):
            rejects.append(vals)
            continue
        parsed.append((n, line, t, np.where(vals == nj.SENTINEL, np.nan, vals)))
    if header is None:
        rejects.append(Reject(name, None, "header", "empty file: no frequency header line"))
        return [], rejects, notes
    scale = 1.0
    if kind in ("r1", "r2") and parsed:
        biggest = max((float(np.nanmax(v)) for *_, v in parsed if np.any(np.isfinite(v))), default=0.0)
        if biggest > 1.0:
            scale = 0.01
            notes.append(f"{name}: {kind} values up to {biggest:g} > 1: divided by 100 (historical ×100 scaling)")
        else:
            notes.append(f"{name}: all {kind} values <= 1: taken as already 0..1 (no ×100 rescale)")
    rows = []
    for n, line, t, vals in parsed:
        vals = vals * scale
        problem = nj.check_values(kind, vals, name, n, line)
        if problem is not None:
            rejects.append(problem)
            continue
        rows.append(nj.Row(name, n, t, header[1], vals, None, line))
    return rows, rejects, notes


def parse_historical_set(files: Mapping[str, str], *, station: str | None = None,
                         tolerance: timedelta = timedelta(minutes=20)) -> ParseResult:
    """Parse {file name: text} (any years, any of w/d/i/j/k) and join them into SpectrumRecords."""
    rows: dict[str, list[nj.Row]] = {}
    rejects: list[Reject] = []
    notes: list[str] = []
    for name, text in files.items():
        stn, kind = _split_name(name)
        if kind is None:
            rejects.append(Reject(name, None, "file", "name is not <STN>{w,d,i,j,k}<YYYY>.txt"))
            continue
        if station is None:
            station = stn
        got, rej, note = parse_historical_file(text, name=name, kind=kind)
        rows.setdefault(kind, []).extend(got)
        rejects.extend(rej)
        notes.extend(note)
    for kind in rows:
        rows[kind] = nj.drop_duplicates(rows[kind], rejects)
    return nj.join(station or "", rows, _LABEL, tolerance, rejects, notes)


def read_historical_set(paths: Iterable[str | Path], *, station: str | None = None,
                        tolerance: timedelta = timedelta(minutes=20)) -> ParseResult:
    """Read plain or gzip (`.gz`) files and parse them as one set."""
    import gzip

    files = {}
    for p in paths:
        raw = Path(p).read_bytes()
        if raw[:2] == b"\x1f\x8b":
            raw = gzip.decompress(raw)
        files[str(p)] = raw.decode("utf-8", errors="replace")
    return parse_historical_set(files, station=station, tolerance=tolerance)
