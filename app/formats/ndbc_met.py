"""NDBC standard meteorological text file (`.txt` realtime, `h` historical) -> MetRecord.

Layout (docs/formats.md §1.4): a names line (`#YY MM DD hh mm WDIR WSPD GST WVHT DPD APD MWD PRES
ATMP WTMP DEWP VIS [PTDY] TIDE`), usually a units line, then rows. Realtime writes missing as `MM`;
historical files are 9-filled with a sentinel **per column** (WDIR/MWD 999, WSPD/GST/VIS 99.0,
WVHT/DPD/APD/TIDE 99.00, PRES 9999.0, ATMP/WTMP/DEWP 999.0), so a real 99° direction is data. Older
files: no `#`, no minutes, 2-digit years, old column names (WD, SPD, GSP, BAR/BARO, DOMPD, AVP, H0).
"""

from __future__ import annotations

from datetime import UTC, datetime
from pathlib import Path

from app.formats.records import MetRecord, ParseResult, Reject

__all__ = ["parse_met", "read_met"]

_ALIASES = {"WD": "WDIR", "SPD": "WSPD", "GSP": "GST", "BAR": "PRES", "BARO": "PRES", "DOMPD": "DPD",
            "AVP": "APD", "H0": "WVHT"}
_FIELD = {"WDIR": "wind_dir_deg", "WSPD": "wind_speed_ms", "GST": "gust_ms", "WVHT": "wvht_m",
          "DPD": "dpd_s", "APD": "apd_s", "MWD": "mwd_deg", "PRES": "pressure_hpa", "ATMP": "air_temp_c",
          "WTMP": "water_temp_c", "DEWP": "dewpoint_c", "VIS": "visibility_nmi",
          "PTDY": "pressure_tendency_hpa", "TIDE": "tide_ft"}
_SENTINEL = {"WDIR": 999.0, "MWD": 999.0, "WSPD": 99.0, "GST": 99.0, "VIS": 99.0, "WVHT": 99.0, "DPD": 99.0,
             "APD": 99.0, "TIDE": 99.0, "PRES": 9999.0, "ATMP": 999.0, "WTMP": 999.0, "DEWP": 999.0}
# Plausible ranges; a value outside rejects the row (a typo must not become data).
_RANGE = {"WDIR": (0, 360), "MWD": (0, 360), "WSPD": (0, 100), "GST": (0, 120), "WVHT": (0, 40),
          "DPD": (0, 40), "APD": (0, 40), "PRES": (800, 1100), "ATMP": (-70, 60), "WTMP": (-5, 45),
          "DEWP": (-80, 50), "VIS": (0, 99), "PTDY": (-50, 50), "TIDE": (-50, 50)}
_TIME_NAMES = ("YY", "YYYY", "MM", "DD", "HH", "MN", "YR", "MO", "DY", "HR")


def _columns(line: str) -> tuple[int, list[str]] | str:
    tokens = line.lstrip("#").split()
    n_time = 0
    for tok in tokens:
        if tok.upper() in _TIME_NAMES:
            n_time += 1
        else:
            break
    if n_time not in (4, 5):
        return f"expected 4 or 5 time columns (YY MM DD hh [mm]), found {n_time}"
    return n_time, [_ALIASES.get(t.upper(), t.upper()) for t in tokens[n_time:]]


def parse_met(text: str, *, name: str, station: str | None = None) -> ParseResult:
    """Parse a standard met file into MetRecords sorted ascending; bad rows become rejects.

    Unknown columns are ignored; duplicated times keep the first row.
    """
    if station is None:
        base = Path(name).name
        station = base.split(".", 1)[0]
        if len(station) > 5 and station[-5:-4].lower() == "h" and station[-4:].isdigit():
            station = station[:-5]  # <STN>h<YYYY>
    rejects: list[Reject] = []
    records: dict[datetime, MetRecord] = {}
    first_line: dict[datetime, int] = {}
    header = None
    for n, line in enumerate(text.splitlines(), start=1):
        s = line.strip()
        if not s:
            continue
        if header is None:
            got = _columns(s)
            if isinstance(got, str):
                rejects.append(Reject(name, n, "header", got, line))
                break
            header = got
            continue
        if s.startswith("#"):
            continue  # units line
        n_time, cols = header
        tokens = s.split()
        if len(tokens) != n_time + len(cols):
            rejects.append(Reject(name, n, "row", f"wrong count: expected {n_time + len(cols)} tokens, "
                                  f"got {len(tokens)}", line))
            continue
        try:
            y = int(tokens[0])
            y += 1900 if len(tokens[0]) <= 2 else 0
            t = datetime(y, int(tokens[1]), int(tokens[2]), int(tokens[3]),
                         int(tokens[4]) if n_time == 5 else 0, tzinfo=UTC)
        except ValueError as exc:
            rejects.append(Reject(name, n, "time", f"invalid date/time: {exc}", line))
            continue
        values = {}
        problem = None
        for col, tok in zip(cols, tokens[n_time:], strict=True):
            if col not in _FIELD:
                continue
            if tok == "MM":
                values[_FIELD[col]] = None
                continue
            try:
                v = float(tok)
            except ValueError:
                problem = Reject(name, n, col, f"not a number: {tok!r}", line)
                break
            if v != v or v in (float("inf"), float("-inf")):
                problem = Reject(name, n, col, f"not a finite number: {tok!r}", line)
                break
            if col in _SENTINEL and v == _SENTINEL[col]:
                values[_FIELD[col]] = None
                continue
            lo, hi = _RANGE[col]
            if not lo <= v <= hi:
                problem = Reject(name, n, col, f"value {v:g} outside {lo}..{hi}", line)
                break
            values[_FIELD[col]] = v
        if problem is not None:
            rejects.append(problem)
            continue
        if t in records:
            rejects.append(Reject(name, n, "time", f"duplicate time {t:%Y-%m-%d %H:%M}Z "
                                  f"(first at line {first_line[t]})", line))
            continue
        records[t] = MetRecord(time=t, station=station, source_file=name, **values)
        first_line[t] = n
    if header is None and not rejects:
        rejects.append(Reject(name, None, "header", "empty file: no column header line"))
    recs = tuple(records[t] for t in sorted(records))
    return ParseResult(records=recs, rejects=tuple(rejects))


def read_met(path: str | Path, *, station: str | None = None) -> ParseResult:
    """Read a met file (plain or gzip) and parse it."""
    import gzip

    raw = Path(path).read_bytes()
    if raw[:2] == b"\x1f\x8b":
        raw = gzip.decompress(raw)
    return parse_met(raw.decode("utf-8", errors="replace"), name=str(path), station=station)
