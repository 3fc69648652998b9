"""Breaker heights of every height class at every break point of many spots, in one breaking call.

Per break point the nearshore spectra at the table's reference depth (`models.nearshore`) give
the height classes: typical = Hm0; sets = H1/10 = 1.27 Hm0; largest = the expected largest of
N = 3600 s / Tm02 Rayleigh waves, i.e. within an hour (`models.statistics`). Each class, and each
swell train with its own Hm0 and peak period, is shoaled and refracted from the reference depth
(+ water level) over the local contours (slope and seaward normal at the break point) to breaking
by `models.breaking.shoal_to_breaking` (Weggel 1972; Komar & Gaudiano 1975 reported beside it).
All (spot, point, step, class) values of a call go through one `shoal_to_breaking`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from models.breaking import shoal_to_breaking
from models.directions import wrap_180
from models.errors import InvalidInput
from models.nearshore import Nearshore, nearshore_many
from models.offshore import OffshoreBatch
from models.statistics import expected_max_height_ratio, highest_fraction_ratio
from models.transfer import TransferTable

LARGEST_WINDOW_S = 3600.0  # "largest wave in an hour"
SETS_FRACTION = 10  # sets = H1/10
SETS_RATIO = float(highest_fraction_ratio(SETS_FRACTION, reference="hm0"))  # H1/10 / Hm0 (Rayleigh)
MIN_HEIGHT_M = 0.05  # nearshore height below which a class is not surf (a blocked or empty train): null
MAX_ANGLE_DEG = 85.0  # nearshore direction to the contour normal is clipped here (shoal_to_breaking needs < 90)


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


_LARGEST: dict[float, float] = {}


def largest_ratio(n_waves: NDArray[np.float64]) -> NDArray[np.float64]:
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


def nearshore_points(batch: OffshoreBatch, points: Sequence[PointSetup]) -> Nearshore:
    """`models.nearshore.nearshore_many` for the tables of `points`."""
    return nearshore_many(batch.frequency, batch.directions, batch.stack, [p.table for p in points])


def compute_spots(
    batch: OffshoreBatch,
    spots: Sequence[Sequence[PointSetup]],
    *,
    water_level_m: float | NDArray[np.float64] = 0.0,
) -> list[SpotArrays]:
    """Nearshore spectra per point and breaking of every class, for many spots at once."""
    nt = len(batch.times)
    wl = np.broadcast_to(np.asarray(water_level_m, dtype=float), (nt,)).copy()
    if not np.all(np.isfinite(wl)):
        raise InvalidInput("`water_level_m` must be finite")
    allnear = nearshore_points(batch, [p for pts in spots for p in pts])
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
        ratio = largest_ratio(n_waves)  # (P, T)
        h = np.empty((P, nt, ncls))
        h[..., 0] = hs[..., 0]
        h[..., 1] = hs[..., 0] * SETS_RATIO
        h[..., 2] = hs[..., 0] * ratio
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
                near_hs=hs, near_tp=tp, near_dir=dr, near_tm02=tm02,
                hb=out["hb"][sl].reshape(shape), db=out["db"][sl].reshape(shape),
                angle_b=out["ang"][sl].reshape(shape), iribarren=out["xi"][sl].reshape(shape),
                breaker_type=btype[sl].reshape(shape), kg=out["kg"][sl].reshape(shape), water_level=wl,
            )  # fmt: skip
        )
    return results


__all__ = [
    "LARGEST_WINDOW_S", "MAX_ANGLE_DEG", "MIN_HEIGHT_M", "SETS_FRACTION", "SETS_RATIO", "PointSetup", "SpotArrays",
    "compute_spots", "largest_ratio", "nearshore_points",
]  # fmt: skip
