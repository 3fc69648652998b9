"""NDBC realtime spectral text set: `.data_spec`, `.swdir`, `.swdir2`, `.swr1`, `.swr2`.

Layout (docs/formats.md §1.2): one `#` header line; rows `YYYY MM DD hh mm`, then Sep_Freq
(`.data_spec` only), then `value (freq)` pairs — the frequencies are on every row, so the grid is read
per row and may change mid-file. Rows are newest first; 999 means missing; times UTC. The five files
carry different minutes and are joined on time within a tolerance (default ±20 min).
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np

from app.formats import _ndbc_join as nj
from app.formats.records import ParseResult, Reject, SpectrumRecord

__all__ = ["SUFFIXES", "kind_of", "parse_realtime_file", "parse_realtime_set", "read_realtime_set",
           "write_realtime_set"]

SUFFIXES = {"data_spec": "density", "swdir": "alpha1", "swdir2": "alpha2", "swr1": "r1", "swr2": "r2"}
_LABEL = {v: "." + k for k, v in SUFFIXES.items()}
_TIME = re.compile(r"\s*(\d{4})\s+(\d{1,2})\s+(\d{1,2})\s+(\d{1,2})\s+(\d{1,2})(?=\s|$)")
_SEP = re.compile(r"\s+([^\s()]+)(?=\s|$)")
_PAIRS_OK = re.compile(r"(?:\s+[^\s()]+\s*\(\s*[^\s()]+\s*\))*\s*")
_PAIR = re.compile(r"([^\s()]+)\s*\(\s*([^\s()]+)\s*\)")
_HEADER = {
    "density": "#YY  MM DD hh mm Sep_Freq  < spec_1 (freq_1) spec_2 (freq_2) spec_3 (freq_3) ... >",
    "alpha1": "#YY  MM DD hh mm alpha1_1 (freq_1) alpha1_2 (freq_2) alpha1_3 (freq_3) ... >",
    "alpha2": "#YY  MM DD hh mm alpha2_1 (freq_1) alpha2_2 (freq_2) alpha2_3 (freq_3) ... >",
    "r1": "#YY  MM DD hh mm r1_1 (freq_1) r1_2 (freq_2) r1_3 (freq_3) ... >",
    "r2": "#YY  MM DD hh mm r2_1 (freq_1) r2_2 (freq_2) r2_3 (freq_3) ... >",
}
_DECIMALS = {"density": 3, "alpha1": 1, "alpha2": 1, "r1": 2, "r2": 2}


def kind_of(name: str) -> str | None:
    """'density' | 'alpha1' | 'alpha2' | 'r1' | 'r2' from a file name's suffix (or a bare suffix)."""
    base = Path(name).name
    suffix = base.rsplit(".", 1)[-1].lower()
    return SUFFIXES.get(suffix)


def _station_of(name: str) -> str:
    base = Path(name).name
    return base.rsplit(".", 1)[0] if "." in base else ""


def _parse_row(kind: str, file: str, line: int, text: str, grids: dict | None = None) -> nj.Row | Reject:
    m = _TIME.match(text)
    if m is None:
        return Reject(file, line, "time", "expected 'YYYY MM DD hh mm' at the start of the row", text)
    y, mo, d, h, mi = (int(g) for g in m.groups())
    try:
        time = datetime(y, mo, d, h, mi, tzinfo=UTC)
    except ValueError as exc:
        return Reject(file, line, "time", f"invalid date/time: {exc}", text)
    pos = m.end()
    sep = None
    if kind == "density":
        ms = _SEP.match(text, pos)
        if ms is None:
            return Reject(file, line, "Sep_Freq", "missing separation frequency", text)
        try:
            sep = float(ms.group(1))
        except ValueError:
            return Reject(file, line, "Sep_Freq", f"not a number: {ms.group(1)!r}", text)
        if sep == nj.SENTINEL:
            sep = None
        elif not (np.isfinite(sep) and 0 < sep < 10):
            return Reject(file, line, "Sep_Freq", f"implausible separation frequency {sep!r} Hz", text)
        pos = ms.end()
    rest = text[pos:]
    if _PAIRS_OK.fullmatch(rest) is None:
        bad = _PAIR.sub(" ", rest).split()
        junk = bad[0] if bad else rest.strip()[:20]
        return Reject(file, line, "row", f"expected 'value (frequency)' pairs; unexpected text {junk!r}", text)
    pairs = _PAIR.findall(rest)
    if not pairs:
        return Reject(file, line, "row", "no 'value (frequency)' pairs", text)
    vals = nj.parse_float_tokens([p[0] for p in pairs], kind, file, line, text)
    if isinstance(vals, Reject):
        return vals
    key = tuple(p[1] for p in pairs)
    freq = grids.get(key) if grids is not None else None
    if freq is None:  # grids repeat row after row: parse and check each one once
        freq = nj.parse_float_tokens(list(key), "density", file, line, text)
        if isinstance(freq, Reject):
            return Reject(file, line, freq.field.replace("spec", "freq"), freq.reason, text)
        if np.any(freq <= 0) or np.any(np.diff(freq) <= 0):
            return Reject(file, line, "frequency", "frequencies must be positive and increasing along the row",
                          text)
        freq.setflags(write=False)
        if grids is not None:
            grids[key] = freq
    vals = np.where(vals == nj.SENTINEL, np.nan, vals)
    problem = nj.check_values(kind, vals, file, line, text)
    if problem is not None:
        return problem
    return nj.Row(file, line, time, freq, vals, sep, text)


def _reject_truncated(rows: list[nj.Row], rejects: list[Reject]) -> list[nj.Row]:
    """A row whose grid is a proper prefix of another row's grid in the same file was cut short."""
    grids = {r.freq.tobytes(): r.freq for r in rows}
    if len(grids) < 2:
        return rows
    longest = {}
    for key, g in grids.items():
        for h in grids.values():
            if h.size > g.size and np.array_equal(h[: g.size], g):
                if key not in longest or h.size > longest[key].size:
                    longest[key] = h
    kept = []
    for r in rows:
        h = longest.get(r.freq.tobytes())
        if h is None:
            kept.append(r)
        else:
            rejects.append(Reject(r.file, r.line, "row",
                                  f"truncated: {r.freq.size} of {h.size} bands (stops at {r.freq[-1]:g} Hz "
                                  "where other rows continue)", r.text))
    return kept


def parse_realtime_file(text: str, *, name: str, kind: str | None = None,
                        grid_cache: dict | None = None) -> tuple[list[nj.Row], list[Reject]]:
    """Parse one file of the set into checked rows (file order) and rejects. `kind` defaults from `name`.

    `grid_cache` (shared across the files of a set) lets identical frequency rows share one array.
    """
    kind = kind or kind_of(name)
    if kind is None:
        raise ValueError(f"`name` {name!r} has no recognised suffix ({', '.join('.' + s for s in SUFFIXES)})")
    rows: list[nj.Row] = []
    rejects: list[Reject] = []
    grids: dict = {} if grid_cache is None else grid_cache
    for n, raw in enumerate(text.splitlines(), start=1):
        line = raw.rstrip("\r\n")
        stripped = line.strip()
        if not stripped or stripped.startswith("#"):
            continue
        got = _parse_row(kind, name, n, line, grids)
        (rejects if isinstance(got, Reject) else rows).append(got)
    rows = nj.drop_duplicates(rows, rejects)
    rows = _reject_truncated(rows, rejects)
    return rows, rejects


def parse_realtime_set(files: Mapping[str, str], *, station: str | None = None,
                       tolerance: timedelta = timedelta(minutes=20)) -> ParseResult:
    """Parse and join a realtime set given as {file name: text}; files recognised by suffix.

    Returns SpectrumRecords sorted ascending by time. A record carries r1, r2, α1, α2 only when all
    four coefficient files have a row within `tolerance` on the same grid; otherwise it keeps its
    density and a note says so. Unrecognised names, bad rows and orphan rows become rejects.
    """
    rows: dict[str, list[nj.Row]] = {}
    rejects: list[Reject] = []
    notes: list[str] = []
    grid_cache: dict = {}
    for name, text in files.items():
        kind = kind_of(name)
        if kind is None:
            rejects.append(Reject(name, None, "file", "unrecognised suffix; expected one of "
                                  + ", ".join("." + s for s in SUFFIXES)))
            continue
        if kind in rows:
            rejects.append(Reject(name, None, "file", f"second {_LABEL[kind]} file in one set; ignored"))
            continue
        if station is None:
            station = _station_of(name) or None
        rows[kind], rej = parse_realtime_file(text, name=name, kind=kind, grid_cache=grid_cache)
        rejects.extend(rej)
    return nj.join(station or "", rows, _LABEL, tolerance, rejects, notes)


def read_realtime_set(paths: Iterable[str | Path], *, station: str | None = None,
                      tolerance: timedelta = timedelta(minutes=20)) -> ParseResult:
    """Read the files (text, UTF-8 with replacement) and parse them as one set."""
    files = {str(p): Path(p).read_text(encoding="utf-8", errors="replace") for p in paths}
    return parse_realtime_set(files, station=station, tolerance=tolerance)


def _fmt_freq(f: float) -> str:
    for dec in (3, 4, 5, 6):
        s = f"{f:.{dec}f}"
        if abs(float(s) - f) < 1e-9:
            return s
    return f"{f:.7f}"


def _fmt_values(values: np.ndarray, decimals: int) -> list[str]:
    miss = f"{nj.SENTINEL:.{max(decimals, 1)}f}"
    return [miss if not np.isfinite(v) else f"{v:.{decimals}f}" for v in values]


def write_realtime_set(records: Iterable[SpectrumRecord], *, density_decimals: int = 3) -> dict[str, str]:
    """Write records as {suffix: text} in the realtime layout (newest first, 999 for missing).

    Coefficient files hold only the records that carry r1/r2/α1/α2 (and are left out when none
    does). Decimals follow the published
    files (density 3, r 2, direction 1); pass `density_decimals` for tiny densities.
    """
    recs = sorted(records, key=lambda r: r.time, reverse=True)
    decimals = dict(_DECIMALS, density=density_decimals)
    any_coeff = any(r.r1 is not None for r in recs)
    out = {}
    for suffix, kind in SUFFIXES.items():
        if kind != "density" and not any_coeff:
            continue
        lines = [_HEADER[kind]]
        for r in recs:
            if kind == "density":
                vals = r.density
            elif r.r1 is None:
                continue
            else:
                vals = {"alpha1": r.alpha1_deg, "alpha2": r.alpha2_deg, "r1": r.r1, "r2": r.r2}[kind]
            head = f"{r.time:%Y %m %d %H %M}"
            if kind == "density":
                sep = r.separation_frequency
                head += " " + (f"{nj.SENTINEL:.3f}" if sep is None or not np.isfinite(sep) else f"{sep:.3f}")
            body = " ".join(f"{v} ({_fmt_freq(f)})" for v, f in zip(_fmt_values(vals, decimals[kind]),
                                                                   r.frequency, strict=True))
            lines.append(f"{head} {body}")
        out[suffix] = "\n".join(lines) + "\n"
    return out
