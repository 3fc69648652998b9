"""Observed breaker heights as CSV: lifeguards' logs, a camera's estimates.

Header (column order free, names case-insensitive): `time` and one height column,
`breaker_height_m` (metres) or `breaker_height_ft` (feet, converted with the international foot);
optional `point` (a break point name of the spot; empty = the spot as a whole) and `observer`.
Times are RFC 3339 with an offset (`2030-01-01T06:00:00Z`, `...+10:00`); stored as UTC.

A damaged row (bad time, negative, non-numeric or implausible height, unknown point, wrong number
of fields, a repeat of an earlier row's time and point) is rejected with the file, line and reason;
the rows beside it are kept. A bad header rejects the file (nothing can be read without it).
"""

from __future__ import annotations

import csv
import math
import re
from collections.abc import Collection
from dataclasses import dataclass
from datetime import UTC, datetime

from app.formats.records import Reject
from models.constants import FOOT

__all__ = ["HeightObservation", "HeightParse", "MAX_HEIGHT_M", "parse_height_csv"]

MAX_HEIGHT_M = 30.0  # above any breaker on record (common practice: a typo, not a wave)
# RFC 3339 §5.6 date-time: full-date "T" (or a space, §5.6 NOTE) full-time with a Z or ±hh:mm offset
_RFC3339 = re.compile(
    r"^\d{4}-\d{2}-\d{2}[Tt ]\d{2}:\d{2}:\d{2}(\.\d+)?([Zz]|[+-]\d{2}:\d{2})$"
)


@dataclass(frozen=True)
class HeightObservation:
    time: datetime  # UTC
    height_m: float
    point: str | None = None
    observer: str | None = None
    line: int = 0


@dataclass(frozen=True)
class HeightParse:
    observations: tuple[HeightObservation, ...]
    rejects: tuple[Reject, ...]
    units: str  # "m" or "ft" as the file gave them


def parse_rfc3339(text: str) -> datetime:
    """An RFC 3339 date-time as an aware UTC datetime (ValueError otherwise)."""
    s = text.strip()
    if not _RFC3339.match(s):
        raise ValueError(f"not an RFC 3339 time with an offset: {s!r}")
    t = datetime.fromisoformat(s.replace("z", "Z").replace("t", "T"))
    return t.astimezone(UTC)


def parse_height_csv(data: bytes | str, *, name: str = "<upload>", points: Collection[str] | None = None) -> HeightParse:
    """Observations and rejects of one file; `points` = the spot's break point names (None: any)."""
    text = data.decode("utf-8-sig", errors="replace") if isinstance(data, bytes) else data
    header: list[str] | None = None
    rejects: list[Reject] = []
    out: list[HeightObservation] = []
    seen: set[tuple[datetime, str | None]] = set()
    for line, physical in enumerate(text.splitlines(), start=1):
        try:  # one physical line per row: line numbers stay true, a stray quote spoils one row only
            row = next(csv.reader([physical]), [])
        except csv.Error as exc:
            rejects.append(Reject(name, line, "row", f"not a CSV row: {exc}", physical[:200]))
            continue
        if not row or all(not c.strip() for c in row) or row[0].lstrip().startswith("#"):
            continue
        if header is None:
            header = [c.strip().lower() for c in row]
            problem = _header_problem(header)
            if problem:
                return HeightParse((), (Reject(name, line, "header", problem, ",".join(row)[:200]),), "m")
            continue
        raw = ",".join(row)[:200]
        if len(row) != len(header):
            rejects.append(Reject(name, line, "row", f"{len(row)} fields, the header has {len(header)}", raw))
            continue
        cells = dict(zip(header, (c.strip() for c in row), strict=True))
        try:
            t = parse_rfc3339(cells["time"])
        except ValueError as exc:
            rejects.append(Reject(name, line, "time", str(exc), raw))
            continue
        col = "breaker_height_m" if "breaker_height_m" in cells else "breaker_height_ft"
        try:
            h = float(cells[col])
        except ValueError:
            rejects.append(Reject(name, line, col, f"not a number: {cells[col]!r}", raw))
            continue
        h_m = h * FOOT if col.endswith("_ft") else h
        if not math.isfinite(h_m) or h_m < 0:
            rejects.append(Reject(name, line, col, f"height must be a finite number >= 0, got {cells[col]!r}", raw))
            continue
        if h_m > MAX_HEIGHT_M:
            rejects.append(Reject(name, line, col, f"height {h_m:.1f} m is over {MAX_HEIGHT_M:g} m: implausible", raw))
            continue
        point = cells.get("point") or None
        if point is not None and points is not None and point not in points:
            known = ", ".join(sorted(points)) or "none"
            rejects.append(Reject(name, line, "point", f"unknown break point {point!r} (the spot has: {known})", raw))
            continue
        if (t, point) in seen:
            rejects.append(Reject(name, line, "time", f"repeats an earlier row's time {cells['time']!r}"
                                  + (f" at point {point!r}" if point else ""), raw))  # fmt: skip
            continue
        seen.add((t, point))
        out.append(HeightObservation(t, h_m, point, cells.get("observer") or None, line))
    if header is None:
        rejects.append(Reject(name, None, "header", "empty file: no header `time,breaker_height_m`"))
    out.sort(key=lambda o: (o.time, o.point or ""))
    units = "ft" if header is not None and "breaker_height_ft" in header else "m"
    return HeightParse(tuple(out), tuple(rejects), units)


def _header_problem(header: list[str]) -> str | None:
    if "time" not in header:
        return "the header has no `time` column (expected `time,breaker_height_m`)"
    heights = [c for c in header if c in ("breaker_height_m", "breaker_height_ft")]
    if len(heights) != 1:
        return "the header needs exactly one of `breaker_height_m` or `breaker_height_ft`"
    unknown = [c for c in header if c not in ("time", "breaker_height_m", "breaker_height_ft", "point", "observer")]
    if unknown:
        return f"unknown column(s) {', '.join(unknown)} (allowed: time, breaker_height_m|_ft, point, observer)"
    if len(set(header)) != len(header):
        return "a column appears twice in the header"
    return None
