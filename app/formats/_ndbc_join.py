"""Shared by the NDBC spectral readers: per-file row checks and the time join of the five files.

The five files of one buoy (density, α1, α2, r1, r2) carry different timestamps (minutes differ), so
they are joined on time within a tolerance, one-to-one, nearest first — never by row index.
"""

from __future__ import annotations

import bisect
from dataclasses import dataclass
from datetime import datetime, timedelta

import numpy as np

from app.formats.records import ParseResult, Reject, SpectrumRecord

KINDS = ("density", "alpha1", "alpha2", "r1", "r2")
COEFFS = ("alpha1", "alpha2", "r1", "r2")
SENTINEL = 999.0  # NDBC spectral missing value (999, 999.0, 999.00)
FIELD_PREFIX = {"density": "spec", "alpha1": "alpha1", "alpha2": "alpha2", "r1": "r1", "r2": "r2"}


@dataclass
class Row:
    """One parsed, value-checked data row of one file (values NaN where the file says 999)."""

    file: str
    line: int
    time: datetime
    freq: np.ndarray
    values: np.ndarray
    sep: float | None
    text: str


def check_values(kind: str, values: np.ndarray, row_file: str, line: int, text: str) -> Reject | None:
    """Range checks on already-masked values; returns the first problem as a Reject (None if fine)."""
    prefix = FIELD_PREFIX[kind]
    if kind == "density":
        bad = np.flatnonzero(values < 0)
        what = "negative spectral density {v:g} m²/Hz"
    elif kind in ("r1", "r2"):
        bad = np.flatnonzero((values < 0) | (values > 1))
        what = kind + " {v:g} outside 0..1"
    else:
        bad = np.flatnonzero((values < 0) | (values > 360))
        what = "direction {v:g}° outside 0..360"
    if bad.size:
        i = int(bad[0])
        return Reject(row_file, line, f"{prefix}_{i + 1}", what.format(v=values[i]), text)
    return None


def parse_float_tokens(tokens, kind: str, row_file: str, line: int, text: str, first_field: int = 1):
    """Tokens -> float array, or a Reject naming the first bad token (non-numeric, NaN, inf)."""
    try:
        arr = np.array(tokens, dtype=np.float64)
    except ValueError:
        arr = None
    if arr is None or not np.all(np.isfinite(arr)):
        for i, tok in enumerate(tokens):
            try:
                v = float(tok)
            except ValueError:
                v = None
            if v is None or not np.isfinite(v):
                return Reject(row_file, line, f"{FIELD_PREFIX[kind]}_{i + first_field}",
                              f"not a finite number: {tok!r}", text)
    return arr


def drop_duplicates(rows: list[Row], rejects: list[Reject]) -> list[Row]:
    """Keep the first row of each exact time (file order); reject the later ones."""
    seen: dict[datetime, Row] = {}
    kept = []
    for r in rows:
        first = seen.get(r.time)
        if first is not None:
            rejects.append(Reject(r.file, r.line, "time",
                                  f"duplicate time {r.time:%Y-%m-%d %H:%M}Z (first at {first.file}:{first.line})",
                                  r.text))
            continue
        seen[r.time] = r
        kept.append(r)
    return kept


def _tkey(t: datetime) -> int:
    return int(t.timestamp())


def _match(dens: list[Row], other: list[Row], tol_s: int) -> dict[int, int]:
    """One-to-one nearest-time matching within tolerance: density index -> other index."""
    times = [_tkey(r.time) for r in other]
    order = sorted(range(len(other)), key=lambda j: times[j])
    st = [times[j] for j in order]
    pairs = []
    for i, r in enumerate(dens):
        t = _tkey(r.time)
        lo = bisect.bisect_left(st, t - tol_s)
        hi = bisect.bisect_right(st, t + tol_s)
        for k in range(lo, hi):
            pairs.append((abs(st[k] - t), i, order[k]))
    pairs.sort()
    out: dict[int, int] = {}
    used: set[int] = set()
    for _, i, j in pairs:
        if i not in out and j not in used:
            out[i] = j
            used.add(j)
    return out


def join(station: str, rows: dict[str, list[Row]], labels: dict[str, str], tolerance: timedelta,
         rejects: list[Reject], notes: list[str], *, scale_note: str = "") -> ParseResult:
    """Join per-kind rows into SpectrumRecords sorted ascending; unmatched coefficient rows are rejected."""
    tol_s = int(tolerance.total_seconds())
    dens = sorted(rows.get("density", []), key=lambda r: r.time)
    if "density" not in rows:
        notes.append("no density file in the set: no records can be built")
    present = [k for k in COEFFS if k in rows]
    missing = [k for k in COEFFS if k not in rows]
    if present and missing:
        notes.append("set lacks " + ", ".join(labels[k] for k in missing)
                     + ": records carry no directional coefficients")
    matches = {k: _match(dens, rows[k], tol_s) for k in present}
    used = {k: set() for k in present}
    records = []
    without = 0
    tol_txt = f"±{tol_s // 60} min"
    for i, d in enumerate(dens):
        coeff = {}
        for k in present:
            j = matches[k].get(i)
            if j is None:
                continue
            o = rows[k][j]
            used[k].add(j)
            if o.freq is not d.freq and (o.freq.shape != d.freq.shape
                                         or not np.allclose(o.freq, d.freq, rtol=0, atol=5e-4)):
                rejects.append(Reject(o.file, o.line, "frequency",
                                      f"frequency grid ({o.freq.size} bands) differs from the density row "
                                      f"at {d.time:%Y-%m-%d %H:%M}Z ({d.freq.size} bands)", o.text))
                continue
            coeff[k] = o.values
        complete = not missing and len(coeff) == 4
        if present and not complete:
            without += 1
        kw = {}
        if complete:
            kw = dict(alpha1_deg=np.mod(coeff["alpha1"], 360.0), alpha2_deg=np.mod(coeff["alpha2"], 360.0),
                      r1=coeff["r1"], r2=coeff["r2"])
        try:
            records.append(SpectrumRecord(station=station, time=d.time, frequency=d.freq, density=d.values,
                                          separation_frequency=d.sep, source_file=d.file, **kw))
        except ValueError as exc:  # last line of defence: never a half-built record
            rejects.append(Reject(d.file, d.line, "record", str(exc), d.text))
    for k in present:
        for j, o in enumerate(rows[k]):
            if j not in used[k]:
                rejects.append(Reject(o.file, o.line, "time",
                                      f"no density row within {tol_txt} of {o.time:%Y-%m-%d %H:%M}Z", o.text))
    if without:
        notes.append(f"{without} record(s) kept without directional coefficients "
                     f"(no complete set of coefficient rows within {tol_txt})")
    if scale_note:
        notes.append(scale_note)
    rejects.sort(key=lambda r: (r.file, r.line if r.line is not None else -1))
    return ParseResult(records=tuple(records), rejects=tuple(rejects), notes=tuple(notes))
