"""Spot outlooks: offshore spectra x transfer tables -> breaker heights, peel, swell trains, hazard.

Pipeline (docs/architecture.md §2, docs/methods.md §4, §9), per spot and time step:

1. Inputs: each of the spot's sources. Model forecast spectra (with an issue time): the latest
   issue's steps are used directly ("model-forecast"). Observations from a station: carried to the
   spot by each component's deep-water group delay (`models.propagation.shift_to_spot`), which is a
   short-range forecast ("arrival-forecast"; "observed" when the station is at the spot). Where
   several inputs cover a time, observed > arrival-forecast > model-forecast.
2. E(f, θ): given efth is used as it is; buoy coefficients are turned into E(f, θ) by the maximum
   entropy method (MEM, Lygre & Krogstad 1986) on 5° bins. MEM rather than the weighted Fourier
   series: a narrow swell stays narrow, so sheltering by a headland is not smeared into the open
   part of the window; MEM's occasional split of one peak in two is merged back by the
   partitioning (Hanson & Phillips closeness rule).
3. Swell trains: `models.partition.partition_series` (watershed + merging), at most `MAX_TRAINS`.
4. Per break point, `models.transfer.apply` on the whole spectrum and on each train (label masks)
   in one call -> nearshore Hm0, Tp, Tm02 and mean direction at the reference depth.
5. Breaking: each height class (typical = Hm0; sets = H1/10 = 1.27 Hm0; largest = expected largest
   of N = 3600 s / Tm02 Rayleigh waves, i.e. within an hour; `models.statistics`) is shoaled and
   refracted from the reference depth (+ water level) over the local contours (slope and seaward
   normal from `DepthGrid.contour_geometry` at the break point) to breaking by
   `models.breaking.shoal_to_breaking` (Weggel 1972; Komar & Gaudiano 1975 reported beside it).
   Trains break with their own significant height and peak period.
6. Peel: with several break points, from when the same crest (the peak component of the largest
   train) breaks at each: table travel time to the reference point + the run from there to the
   breaking depth at the local phase speed (`models.peel.peel_from_break_times`); with one break
   point, from the breaking angle to the contour (`peel_from_breaking_angle`).
7. Hazard: the policy's level on the set breaker height at the point where it is largest, with the
   offshore peak period and deep-water wave power (`models.hazard`).

All numerics are in `models/`; this module only gathers inputs, vectorises (all points, steps and
height classes of all spots of a call go through one `shoal_to_breaking`) and formats.
"""

from __future__ import annotations

import gc
import hashlib
import json
import logging
import math
import threading
import weakref
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta
from typing import Any

import numpy as np
from numpy.typing import NDArray
from pydantic import TypeAdapter
from sqlalchemy import select
from sqlalchemy.orm import Session

from app.db.tables import Observation, OutlookCache, Source, Spot, utcnow
from app.errors import BadInput, Conflict, NotFound
from app.schemas.outlooks import (
    HeightClasses,
    OutlookBody,
    OutlookOptions,
    Peel,
    Step,
)
from app.services.tables import load_table
from models.breaking import shoal_to_breaking
from models.constants import FOOT
from models.directions import wrap_180
from models.hazard import CAUTION, HazardPolicy, hazard_level, wave_power_deep_kw_m
from models.partition import partition_series
from models.peel import crest_speed, peel_from_break_times, peel_from_breaking_angle
from models.propagation import great_circle_distance, initial_bearing, shift_to_spot
from models.spectra import (
    bin_widths,
    directional_spectrum_from_coefficients,
    frequency_spectrum,
    hm0,
    moments,
    peak_period,
)
from models.statistics import expected_max_height_ratio, highest_fraction_ratio
from models.transfer import TransferTable, _direction_matrix
from models.waves import phase_speed

log = logging.getLogger(__name__)

OUTLOOK_VERSION = "outlook-2"  # part of every cache key: bump when the computation changes
MAX_TRAINS = 4
COEFFICIENT_DIRECTIONS_DEG = np.arange(0.0, 360.0, 5.0)
DIRECTIONAL_METHOD = "mem"
LARGEST_WINDOW_S = 3600.0  # "largest wave in an hour"
SETS_FRACTION = 10  # sets = H1/10
MIN_HEIGHT_M = 0.05  # nearshore height below which a class is not surf (a blocked or empty train): null
MAX_ANGLE_DEG = (
    85.0  # nearshore direction to the contour normal is clipped here (shoal_to_breaking needs < 90)
)
MIN_SLOPE = 0.005  # a flat bottom at a break point uses this slope (Weggel's fit needs m > 0)
# An arrival step is used only when its spectrum is (nearly) whole: at least this share of the latest
# observation's arriving energy lies in components whose emission time is inside the observed span.
# A partial spectrum (e.g. the fast long-period part not yet observed) would read as a real drop in
# the surf, so such hours fall back to the model forecast (or are left out) and a note says so.
ARRIVAL_MIN_ENERGY_COVERAGE = 0.9
OBSERVED_DISTANCE_M = 1000.0  # a station closer than this to the spot observes the spot itself
OBSERVATION_LOOKBACK_H = 48.0
_PRIORITY = {"observed": 0, "arrival-forecast": 1, "model-forecast": 2}

CAUTIONS = (
    "Guidance only: computed from offshore spectra and a seabed model; conditions change quickly.",
    "Follow lifeguards, official warnings and local rules.",
    CAUTION,
)

_STEPS = TypeAdapter(list[Step])
SETS_RATIO = float(highest_fraction_ratio(SETS_FRACTION, reference="hm0"))  # H1/10 / Hm0 (Rayleigh)


# =========================================================================== pure computation


@dataclass(frozen=True)
class PointSetup:
    """One break point: its table and the local contours at the break point."""

    name: str
    x: float
    y: float
    table: TransferTable
    depth_m: float  # grid depth at the break point (datum)
    slope: float
    normal_deg: float  # seaward normal (nautical bearing of ∇h)


@dataclass(frozen=True)
class OffshoreBatch:
    """Offshore spectra of one input on one grid, partitioned: efth (nt, nf, nd) m²/Hz/rad."""

    source: str
    kind: str
    times: list[datetime]
    frequency: NDArray[np.float64]
    directions: NDArray[np.float64]
    efth: NDArray[np.float64]
    stack: NDArray[np.float64]  # (nt, 1 + K, nf, nd): whole spectrum, then trains 0..K-1
    trains: tuple[tuple[Any, ...], ...]  # TrainSummary per step (at most K)
    hm0: NDArray[np.float64]
    tp: NDArray[np.float64]  # NaN where empty
    peak_dir: NDArray[np.float64]  # peak direction of train 0 (NaN where empty)
    power_kw_m: NDArray[np.float64]
    issued: datetime | None = None
    observed_at: list[datetime | None] = field(default_factory=list)
    coverage: list[float] = field(default_factory=list)  # arrival steps: energy share observed
    memo: dict[str, Any] = field(default_factory=dict, compare=False, repr=False)  # per-batch formatting

    def subset(self, idx: Sequence[int]) -> OffshoreBatch:
        i = np.asarray(idx, dtype=int)
        return OffshoreBatch(
            source=self.source, kind=self.kind, times=[self.times[k] for k in i], frequency=self.frequency,
            directions=self.directions, efth=self.efth[i], stack=self.stack[i],
            trains=tuple(self.trains[k] for k in i), hm0=self.hm0[i], tp=self.tp[i], peak_dir=self.peak_dir[i],
            power_kw_m=self.power_kw_m[i], issued=self.issued,
            observed_at=[self.observed_at[k] for k in i] if self.observed_at else [],
            coverage=[self.coverage[k] for k in i] if self.coverage else [],
        )  # fmt: skip


def prepare_offshore(
    times: Sequence[datetime],
    frequency: NDArray[np.float64],
    directions: NDArray[np.float64],
    efth: NDArray[np.float64],
    *,
    source: str,
    kind: str,
    issued: datetime | None = None,
    observed_at: Sequence[datetime | None] | None = None,
    coverage: Sequence[float] | None = None,
    max_trains: int = MAX_TRAINS,
) -> OffshoreBatch:
    """Partition the spectra and build the per-train masked stack (done once per input, shared by spots)."""
    f = np.asarray(frequency, dtype=float)
    d = np.asarray(directions, dtype=float)
    e = np.asarray(efth, dtype=float)
    nt = e.shape[0]
    part = partition_series(f, d, e)
    k = max(1, min(max_trains, max((len(t) for t in part.trains), default=1)))
    stack = np.zeros((nt, 1 + k) + e.shape[1:])
    stack[:, 0] = e
    for j in range(k):
        stack[:, 1 + j] = np.where(part.labels == j, e, 0.0)
    density = frequency_spectrum(e, d)
    h = hm0(f, density)
    mom = moments(f, density)
    ok = mom.m0 > 0
    tp = np.full(nt, np.nan)
    if ok.any():
        tp[ok] = peak_period(f, density[ok])
    te = np.where(ok, mom.m_1 / np.where(ok, mom.m0, 1.0), 1.0)
    power = np.where(ok, wave_power_deep_kw_m(h, te), 0.0)
    peak_dir = np.array([t[0].peak_direction_deg if t else np.nan for t in part.trains], dtype=float)
    return OffshoreBatch(
        source=source, kind=kind, times=list(times), frequency=f, directions=d, efth=e, stack=stack,
        trains=tuple(t[:k] for t in part.trains), hm0=h, tp=tp, peak_dir=peak_dir, power_kw_m=power,
        issued=issued, observed_at=list(observed_at) if observed_at is not None else [],
        coverage=list(coverage) if coverage is not None else [],
    )  # fmt: skip


_LARGEST: dict[float, float] = {}


def _largest_ratio(n_waves: NDArray[np.float64]) -> NDArray[np.float64]:
    """E[Hmax]/Hm0 for N waves (Rayleigh, `expected_max_height_ratio`), memoised on whole N:
    the exact integral costs a quadrature per value and N repeats across steps and spots."""
    uniq, inv = np.unique(n_waves, return_inverse=True)
    missing = [v for v in uniq.tolist() if v not in _LARGEST]
    if missing:
        for v, r in zip(
            missing, expected_max_height_ratio(np.asarray(missing), reference="hm0").tolist(), strict=True
        ):
            _LARGEST[v] = r
    return np.array([_LARGEST[v] for v in uniq.tolist()])[inv].reshape(n_waves.shape)


@dataclass
class SpotArrays:
    """Results for one spot over the steps of one batch. Shapes: P points, T steps, K trains."""

    near_hs: NDArray[np.float64]  # (P, T, 1 + K) nearshore Hm0 at the reference depth
    near_tp: NDArray[np.float64]  # (P, T, 1 + K), NaN where empty
    near_dir: NDArray[np.float64]  # (P, T, 1 + K), NaN where empty
    near_tm02: NDArray[np.float64]  # (P, T)
    hb: NDArray[np.float64]  # (P, T, 3 + K): typical, sets, largest, then trains (significant); NaN = none
    db: NDArray[np.float64]  # same shape
    angle_b: NDArray[np.float64]  # angle to the contour normal at breaking (signed)
    iribarren: NDArray[np.float64]
    breaker_type: NDArray[np.str_]
    kg: NDArray[np.float64]  # Komar & Gaudiano heights
    water_level: NDArray[np.float64]  # (T,)


@dataclass(frozen=True)
class TransferWeights:
    """A table's application on one spectral grid, precomputed: `models.transfer.apply` is
    E_near(f) = Σ_j E(f, θ_j) W[f, j] plus the energy-weighted direction vector Σ_j E (Wx, Wy)[f, j]
    (math frame, x east), with W = Δθ0 K²(f) A and (Wx, Wy) = Δθ0 K²(f) (cos, sin)(β_near) A, A the
    periodic linear interpolation from the spectrum's directions to the table's bins. Same maths as
    `apply` (checked to 1e-10 in tests), done once per (table, grid) instead of per call."""

    w: NDArray[np.float64]  # (3, nf, nd_spec): W, Wx, Wy


_WEIGHTS: weakref.WeakKeyDictionary[TransferTable, dict[tuple[bytes, bytes], TransferWeights]] = (
    weakref.WeakKeyDictionary()
)


def _interp_matrix(x: NDArray[np.float64], xp: NDArray[np.float64]) -> NDArray[np.float64]:
    """B[i, k] such that B @ fp = np.interp(x, xp, fp) (ascending xp, clamped at the ends)."""
    B = np.zeros((x.size, xp.size))
    if xp.size == 1:
        B[:, 0] = 1.0
        return B
    xc = np.clip(x, xp[0], xp[-1])
    i = np.clip(np.searchsorted(xp, xc, side="right") - 1, 0, xp.size - 2)
    t = (xc - xp[i]) / (xp[i + 1] - xp[i])
    rows = np.arange(x.size)
    np.add.at(B, (rows, i), 1.0 - t)
    np.add.at(B, (rows, i + 1), t)
    return B


def transfer_weights(
    table: TransferTable, frequency_hz: NDArray[np.float64], directions_deg: NDArray[np.float64]
) -> TransferWeights:
    """The (memoised) weights of `table` on the spectral grid (frequency_hz, directions_deg)."""
    f = np.ascontiguousarray(frequency_hz, dtype=float)
    d = np.ascontiguousarray(directions_deg, dtype=float)
    per = _WEIGHTS.setdefault(table, {})
    key = (f.tobytes(), d.tobytes())
    if key not in per:
        tf = 1.0 / table.periods_s[::-1]  # ascending table frequencies, as in `apply`
        k2 = (table.coefficient**2)[::-1]
        nb = np.radians(90.0 - np.nan_to_num(table.nearshore_direction_deg[::-1], nan=0.0))
        B = _interp_matrix(f, tf)  # (nf, np): linear in frequency, clamped
        A = _direction_matrix(d, table.directions_deg)  # (nd_table, nd_spec)
        dth = math.radians(table.direction_bin_deg)
        w = np.stack([B @ k2, B @ (k2 * np.cos(nb)), B @ (k2 * np.sin(nb))])  # (3, nf, nd_table)
        per[key] = TransferWeights(w=dth * (w @ A))
    return per[key]


_CHUNK_POINTS = 128  # points per matrix product (bounds the (nf, T·K, 3·points) temporary)


def _nearshore_many(batch: OffshoreBatch, points: Sequence[PointSetup]):  # type: ignore[no-untyped-def]
    """Nearshore Hm0, Tp, mean direction (per whole spectrum and train) and Tm02 of the whole
    spectrum, for many points at once: one matrix product per frequency for a chunk of points."""
    f = batch.frequency
    nt, nk, nf, nd = batch.stack.shape
    P = len(points)
    E = np.ascontiguousarray(batch.stack.reshape(nt * nk, nf, nd).transpose(1, 0, 2))  # (nf, T·K, nd)
    widths = bin_widths(f)
    hs = np.zeros((P, nt, nk))
    tp = np.full((P, nt, nk), np.nan)
    dr = np.full((P, nt, nk), np.nan)
    tm02 = np.full((P, nt), np.nan)
    for c0 in range(0, P, _CHUNK_POINTS):
        pts = points[c0 : c0 + _CHUNK_POINTS]
        W = np.concatenate([transfer_weights(p.table, f, batch.directions).w for p in pts], axis=0)  # (3n, nf, nd)
        R = np.matmul(E, W.transpose(1, 2, 0))  # (nf, T·K, 3n)
        R = R.reshape(nf, nt, nk, len(pts), 3).transpose(4, 3, 1, 2, 0)  # (3, n, T, K, nf)
        dens, vx, vy = R[0], R[1], R[2]
        sl = slice(c0, c0 + len(pts))
        m0 = np.sum(dens * widths, axis=-1)
        hs[sl] = 4.0 * np.sqrt(np.maximum(m0, 0.0))
        ok = dens.max(axis=-1) > 0
        ip = np.argmax(dens, axis=-1)
        tp[sl] = np.where(ok, 1.0 / f[ip], np.nan)
        # energy-weighted circular mean of the per-frequency mean directions (unit vectors, FROM)
        r = np.hypot(vx, vy)
        pos = dens > 0
        with np.errstate(invalid="ignore", divide="ignore"):
            ux = np.where(r > 0, vx / r, 1.0)  # arctan2(0, 0) = 0 in `apply`: math angle 0
            uy = np.where(r > 0, vy / r, 0.0)
        # (sin, cos) of the nautical angle 90° - φ are (cos φ, sin φ) = (ux, uy)
        sx = np.sum(np.where(pos, dens * ux, 0.0), axis=-1)
        sy = np.sum(np.where(pos, dens * uy, 0.0), axis=-1)
        dr[sl] = np.where(ok, np.degrees(np.arctan2(sx, sy)) % 360.0, np.nan)
        m2 = np.sum(dens[:, :, 0] * (f**2 * widths), axis=-1)
        good = (m0[:, :, 0] > 0) & (m2 > 0)
        with np.errstate(invalid="ignore", divide="ignore"):
            tm02[sl] = np.where(good, np.sqrt(m0[:, :, 0] / m2), np.nan)
    return hs, tp, dr, tm02


def _nearshore(batch: OffshoreBatch, points: Sequence[PointSetup]):  # type: ignore[no-untyped-def]
    """One spot's points (see `_nearshore_many`)."""
    return _nearshore_many(batch, points)


def compute_spots(
    batch: OffshoreBatch,
    spots: Sequence[Sequence[PointSetup]],
    *,
    water_level_m: float | NDArray[np.float64] = 0.0,
) -> list[SpotArrays]:
    """Nearshore spectra per point and breaking of every class, for many spots at once.

    The table application loops over points (one `apply` per point for all steps and trains);
    breaking of every (spot, point, step, class) goes through one `shoal_to_breaking` call.
    """
    nt = len(batch.times)
    wl = np.broadcast_to(np.asarray(water_level_m, dtype=float), (nt,)).copy()
    if not np.all(np.isfinite(wl)):
        raise BadInput("`water_level_m` must be finite", field="water_level_m")
    flat_pts = [p for pts in spots for p in pts]
    allnear = _nearshore_many(batch, flat_pts)
    near, c = [], 0
    for pts in spots:
        near.append(tuple(v[c : c + len(pts)] for v in allnear))
        c += len(pts)
    K = batch.stack.shape[1] - 1
    ncls = 3 + K
    # assemble the breaking problem for all spots
    H, T, TH, D, M, owner = [], [], [], [], [], []
    for pts, (hs, tp, dr, tm02) in zip(spots, near, strict=True):
        P = len(pts)
        n_waves = np.where(
            np.isfinite(tm02),
            np.maximum(1.0, np.round(LARGEST_WINDOW_S / np.where(np.isfinite(tm02), tm02, 1.0))),
            1.0,
        )
        largest_ratio = _largest_ratio(n_waves)  # (P, T)
        h = np.empty((P, nt, ncls))
        h[..., 0] = hs[..., 0]
        h[..., 1] = hs[..., 0] * SETS_RATIO
        h[..., 2] = hs[..., 0] * largest_ratio
        h[..., 3:] = hs[..., 1:]
        per = np.concatenate([np.repeat(tp[..., :1], 3, axis=-1), tp[..., 1:]], axis=-1)
        dirs = np.concatenate([np.repeat(dr[..., :1], 3, axis=-1), dr[..., 1:]], axis=-1)
        normal = np.array([p.normal_deg for p in pts])[:, None, None]
        slope = np.array([p.slope for p in pts])[:, None, None]
        href = np.array([p.table.reference_depth_m for p in pts])[:, None, None] + wl[None, :, None]
        theta = np.where(np.isfinite(dirs), wrap_180(np.nan_to_num(dirs) - normal), np.nan)
        H.append(h)
        T.append(per)
        TH.append(theta)
        D.append(np.broadcast_to(href, h.shape))
        M.append(np.broadcast_to(slope, h.shape))
        owner.append(h.size)
    flat = [np.concatenate([a.ravel() for a in arrs]) if arrs else np.empty(0) for arrs in (H, T, TH, D, M)]
    h, per, theta, depth, slope = flat
    valid = (h >= MIN_HEIGHT_M) & np.isfinite(per) & np.isfinite(theta) & (depth > 0)
    out = {k: np.full(h.shape, np.nan) for k in ("hb", "db", "ang", "xi", "kg")}
    btype = np.full(h.shape, "", dtype="<U10")
    if valid.any():
        r = shoal_to_breaking(
            h[valid],
            per[valid],
            np.clip(theta[valid], -MAX_ANGLE_DEG, MAX_ANGLE_DEG),
            depth[valid],
            slope=slope[valid],
        )
        out["hb"][valid], out["db"][valid], out["ang"][valid] = r.height, r.depth, r.angle_deg
        out["xi"][valid], out["kg"][valid] = r.iribarren, r.komar_gaudiano_height
        btype[valid] = r.breaker_type
    results = []
    start = 0
    for s, (pts, (hs, tp, dr, tm02)) in enumerate(zip(spots, near, strict=True)):
        shape = (len(pts), nt, ncls)
        sl = slice(start, start + owner[s])
        start += owner[s]
        results.append(
            SpotArrays(
                near_hs=hs,
                near_tp=tp,
                near_dir=dr,
                near_tm02=tm02,
                hb=out["hb"][sl].reshape(shape),
                db=out["db"][sl].reshape(shape),
                angle_b=out["ang"][sl].reshape(shape),
                iribarren=out["xi"][sl].reshape(shape),
                breaker_type=btype[sl].reshape(shape),
                kg=out["kg"][sl].reshape(shape),
                water_level=wl,
            )  # fmt: skip
        )
    return results


def _crest_at_reference(table: TransferTable, period_s: float, from_deg: float) -> tuple[float, float]:
    """(crest travel time [s], nearshore FROM direction [deg]) at the table's reference point for
    one offshore component: nearest direction bin, linear in period (NaN where blocked)."""
    k = int(np.argmin(np.abs(wrap_180(table.directions_deg - from_deg))))
    col = table.travel_time_s[:, k]
    nd = table.nearshore_direction_deg[:, k]
    ok = np.isfinite(col) & np.isfinite(nd)
    if not ok.any():
        return math.nan, math.nan
    per = table.periods_s[ok]
    tt = float(np.interp(period_s, per, col[ok]))
    r = np.radians(nd[ok])
    d = math.degrees(math.atan2(np.interp(period_s, per, np.sin(r)), np.interp(period_s, per, np.cos(r)))) % 360.0
    return tt, d


def _travel_time(table: TransferTable, period_s: float, from_deg: float) -> float:
    """Table crest travel time for one component (see `_crest_at_reference`)."""
    return _crest_at_reference(table, period_s, from_deg)[0]


def _run_time(
    dx: float, dy: float, h_ref: float, h_b: float, period: float, wave_from_deg: float, normal_deg: float
) -> float:
    """Phase (crest) time from the reference point to a point (dx, dy) [m] from it at the breaking
    depth, over locally straight contours with seaward normal `normal_deg`; the depth runs linearly
    from h_ref to h_b along the way and the crest, from `wave_from_deg` at the reference point,
    turns by Snell. The crest's slowness is k/ω: along the contour sin θ/C (constant by Snell),
    across it cos θ/C, so Δt = D_along·sin θ_ref/C_ref + D_across·mean(cos θ(h)/C(h))."""
    b = math.radians(normal_deg)
    n_in = (-math.sin(b), -math.cos(b))  # shoreward unit normal (x east, y north)
    tang = (-n_in[1], n_in[0])
    w = math.radians(wave_from_deg)
    k = (-math.sin(w), -math.cos(w))  # propagation direction
    f = 1.0 / period
    c_ref = float(phase_speed(f, h_ref)) if h_ref > 0 else math.nan
    s_t = (k[0] * tang[0] + k[1] * tang[1]) / c_ref  # along-contour slowness (Snell invariant)
    d_across = dx * n_in[0] + dy * n_in[1]
    d_along = dx * tang[0] + dy * tang[1]
    hh = h_ref + (h_b - h_ref) * (np.arange(16) + 0.5) / 16.0  # midpoints along the way
    c = phase_speed(f, np.maximum(hh, 1e-3))
    cos = np.sqrt(np.clip(1.0 - (s_t * c) ** 2, 0.0, None))
    return float(d_along * s_t + d_across * np.mean(cos / c))


def _rate(r: Any) -> float | None:
    """Peel rate, only where the wave peels (a closeout has no meaningful rate)."""
    return _num(r.peel_rate_m_s) if r.direction != "closeout" else None


def _peel_at(
    points: Sequence[PointSetup], arr: SpotArrays, step: int, *, offshore_tp: float, offshore_dir: float
) -> dict[str, Any]:
    """Peel of one step (see the module docstring); uses the typical class for positions and times."""
    hb = arr.hb[:, step, 0].tolist()  # few points: plain Python is cheaper than numpy reductions here
    idx = np.array([i for i, v in enumerate(hb) if math.isfinite(v)], dtype=int)
    if idx.size == 0:
        return dict(direction=None, angle_deg=None, first_point=None)
    sets = arr.hb[:, step, 1]
    sl = [(v, i) for i, v in zip(idx.tolist(), sets[idx].tolist(), strict=True) if math.isfinite(v)]
    i_big = None  # the largest sets breaker (the first such point on a tie, as argmax)
    if sl:
        top = max(v for v, _ in sl)
        i_big = next(i for v, i in sl if v == top)
    largest = points[i_big].name if i_big is not None else None
    db = arr.db[:, step, 0]
    ang = arr.angle_b[:, step, 0]
    normal = np.array([p.normal_deg for p in points])
    wave_from = (normal + ang) % 360.0  # FROM direction of the crest at breaking
    wl = float(arr.water_level[step])
    times = []
    if len(idx) >= 2 and math.isfinite(offshore_tp) and math.isfinite(offshore_dir):
        xs, ys = [], []
        for i in idx:
            p = points[i]
            tt, from_ref = _crest_at_reference(p.table, offshore_tp, offshore_dir)
            # the breaking position: from the break point along the seaward normal to the breaking depth
            dist = (float(db[i]) - (p.depth_m + wl)) / p.slope
            b = math.radians(p.normal_deg)
            xb, yb = p.x + dist * math.sin(b), p.y + dist * math.cos(b)
            xs.append(xb)
            ys.append(yb)
            if not math.isfinite(tt):
                times.append(math.nan)
                continue
            # + the crest's run from the reference point to that position (not the contour-normal
            # distance at the break point: on curved contours the reference point lies to one side)
            h_ref = p.table.reference_depth_m + wl
            t_run = _run_time(xb - p.table.reference_x, yb - p.table.reference_y, h_ref, float(db[i]), offshore_tp,
                              from_ref, p.normal_deg)  # fmt: skip
            times.append(tt + t_run)
        keep = [j for j, t in enumerate(times) if math.isfinite(t)]
        if len(keep) >= 2:
            sel = idx[keep]
            mean_from = float(
                np.degrees(
                    np.arctan2(
                        np.sin(np.radians(wave_from[sel])).mean(), np.cos(np.radians(wave_from[sel])).mean()
                    )
                )
                % 360.0
            )
            cb = crest_speed(db[sel])  # local Cb = √(g hb) at each breaking point
            try:
                r = peel_from_break_times(
                    np.asarray(xs)[keep], np.asarray(ys)[keep], np.asarray(times)[keep], wave_from_deg=mean_from,
                    crest_speed_m_s=cb, breaker_height_m=np.nan_to_num(sets[sel]),
                )  # fmt: skip
                return dict(
                    direction=r.direction, sweep=r.sweep, angle_deg=_num(r.angle_deg, 1.0),
                    first_point=points[int(sel[r.first_point])].name, largest_point=largest,
                    peel_rate_m_s=_rate(r), method="break-times",
                )  # fmt: skip
            except ValueError as exc:  # coincident breaking positions etc.: fall back to the angle
                log.debug("peel from break times failed: %s", exc)
    # one break point (or no usable times): the breaking angle at the largest point
    i = i_big if i_big is not None else int(idx[0])
    return _peel_one(points[i], float(ang[i]), float(db[i]), largest)


def _peel_one(p: PointSetup, angle_b: float, db: float, largest: str | None) -> dict[str, Any]:
    """Peel at one break point from its breaking angle to the contour (`peel_from_breaking_angle`)."""
    r = peel_from_breaking_angle(
        wave_from_deg=(p.normal_deg + angle_b) % 360.0,  # FROM direction of the crest at breaking
        contour_normal_from_deg=p.normal_deg,
        crest_speed_m_s=float(crest_speed(db)),
    )
    return dict(
        direction=r.direction, sweep=r.sweep, angle_deg=_num(r.angle_deg, 1.0), first_point=p.name,
        largest_point=largest, peel_rate_m_s=_rate(r), method="breaking-angle",
    )  # fmt: skip


def peel_at(
    points: Sequence[PointSetup], arr: SpotArrays, step: int, *, offshore_tp: float, offshore_dir: float
) -> Peel:
    """Peel of one step (see the module docstring); uses the typical class for positions and times."""
    return Peel.model_validate(_peel_at(points, arr, step, offshore_tp=offshore_tp, offshore_dir=offshore_dir))


# =========================================================================== formatting


def _num(v: Any, step: float = 0.1) -> float | None:
    """Round to a multiple of `step`; None for NaN/inf (never NaN in JSON)."""
    if v is None:
        return None
    x = float(v)
    if not math.isfinite(x):
        return None
    return round(round(x / step) * step, 6)


def _deg(v: Any) -> float | None:
    x = _num(v, 1.0)
    return None if x is None else x % 360.0


def _heights(values: NDArray[np.float64], units: str) -> HeightClasses:
    if units == "imperial":
        typical, sets, largest = (_num(v / FOOT, 0.5) for v in values)
    else:
        typical, sets, largest = (_num(v, 0.1) for v in values)
    return HeightClasses(typical=typical, sets=sets, largest=largest)


def _nums(values: Any, step: float = 0.1) -> list[float | None]:
    """`_num` over an array at once (same rounding: half to even, then to 6 decimals)."""
    a = np.asarray(values, dtype=float)
    with np.errstate(invalid="ignore", over="ignore"):
        r = np.round(np.round(a / step) * step, 6) + 0.0  # + 0.0: no -0.0 (as round() gives)
    return _none_for_nan(r)


def _none_for_nan(r: NDArray[np.float64]) -> list[float | None]:
    out: list[float | None] = r.ravel().tolist()
    for i in np.flatnonzero(~np.isfinite(r.ravel())).tolist():
        out[i] = None
    return out


def _degs(values: Any) -> list[float | None]:
    a = np.asarray(values, dtype=float)
    with np.errstate(invalid="ignore"):
        return _none_for_nan((np.round(a) + 0.0) % 360.0)  # as _deg: whole degrees, then mod 360


def _grid(values: NDArray[np.float64], step: float = 0.1, deg: bool = False) -> list[list[float | None]]:
    """2-D array -> rows of rounded values (None for NaN)."""
    a = np.asarray(values, dtype=float)
    flat = _degs(a) if deg else _nums(a, step)
    n = a.shape[-1] if a.ndim > 1 else 1
    if n == 1:
        return [[v] for v in flat]
    return [flat[i : i + n] for i in range(0, len(flat), n)]


def _offshore_parts(batch: OffshoreBatch, units: str) -> tuple[Any, ...]:
    """The offshore values of each step and its trains, rounded once per batch (shared by its spots)."""
    key = f"offshore-{units}"
    if key not in batch.memo:
        swells = [
            [
                {
                    "height_m": _num(tr.hm0_m) or 0.0, "period_s": _num(tr.tp_s) or 0.0,
                    "direction_deg": _deg(tr.peak_direction_deg) or 0.0, "spread_deg": _num(tr.spread_deg, 1.0),
                    "energy_fraction": _num(tr.energy_fraction, 0.01),
                    **({"height_ft": _num(tr.hm0_m / FOOT, 0.5)} if units == "imperial" else {}),
                }
                for tr in trains
            ]
            for trains in batch.trains
        ]  # fmt: skip
        batch.memo[key] = (
            _nums(batch.hm0), _nums(batch.tp), _degs(batch.peak_dir), _nums(batch.power_kw_m), swells
        )
    return batch.memo[key]


@contextmanager
def _no_gc() -> Iterator[None]:
    """Pause the cyclic garbage collector while building many small acyclic objects (dicts, lists,
    models): its passes cost more than the building (measured: about half of the step time);
    reference counting still frees everything. Restores the previous state."""
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()


def build_steps(
    batch: OffshoreBatch, points: Sequence[PointSetup], arr: SpotArrays, policy: HazardPolicy, units: str
) -> list[Step]:
    with _no_gc():
        return _build_steps(batch, points, arr, policy, units)


def _build_steps(
    batch: OffshoreBatch, points: Sequence[PointSetup], arr: SpotArrays, policy: HazardPolicy, units: str
) -> list[Step]:
    """The outlook steps of one batch: plain dicts of rounded values (whole arrays at a time),
    validated once as a list (pydantic's compiled validator: about half the cost of building
    each model one by one)."""
    nt = len(batch.times)
    P = len(points)
    K = batch.stack.shape[1] - 1  # trains per step: at most K
    # hazard on the sets height where it is largest (0 where nothing breaks)
    sets = arr.hb[:, :, 1]
    has = np.isfinite(sets)
    any_has = has.any(axis=0)  # (T,)
    set_max = np.maximum(np.where(any_has, np.max(np.where(has, sets, -np.inf), axis=0), 0.0), 0.0)
    levels = hazard_level(
        policy,
        set_max,
        period_s=np.nan_to_num(batch.tp, nan=0.0),
        power_kw_m=np.nan_to_num(batch.power_kw_m, nan=0.0),
    )
    ip = np.where(any_has, np.argmax(np.where(has, sets, -np.inf), axis=0), 0)  # (T,) point of the largest sets
    tt = np.arange(nt)
    heights = np.where(any_has[:, None], arr.hb[ip, tt, :3], np.nan)  # (T, 3)
    if units == "imperial":
        hrows = _grid(heights / FOOT, 0.5)
    else:
        hrows = _grid(heights, 0.1)
    period = _nums(arr.near_tp[ip, tt, 0])
    ndir = _degs(arr.near_dir[ip, tt, 0])
    bdepth = _nums(arr.db[ip, tt, 1])
    xi = _nums(arr.iribarren[ip, tt, 1], 0.01)
    btype = arr.breaker_type[ip, tt, 1].tolist()
    off_h, off_tp, off_dir, off_pw, offshore_swells = _offshore_parts(batch, units)
    labels = {lv: policy.label(lv) for lv in set(levels.tolist())}
    # per point details (T, P) and per train values at the step's point (T, K)
    det = None
    if P:
        det = (
            _grid(arr.near_hs[:, :, 0].T), _grid(arr.near_tp[:, :, 0].T), _grid(arr.near_dir[:, :, 0].T, deg=True),
            _grid(arr.hb[:, :, 1].T), _grid(arr.db[:, :, 1].T), _grid(arr.angle_b[:, :, 1].T, 1.0),
            _grid(arr.kg[:, :, 1].T), _grid(arr.iribarren[:, :, 1].T, 0.01), arr.breaker_type[:, :, 1].T.tolist(),
        )  # fmt: skip
    if K:
        hb_k = arr.hb[ip, tt, 3 : 3 + K]
        near_k = arr.near_hs[ip, tt, 1 : 1 + K]
        tr_hb = _grid(hb_k)
        tr_near = _grid(np.where(near_k >= MIN_HEIGHT_M, near_k, np.nan))
        tr_ndir = _grid(arr.near_dir[ip, tt, 1 : 1 + K], deg=True)
        if units == "imperial":
            tr_hb_ft = _grid(hb_k / FOOT, 0.5)
    names = [p.name for p in points]
    if P == 1:
        one_hb, one_sets = arr.hb[0, :, 0].tolist(), arr.hb[0, :, 1].tolist()
        one_db, one_ang = arr.db[0, :, 0].tolist(), arr.angle_b[0, :, 0].tolist()
    steps = []
    for t in range(nt):
        hv = hrows[t]
        hc = dict(typical=hv[0], sets=hv[1], largest=hv[2])
        swells = [
            dict(off, breaker_height_m=tr_hb[t][k], nearshore_height_m=tr_near[t][k],
                 nearshore_direction_deg=tr_ndir[t][k],
                 **({"breaker_height_ft": tr_hb_ft[t][k]} if units == "imperial" else {}))
            for k, off in enumerate(offshore_swells[t])
        ]  # fmt: skip
        details = []
        if det is not None:
            d0, d1, d2, d3, d4, d5, d6, d7, d8 = (c[t] for c in det)
            details = [
                dict(
                    name=names[i], nearshore_height_m=d0[i], nearshore_period_s=d1[i], nearshore_direction_deg=d2[i],
                    breaker_height_m=d3[i], breaking_depth_m=d4[i], breaking_angle_deg=d5[i],
                    komar_gaudiano_height_m=d6[i], iribarren=d7[i], breaker_type=d8[i] or None,
                )  # fmt: skip
                for i in range(P)
            ]
        if P == 1:  # the common single-point spot: straight from the per-step lists
            if not math.isfinite(one_hb[t]):
                peel = dict(direction=None, angle_deg=None, first_point=None)
            else:
                big = names[0] if math.isfinite(one_sets[t]) else None
                peel = _peel_one(points[0], one_ang[t], one_db[t], big)
        else:
            peel = _peel_at(points, arr, t, offshore_tp=float(batch.tp[t]), offshore_dir=float(batch.peak_dir[t]))
        lv = int(levels[t])
        ok = bool(any_has[t])
        steps.append(
            dict(
                time=batch.times[t],
                source=batch.source,
                input=batch.kind,
                issued=batch.issued,
                observed_at=batch.observed_at[t] if batch.observed_at else None,
                arrival_coverage=_num(batch.coverage[t], 0.01) if batch.coverage else None,
                breaker_height_m=hc if units == "metric" else None,
                breaker_height_ft=hc if units == "imperial" else None,
                period_s=period[t],
                nearshore_direction_deg=ndir[t],
                breaker_type=(btype[t] or None) if ok else None,
                breaking_depth_m=bdepth[t],
                iribarren=xi[t],
                largest_point=names[ip[t]] if ok else None,
                peel=peel,
                hazard=dict(
                    level=lv, label=labels[lv], policy=policy.name, policy_is_default=policy.is_default
                ),
                offshore=dict(
                    hm0_m=off_h[t] or 0.0, peak_period_s=off_tp[t], direction_deg=off_dir[t], wave_power_kw_m=off_pw[t]
                ),
                swells=swells,
                points=details,
            )  # fmt: skip
        )
    return _STEPS.validate_python(steps)


def cautions_for(policy: HazardPolicy) -> list[str]:
    out = list(CAUTIONS)
    if policy.is_default:
        out.append(
            "Hazard levels use shoalcast's labelled default policy, not an agency's; it is calibrated for no place."
        )
    return out


# =========================================================================== database side


WaterLevel = float | Sequence[tuple[datetime, float]]


def _floor_hour(t: datetime) -> datetime:
    return t.astimezone(UTC).replace(minute=0, second=0, microsecond=0)


def _aware(t: datetime, what: str) -> datetime:
    if t.tzinfo is None or t.utcoffset() is None:
        raise BadInput(f"`{what}` must be timezone-aware (UTC), got {t.isoformat()}", field=what)
    return t.astimezone(UTC)


def spot_points(spot: Spot, notes: list[str] | None = None) -> list[PointSetup]:
    """Break points with a table, in order along the break, with the local contours at each."""
    from app.services.spots import depth_grid_of

    notes = notes if notes is not None else []
    grid = depth_grid_of(spot)
    smoothed: dict[float, Any] = {}
    out = []
    for bp in spot.break_points:
        if bp.table is None:
            notes.append(
                f"break point {bp.name!r} has no transfer table (run `shoalcast tables build {spot.id}`)"
            )
            continue
        table = load_table(bp.table)
        sm = float(table.meta.get("smoothing_m", 0.0) or 0.0)
        if sm not in smoothed:  # the contours the rays saw
            smoothed[sm] = grid.smoothed(sm) if sm > 0 else grid
        geo = smoothed[sm].contour_geometry(bp.x, bp.y)
        slope, normal = float(geo.slope), float(geo.normal_deg)
        if not (math.isfinite(slope) and slope >= MIN_SLOPE and math.isfinite(normal)):
            notes.append(
                f"break point {bp.name!r}: bottom nearly flat; slope {MIN_SLOPE} and the spot's facing used"
            )
            slope, normal = max(slope if math.isfinite(slope) else 0.0, MIN_SLOPE), float(spot.faces_deg)
        depth = float(geo.depth) if math.isfinite(float(geo.depth)) else float(bp.depth_m)
        out.append(PointSetup(bp.name, float(bp.x), float(bp.y), table, depth, slope, normal % 360.0))
    if not out:
        raise Conflict(
            f"spot {spot.id!r} has no transfer tables yet: build them with `shoalcast tables build {spot.id}` "
            f"or POST /v1/spots/{spot.id}/tables"
        )
    return out


@dataclass(frozen=True)
class _Light:
    id: int
    sha: str
    source_id: str
    time: datetime
    issue_time: datetime | None


def _candidates(session: Session, spot: Spot, start: datetime, end: datetime) -> list[_Light]:
    """Observation rows an outlook over [start, end] may use (ids and hashes only, no arrays)."""
    if not spot.sources:
        return []
    lookback = start - timedelta(hours=OBSERVATION_LOOKBACK_H)
    cols = (
        Observation.id,
        Observation.content_sha256,
        Observation.source_id,
        Observation.time,
        Observation.issue_time,
    )
    rows = [
        _Light(*r)
        for r in session.execute(
            select(*cols).where(
                Observation.source_id.in_(spot.sources),
                Observation.kind == "spectrum",
                Observation.time >= lookback,
                Observation.time <= end,
            )
        )
    ]
    latest: dict[str, datetime] = {}
    for r in rows:
        if r.issue_time is not None and (r.source_id not in latest or r.issue_time > latest[r.source_id]):
            latest[r.source_id] = r.issue_time
    keep = [
        r
        for r in rows
        if (r.issue_time is None) or (r.issue_time == latest[r.source_id] and start <= r.time <= end)
    ]
    return sorted(keep, key=lambda r: (r.source_id, r.issue_time is not None, r.time, r.id))


def _water_level_at(water_level: WaterLevel, times: Sequence[datetime]) -> NDArray[np.float64]:
    if isinstance(water_level, int | float):
        return np.full(len(times), float(water_level))
    pts = sorted((_aware(t, "water_level time").timestamp(), float(v)) for t, v in water_level)
    if not pts:
        return np.zeros(len(times))
    ts, vs = np.array([p[0] for p in pts]), np.array([p[1] for p in pts])
    return np.interp([t.timestamp() for t in times], ts, vs)


def _water_key(water_level: WaterLevel) -> Any:
    if isinstance(water_level, int | float):
        return float(water_level)
    return [[_aware(t, "water_level time").isoformat(), float(v)] for t, v in water_level]


def _efth_of(rec: Any) -> tuple[NDArray[np.float64], NDArray[np.float64]] | None:
    """(directions, efth) of a record: its own E(f, θ), else MEM from the buoy coefficients."""
    if rec.efth is not None and rec.directions_deg is not None:
        return np.asarray(rec.directions_deg, dtype=float), np.clip(
            np.asarray(rec.efth, dtype=float), 0.0, None
        )
    if rec.r1 is None:
        return None
    d = COEFFICIENT_DIRECTIONS_DEG
    e = directional_spectrum_from_coefficients(
        rec.frequency, rec.density, d, r1=rec.r1, r2=rec.r2, alpha1_deg=rec.alpha1_deg, alpha2_deg=rec.alpha2_deg,
        method=DIRECTIONAL_METHOD,
    )  # fmt: skip
    return d, e


def _records(session: Session, ids: Sequence[int], notes: list[str]) -> list[tuple[Any, NDArray, NDArray]]:
    from app.ingest.store import record_from_observation

    out = []
    for obs in session.scalars(
        select(Observation).where(Observation.id.in_(list(ids))).order_by(Observation.time)
    ):
        try:
            rec = record_from_observation(obs)
            de = _efth_of(rec)
        except (ValueError, BadInput) as exc:
            notes.append(f"observation {obs.id} ({obs.source_id} {obs.time.isoformat()}) left out: {exc}")
            continue
        if de is None:
            notes.append(
                f"observation {obs.id} ({obs.source_id} {obs.time.isoformat()}) has no directions: left out"
            )
            continue
        out.append((rec, *de))
    return out


def _one_grid(
    recs: list[tuple[Any, NDArray, NDArray]], source_id: str, notes: list[str]
) -> list[tuple[Any, NDArray, NDArray]]:
    """Keep the records on the grid of the latest one (a batch needs one (f, θ) grid)."""
    if not recs:
        return recs
    ref = recs[-1]
    same = [r for r in recs if r[0].frequency.shape == ref[0].frequency.shape and r[1].shape == ref[1].shape
            and np.allclose(r[0].frequency, ref[0].frequency) and np.allclose(r[1], ref[1])]  # fmt: skip
    if len(same) < len(recs):
        notes.append(
            f"source {source_id!r}: {len(recs) - len(same)} spectra on another frequency/direction grid left out"
        )
    return same


def _batches(
    session: Session, spot: Spot, cands: list[_Light], start: datetime, end: datetime, notes: list[str]
) -> list[OffshoreBatch]:
    batches = []
    for source_id in dict.fromkeys(c.source_id for c in cands):
        src = session.get(Source, source_id)
        mine = [c for c in cands if c.source_id == source_id]
        fc = _one_grid(
            _records(session, [c.id for c in mine if c.issue_time is not None], notes), source_id, notes
        )
        if fc:
            batches.append(
                prepare_offshore(
                    [r[0].time for r in fc],
                    fc[0][0].frequency,
                    fc[0][1],
                    np.stack([r[2] for r in fc]),
                    source=source_id,
                    kind="model-forecast",
                    issued=fc[0][0].issue_time,
                )  # fmt: skip
            )
        ob = _one_grid(
            _records(session, [c.id for c in mine if c.issue_time is None], notes), source_id, notes
        )
        if not ob or src is None:
            continue
        times = [r[0].time for r in ob]
        f, d, e = ob[0][0].frequency, ob[0][1], np.stack([r[2] for r in ob])
        dist = float(great_circle_distance(src.latitude, src.longitude, spot.latitude, spot.longitude))
        if dist < OBSERVED_DISTANCE_M:
            idx = [i for i, t in enumerate(times) if start <= t <= end]
            if idx:
                batches.append(prepare_offshore([times[i] for i in idx], f, d, e[idx], source=source_id, kind="observed",
                                                observed_at=[times[i] for i in idx]))  # fmt: skip
            continue
        bearing = float(initial_bearing(src.latitude, src.longitude, spot.latitude, spot.longitude))
        n = int((end - start).total_seconds() // 3600) + 1
        targets = [start + timedelta(hours=h) for h in range(n)]
        arr = shift_to_spot(times, f, d, e, distance_m=dist, bearing_deg=bearing, target_times=targets)
        whole = arr.energy_coverage >= ARRIVAL_MIN_ENERGY_COVERAGE
        keep = [k for k in range(n) if whole[k] and arr.efth[k].max() > 0]
        partial = int(np.sum(~whole & (arr.energy_coverage > 0)))
        if partial:
            notes.append(
                f"source {source_id!r}: {partial} arrival hour(s) left out, under "
                f"{ARRIVAL_MIN_ENERGY_COVERAGE:.0%} of the latest observation's energy observed "
                "(the model forecast is used there when there is one)"
            )
        if keep:
            batches.append(
                prepare_offshore(
                    [targets[k] for k in keep],
                    f,
                    d,
                    arr.efth[keep],
                    source=source_id,
                    kind="arrival-forecast",
                    observed_at=[times[int(arr.dominant_observation[k])] for k in keep],
                    coverage=[float(arr.energy_coverage[k]) for k in keep],
                )  # fmt: skip
            )
    return batches


def _select(batches: list[OffshoreBatch]) -> list[OffshoreBatch]:
    """One input per time: observed > arrival-forecast > model-forecast (then the first source)."""
    best: dict[datetime, tuple[int, int, int]] = {}
    for b, batch in enumerate(batches):
        for j, t in enumerate(batch.times):
            cand = (_PRIORITY[batch.kind], b, j)
            if t not in best or cand < best[t]:
                best[t] = cand
    picks: dict[int, list[int]] = {}
    for _, b, j in sorted(best.values(), key=lambda c: (c[1], c[2])):
        picks.setdefault(b, []).append(j)
    return [batches[b].subset(js) for b, js in sorted(picks.items())]


def _policy(session: Session, agency_id: str | None, spot_id: str) -> HazardPolicy:
    from app.services.agencies import get_agency, policy_for

    if agency_id is not None:
        get_agency(session, agency_id)  # NotFound for an unknown agency
    return policy_for(session, agency_id, spot_id)


def _check_options(hours: int, units: str) -> None:
    if not (isinstance(hours, int) and 1 <= hours <= 24 * 16):
        raise BadInput(f"`hours` must be a whole number of hours within 1..384, got {hours!r}", field="hours")
    if units not in ("metric", "imperial"):
        raise BadInput(f"`units` must be 'metric' or 'imperial', got {units!r}", field="units")


def compute_outlook(
    session: Session,
    spot_id: str,
    *,
    hours: int = 72,
    start: datetime | None = None,
    units: str = "metric",
    agency_id: str | None = None,
    water_level_m: WaterLevel = 0.0,
) -> OutlookBody:
    """Compute a spot's outlook from [start, start + hours] (start: the current hour when None)."""
    from app.services.spots import get_spot

    _check_options(hours, units)
    spot = get_spot(session, spot_id)
    t0 = _floor_hour(utcnow()) if start is None else _aware(start, "start")
    end = t0 + timedelta(hours=hours)
    notes: list[str] = []
    points = spot_points(spot, notes)
    policy = _policy(session, agency_id, spot.id)
    batches = _select(_batches(session, spot, _candidates(session, spot, t0, end), t0, end, notes))
    if not spot.sources:
        notes.append("the spot has no sources: no steps")
    steps: list[Step] = []
    for batch in batches:
        wl = _water_level_at(water_level_m, batch.times)
        arr = compute_spots(batch, [points], water_level_m=wl)[0]
        steps.extend(build_steps(batch, points, arr, policy, units))
    steps.sort(key=lambda s: s.time)
    return OutlookBody(
        spot_id=spot.id, name=spot.name, units=units, cautions=cautions_for(policy), computed_at=utcnow(), start=t0,
        hours=hours, policy=policy.name, policy_is_default=policy.is_default, break_points=[p.name for p in points],
        notes=notes, steps=steps,
        options=OutlookOptions(hours=hours, start=start, units=units, agency_id=agency_id,
                               water_level_m=float(water_level_m) if isinstance(water_level_m, int | float) else 0.0),
    )  # fmt: skip


def _variant(hours: int, start: datetime | None, units: str, agency_id: str | None, water: Any) -> str:
    key = json.dumps([hours, None if start is None else start.isoformat(), units, agency_id, water])
    return hashlib.sha256(key.encode()).hexdigest()[:40]


def outlook_key(
    session: Session,
    spot_id: str,
    *,
    hours: int = 72,
    start: datetime | None = None,
    units: str = "metric",
    agency_id: str | None = None,
    water_level_m: WaterLevel = 0.0,
) -> str:
    """Hash of exactly an outlook's inputs: spot profile, tables (input hash + engine version),
    the observations it may use (id + content hash), the policy, the options and OUTLOOK_VERSION."""
    from app.services.spots import get_spot

    _check_options(hours, units)
    spot = get_spot(session, spot_id)
    t0 = _floor_hour(utcnow()) if start is None else _aware(start, "start")
    end = t0 + timedelta(hours=hours)
    sources = []
    for sid in spot.sources or []:
        src = session.get(Source, sid)
        sources.append([sid, None if src is None else [src.latitude, src.longitude]])
    doc = {
        "version": OUTLOOK_VERSION,
        "spot": [spot.id, spot.profile_sha256, spot.latitude, spot.longitude, spot.faces_deg],
        "points": [
            [
                bp.id,
                bp.name,
                bp.x,
                bp.y,
                bp.reference_depth_m,
                None if bp.table is None else [bp.table.id, bp.table.input_hash, bp.table.engine_version],
            ]
            for bp in spot.break_points
        ],  # fmt: skip
        "bathymetry": None if spot.bathymetry is None else spot.bathymetry.sha256,
        "sources": sources,
        "observations": [[c.id, c.sha] for c in _candidates(session, spot, t0, end)],
        "policy": _policy(session, agency_id, spot.id).to_mapping(),
        "options": [hours, t0.isoformat(), units, agency_id, _water_key(water_level_m)],
    }
    return hashlib.sha256(json.dumps(doc, sort_keys=True, default=str).encode()).hexdigest()


_inflight: dict[tuple[str, str], threading.Lock] = {}
_inflight_guard = threading.Lock()


def _inflight_lock(spot_id: str, variant: str) -> threading.Lock:
    with _inflight_guard:
        return _inflight.setdefault((spot_id, variant), threading.Lock())


def _cached_row(session: Session, spot_id: str, variant: str) -> OutlookCache | None:
    return session.scalars(
        select(OutlookCache)
        .where(OutlookCache.spot_id == spot_id, OutlookCache.variant == variant)
        .execution_options(populate_existing=True)
    ).first()


def _get(session: Session, spot_id: str, **options: Any) -> tuple[OutlookBody, bool]:
    key = outlook_key(session, spot_id, **options)
    variant = _variant(options.get("hours", 72), options.get("start"), options.get("units", "metric"),
                       options.get("agency_id"), _water_key(options.get("water_level_m", 0.0)))  # fmt: skip
    row = _cached_row(session, spot_id, variant)
    if row is not None and row.input_hash == key:
        if row.stale:  # marked by ingest, but nothing it uses changed
            row.stale = False
            session.flush()
        return OutlookBody.model_validate(row.body), False
    # Single flight: when many requests find the same outlook out of date at once (pollers right
    # after an ingest), one computes it and the others answer with the previous outlook meanwhile
    # rather than all computing the same thing (only a first-ever outlook makes them wait).
    lock = _inflight_lock(spot_id, variant)
    if not lock.acquire(blocking=row is None):
        assert row is not None
        return OutlookBody.model_validate(row.body), False
    try:
        row = _cached_row(session, spot_id, variant)
        if row is not None and row.input_hash == key:  # computed while we waited
            return OutlookBody.model_validate(row.body), False
        body = compute_outlook(session, spot_id, **options)
        data = body.model_dump(mode="json")
        if row is None:
            row = OutlookCache(spot_id=spot_id, variant=variant)
            session.add(row)
        row.input_hash, row.stale, row.computed_at, row.body = key, False, utcnow(), data
        session.flush()
        session.commit()  # publish before releasing the lock, so waiters find it
        return body, True
    finally:
        lock.release()


def get_outlook(
    session: Session,
    spot_id: str,
    *,
    hours: int = 72,
    start: datetime | None = None,
    units: str = "metric",
    agency_id: str | None = None,
    water_level_m: WaterLevel = 0.0,
) -> OutlookBody:
    """The cached outlook when its inputs are unchanged, else computed and stored (see `outlook_key`)."""
    return _get(
        session,
        spot_id,
        hours=hours,
        start=start,
        units=units,
        agency_id=agency_id,
        water_level_m=water_level_m,
    )[0]


def refresh_stale(session: Session) -> list[str]:
    """Bring every stale cached outlook up to date (the scheduler calls this after ingest).

    Returns the ids of the spots whose outlooks were recomputed. A spot that can no longer be
    computed (its tables were removed, say) keeps its stale row and is logged, the others go on.
    """
    done = []
    for row in list(session.scalars(select(OutlookCache).where(OutlookCache.stale.is_(True)))):
        try:
            opts = OutlookOptions.model_validate(row.body.get("options", {}))
            _, computed = _get(session, row.spot_id, hours=opts.hours, start=opts.start, units=opts.units,
                               agency_id=opts.agency_id, water_level_m=opts.water_level_m)  # fmt: skip
        except (ValueError, BadInput, NotFound, Conflict) as exc:
            log.warning("outlook of spot %s (variant %s) not refreshed: %s", row.spot_id, row.variant, exc)
            continue
        if computed:
            done.append(row.spot_id)
    return sorted(set(done))


__all__ = [
    "CAUTIONS",
    "OffshoreBatch",
    "PointSetup",
    "SpotArrays",
    "build_steps",
    "compute_outlook",
    "compute_spots",
    "get_outlook",
    "outlook_key",
    "prepare_offshore",
    "refresh_stale",
    "spot_points",
]
