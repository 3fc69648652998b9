"""What the spectral and meteorological readers produce.

`SpectrumRecord` is one spectrum at one station and time (frequency spectrum, optionally the NDBC
directional coefficients or a full E(f, θ)); `MetRecord` one standard-meteorological row. Readers never
raise on bad data rows: they return `ParseResult(records, rejects)` where every `Reject` names the file,
line, field and reason, and every record is complete and validated.

Conventions: times timezone-aware UTC; frequency [Hz]; density [m²/Hz]; efth [m²/Hz/rad]; directions
nautical, FROM, degrees clockwise from true north; r1, r2 dimensionless 0..1; NaN = missing per band.
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass, field, fields
from datetime import UTC, datetime

import numpy as np

__all__ = ["MetRecord", "ParseResult", "Reject", "SpectrumRecord", "band_widths", "hm0"]


def _array(value, name: str, shape: tuple[int, ...] | None = None) -> np.ndarray:
    arr = np.array(value, dtype=np.float64, copy=True)
    if shape is not None and arr.shape != shape:
        raise ValueError(f"`{name}` must have shape {shape}, got {arr.shape}")
    arr.setflags(write=False)
    return arr


def _check_time(value: datetime | None, name: str, optional: bool = False) -> None:
    if value is None and optional:
        return
    if not isinstance(value, datetime) or value.tzinfo is None or value.utcoffset() != UTC.utcoffset(None):
        raise ValueError(f"`{name}` must be a timezone-aware UTC datetime, got {value!r}")


def band_widths(frequency) -> np.ndarray:
    """Band widths [Hz] from bin midpoints (NDBC grids are non-uniform); end bands mirror their half-width."""
    f = np.asarray(frequency, dtype=np.float64)
    if f.size < 2:
        return np.full(f.shape, np.nan)
    edges = np.empty(f.size + 1)
    edges[1:-1] = 0.5 * (f[1:] + f[:-1])
    edges[0] = f[0] - 0.5 * (f[1] - f[0])
    edges[-1] = f[-1] + 0.5 * (f[-1] - f[-2])
    return np.diff(edges)


def hm0(frequency, density, bandwidth=None) -> float:
    """Hm0 = 4 sqrt(sum S Δf) [m] with Δf from bin midpoints unless `bandwidth` is given; NaN bands skipped."""
    s = np.asarray(density, dtype=np.float64)
    df = band_widths(frequency) if bandwidth is None else np.asarray(bandwidth, dtype=np.float64)
    return 4.0 * math.sqrt(float(np.nansum(s * df)))


def _hash_update(h, value) -> None:
    if value is None:
        h.update(b"\x00none")
    elif isinstance(value, np.ndarray):
        a = np.ascontiguousarray(value, dtype="<f8").copy()
        a[np.isnan(a)] = np.nan  # one NaN bit pattern
        h.update(repr(a.shape).encode())
        h.update(a.tobytes())
    elif isinstance(value, datetime):
        h.update(value.isoformat().encode())
    elif isinstance(value, float):
        h.update(b"nan" if math.isnan(value) else repr(value).encode())
    else:
        h.update(repr(value).encode())
    h.update(b"\x1f")


def _content_hash(record, skip: tuple[str, ...]) -> str:
    h = hashlib.sha256()
    for f in fields(record):
        if f.name in skip:
            continue
        h.update(f.name.encode())
        _hash_update(h, getattr(record, f.name))
    return h.hexdigest()


@dataclass(frozen=True, eq=False)
class SpectrumRecord:
    """One spectrum at one station and time (arrays are read-only float64 copies).

    station: station id; time: observation (or forecast valid) time, UTC aware; issue_time: forecast
    issue time (None for observations); frequency (nf,) [Hz] strictly increasing; bandwidth (nf,) [Hz]
    or None; density (nf,) [m²/Hz]; r1, r2 (nf,) 0..1 and alpha1_deg, alpha2_deg (nf,) nautical FROM
    [deg] — all four or none, NaN where a band is missing; directions_deg (nd,) + efth (nf, nd)
    [m²/Hz/rad] — both or neither; separation_frequency [Hz] or None; source_file for provenance.
    """

    station: str
    time: datetime
    frequency: np.ndarray
    density: np.ndarray
    issue_time: datetime | None = None
    bandwidth: np.ndarray | None = None
    r1: np.ndarray | None = None
    r2: np.ndarray | None = None
    alpha1_deg: np.ndarray | None = None
    alpha2_deg: np.ndarray | None = None
    directions_deg: np.ndarray | None = None
    efth: np.ndarray | None = None
    separation_frequency: float | None = None
    source_file: str | None = field(default=None)

    def __post_init__(self) -> None:
        set_ = object.__setattr__
        _check_time(self.time, "time")
        _check_time(self.issue_time, "issue_time", optional=True)
        freq = _array(self.frequency, "frequency")
        if freq.ndim != 1 or freq.size == 0 or not np.all(np.isfinite(freq)) or np.any(freq <= 0):
            raise ValueError("`frequency` must be a non-empty 1-D array of positive finite values")
        if freq.size > 1 and np.any(np.diff(freq) <= 0):
            raise ValueError("`frequency` must be strictly increasing")
        nf = freq.size
        set_(self, "frequency", freq)
        set_(self, "density", _array(self.density, "density", (nf,)))
        if np.any(self.density < 0):
            raise ValueError("`density` must not be negative")
        if self.bandwidth is not None:
            set_(self, "bandwidth", _array(self.bandwidth, "bandwidth", (nf,)))
        coeffs = ("r1", "r2", "alpha1_deg", "alpha2_deg")
        given = [getattr(self, n) is not None for n in coeffs]
        if any(given) and not all(given):
            raise ValueError("`r1`, `r2`, `alpha1_deg`, `alpha2_deg` must be given together")
        if all(given):
            for n in coeffs:
                set_(self, n, _array(getattr(self, n), n, (nf,)))
            for n in ("r1", "r2"):
                a = getattr(self, n)
                if np.any((a < 0) | (a > 1)):
                    raise ValueError(f"`{n}` must lie in 0..1 (NaN for missing)")
        if (self.directions_deg is None) != (self.efth is None):
            raise ValueError("`directions_deg` and `efth` must be given together")
        if self.directions_deg is not None:
            d = _array(self.directions_deg, "directions_deg")
            if d.ndim != 1:
                raise ValueError("`directions_deg` must be 1-D")
            set_(self, "directions_deg", d)
            set_(self, "efth", _array(self.efth, "efth", (nf, d.size)))
        if self.separation_frequency is not None:
            set_(self, "separation_frequency", float(self.separation_frequency))

    @property
    def has_coefficients(self) -> bool:
        return self.r1 is not None

    def content_hash(self) -> str:
        """sha256 over station, times and arrays (not source_file): equal data -> equal hash."""
        return _content_hash(self, skip=("source_file",))


@dataclass(frozen=True)
class MetRecord:
    """One standard-meteorological row (or a CF water level / wind step); None where the file says
    missing. Directions nautical FROM."""

    time: datetime
    station: str = ""
    wind_dir_deg: float | None = None
    wind_speed_ms: float | None = None
    gust_ms: float | None = None
    wvht_m: float | None = None
    dpd_s: float | None = None
    apd_s: float | None = None
    mwd_deg: float | None = None
    pressure_hpa: float | None = None
    air_temp_c: float | None = None
    water_temp_c: float | None = None
    dewpoint_c: float | None = None
    visibility_nmi: float | None = None
    pressure_tendency_hpa: float | None = None
    tide_ft: float | None = None
    source_file: str | None = None
    water_level_m: float | None = None  # CF sea_surface_height [m]
    issue_time: datetime | None = None  # a model forecast's issue time (None for observations)

    def __post_init__(self) -> None:
        _check_time(self.time, "time")
        _check_time(self.issue_time, "issue_time", optional=True)

    def content_hash(self) -> str:
        # fields added later take part only when set, so rows stored before them keep their hash
        late = tuple(n for n in ("water_level_m", "issue_time") if getattr(self, n) is None)
        return _content_hash(self, skip=("source_file", *late))


@dataclass(frozen=True)
class Reject:
    """A row (or record) left out, with where and why. `line` is 1-based (None when not line-based)."""

    file: str
    line: int | None
    field: str
    reason: str
    text: str = ""

    def __str__(self) -> str:
        where = f"{self.file}:{self.line}" if self.line is not None else self.file
        return f"{where}: {self.field}: {self.reason}"


@dataclass(frozen=True)
class ParseResult:
    """Good records sorted by time (then station), rejects, and notes (e.g. which r scaling rule fired)."""

    records: tuple = ()
    rejects: tuple[Reject, ...] = ()
    notes: tuple[str, ...] = ()
