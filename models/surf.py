"""Breaker heights of every height class at every break point of many spots, in one breaking call.

A point whose table carries a surf-zone profile (`TransferTable.profile`) goes through
`models.surfzone` instead: each swell train carried across the profile with random-wave
dissipation and set-up (Battjes & Janssen 1978), heights at the breaking position from the
shallow-water distribution (Battjes & Groenendijk 2000) capped by Weggel, set-up and run-up
(Stockdon et al. 2006); see docs/surfzone.md. `use_profiles=False` keeps the single-wave path
below for every point.

Per break point the nearshore spectra at the table's reference depth (`models.nearshore`) give
the height classes: typical = Hm0; sets = H1/10 = 1.27 Hm0; largest = the expected largest of
N = 3600 s / Tm02 Rayleigh waves, i.e. within an hour (`models.statistics`). Each class, and each
swell train with its own Hm0 and peak period, is shoaled and refracted from the reference depth
(+ water level) over the local contours (slope and seaward normal at the break point) to breaking
by `models.breaking.shoal_to_breaking` (Weggel 1972; Komar & Gaudiano 1975 reported beside it).
All (spot, point, step, class) values of a call go through `shoal_to_breaking` together, in
blocks of `BREAKING_BLOCK`.

Wind (optional, per step): the breaker type of every class takes the wind's onshore component at
each point (`models.breaking.breaker_type_in_wind`, the direction of Douglass 1990 with a shift of
our own size); heights, depths and the Iribarren number are the still-air ones. Without wind
(NaN) the type is exactly the still-air one.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from models import surfzone
from models.breaking import (
    breaker_type,
    breaker_type_in_wind,
    iribarren,
    komar_gaudiano,
    shoal_to_breaking,
    wave_power,
    wind_spilling_limit,
)
from models.conditions import onshore_wind_component
from models.directions import wrap_180
from models.errors import InvalidInput
from models.hazard import rip_current_likelihood
from models.nearshore import Nearshore, nearshore_many
from models.offshore import OffshoreBatch
from models.statistics import expected_max_height_ratio, highest_fraction_ratio
from models.transfer import TransferTable
from models.waves import shoaling_coefficient

LARGEST_WINDOW_S = 3600.0  # "largest wave in an hour"
SETS_FRACTION = 10  # sets = H1/10
SETS_RATIO = float(highest_fraction_ratio(SETS_FRACTION, reference="hm0"))  # H1/10 / Hm0 (Rayleigh)
MIN_HEIGHT_M = 0.05  # nearshore height below which a class is not surf (a blocked or empty train): null
BREAKING_BLOCK = 16384  # values per `shoal_to_breaking` call: its temporaries stay in cache (a third
# faster than one call for 360,000 values; the same values to 1e-13, each block iterated to its tolerance)
MAX_ANGLE_DEG = (
    85.0  # nearshore direction to the contour normal is clipped here (shoal_to_breaking needs < 90)
)


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
    surf_zone: bool = True  # use the table's surf-zone profile when it has one


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
    # surf-zone path (NaN at points on the single-wave path): (P, T)
    setup: NDArray[np.float64] | None = None  # set-up at the shoreline [m]
    runup: NDArray[np.float64] | None = None  # 2 % run-up (Stockdon et al. 2006) [m]
    break_distance: NDArray[np.float64] | None = None  # breaking position from the reference point [m]
    foreshore_slope: NDArray[np.float64] | None = None  # tan β about the still-water line
    method: tuple[str, ...] = ()  # per point: "surf-zone" | "single-wave"
    # what a hazard policy tests, per point (P, T): the whole spectrum's power at the reference
    # depth + water level [kW/m] (0 where nothing arrives) and the rip-current likelihood
    near_power_kw_m: NDArray[np.float64] | None = None
    rip: NDArray[np.float64] | None = None
    # wind on the breaker type (None without wind input): (P, T) onshore component [m/s] (NaN: no
    # wind), the spilling/plunging boundary on ξb used, and the still-air types (P, T, 3 + K)
    wind_onshore_m_s: NDArray[np.float64] | None = None
    spilling_limit: NDArray[np.float64] | None = None
    breaker_type_still: NDArray[np.str_] | None = None


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


def hazard_inputs(
    points: Sequence[PointSetup], near: Nearshore, water_level_m: NDArray[np.float64]
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Per point and step (P, T): the wave power of the whole nearshore spectrum at the reference
    depth + water level [kW/m] (`wave_power`, spectral, at the peak period; 0 where nothing
    arrives) and the rip-current likelihood (`models.hazard.rip_current_likelihood`: nearshore
    Hm0, mean direction to the contour normal, water level about its mean over the steps)."""
    hs, tp = near.hs[..., 0], near.tp[..., 0]
    wl = np.asarray(water_level_m, dtype=float)
    href = np.array([p.table.reference_depth_m for p in points], dtype=float)[:, None] + wl[None, :]
    ok = np.isfinite(tp) & (hs > 0) & (href > 0)
    power = np.zeros(hs.shape)
    if ok.any():
        power[ok] = wave_power(hs[ok], tp[ok], depth=href[ok], kind="spectral") / 1000.0
    normal = np.broadcast_to(np.array([p.normal_deg for p in points], dtype=float)[:, None], hs.shape)
    theta = wrap_180(np.where(np.isfinite(near.direction[..., 0]), near.direction[..., 0], normal) - normal)
    rip = rip_current_likelihood(hs, theta, np.broadcast_to(wl - wl.mean(), hs.shape) if wl.size else wl)
    return power, rip


def compute_spots(
    batch: OffshoreBatch,
    spots: Sequence[Sequence[PointSetup]],
    *,
    water_level_m: float | NDArray[np.float64] = 0.0,
    use_profiles: bool = True,
    wind_speed_m_s: NDArray[np.float64] | None = None,
    wind_from_deg: NDArray[np.float64] | None = None,
) -> list[SpotArrays]:
    """Nearshore spectra per point and breaking of every class, for many spots at once.
    `water_level_m` (T,) above the bathymetry datum: every depth is bed + water level.
    `wind_speed_m_s`, `wind_from_deg`: (T,) for every spot or (S, T) per spot, NaN where there is
    no wind; they move the breaker type only (module docstring)."""
    nt = len(batch.times)
    wl = np.broadcast_to(np.asarray(water_level_m, dtype=float), (nt,)).copy()
    if not np.all(np.isfinite(wl)):
        raise InvalidInput("`water_level_m` must be finite")
    allpts = [p for pts in spots for p in pts]
    allnear = nearshore_points(batch, allpts)
    power, rip = hazard_inputs(allpts, allnear, wl)
    near, c = [], 0
    for pts in spots:
        near.append(tuple(v[c : c + len(pts)] for v in allnear))
        c += len(pts)
    K = batch.stack.shape[1] - 1
    ncls = 3 + K
    # assemble the breaking problem for all spots
    H, T, TH, D, M, Z, owner = [], [], [], [], [], [], []
    zone = [[use_profiles and p.surf_zone and p.table.profile is not None for p in pts] for pts in spots]
    for pts, zs, (hs, tp, dr, tm02) in zip(spots, zone, near, strict=True):
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
        Z.append(np.broadcast_to(np.array(zs, dtype=bool)[:, None, None], h.shape))
        owner.append(h.size)
    flat = [
        np.concatenate([a.ravel() for a in arrs]) if arrs else np.empty(0) for arrs in (H, T, TH, D, M, Z)
    ]
    h, per, theta, depth, slope, in_zone = flat
    valid = (h >= MIN_HEIGHT_M) & np.isfinite(per) & np.isfinite(theta) & (depth > 0) & ~in_zone.astype(bool)
    out = {k: np.full(h.shape, np.nan) for k in ("hb", "db", "ang", "xi", "kg")}
    btype = np.full(h.shape, "", dtype="<U10")
    idx = np.flatnonzero(valid)
    for b0 in range(0, idx.size, BREAKING_BLOCK):
        v = idx[b0 : b0 + BREAKING_BLOCK]
        r = shoal_to_breaking(h[v], per[v], np.clip(theta[v], -MAX_ANGLE_DEG, MAX_ANGLE_DEG), depth[v], slope=slope[v])
        out["hb"][v], out["db"][v], out["ang"][v] = r.height, r.depth, r.angle_deg
        out["xi"][v], out["kg"][v] = r.iribarren, r.komar_gaudiano_height
        btype[v] = r.breaker_type
    results = []
    start = 0
    c = 0
    for s, (pts, (hs, tp, dr, tm02)) in enumerate(zip(spots, near, strict=True)):
        shape = (len(pts), nt, ncls)
        sl = slice(start, start + owner[s])
        start += owner[s]
        pt = slice(c, c + len(pts))
        c += len(pts)
        nan_pt = np.full((len(pts), nt), np.nan)
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
                setup=nan_pt,
                runup=nan_pt.copy(),
                break_distance=nan_pt.copy(),
                foreshore_slope=nan_pt.copy(),
                method=tuple("surf-zone" if z else "single-wave" for z in zone[s]),
                near_power_kw_m=power[pt],
                rip=rip[pt],
            )  # fmt: skip
        )
    cases = [(s, i) for s, zs in enumerate(zone) for i, z in enumerate(zs) if z]
    if cases:
        _surf_zone(spots, results, cases, wl, K)
    if wind_speed_m_s is not None or wind_from_deg is not None:
        _wind_types(spots, results, wind_speed_m_s, wind_from_deg, nt)
    return results


def _wind_types(
    spots: Sequence[Sequence[PointSetup]], results: list[SpotArrays], speed: object, from_deg: object, nt: int
) -> None:
    """Breaker types with the wind (`breaker_type_in_wind`), the still-air ones kept beside them."""
    if speed is None or from_deg is None:
        raise InvalidInput("`wind_speed_m_s` and `wind_from_deg` go together (NaN where there is no wind)")
    try:
        u_all = np.broadcast_to(np.asarray(speed, dtype=float), (len(spots), nt))
        d_all = np.broadcast_to(np.asarray(from_deg, dtype=float), (len(spots), nt))
    except ValueError:
        raise InvalidInput(f"the wind must have shape ({nt},) or ({len(spots)}, {nt})") from None
    if np.any(np.isinf(u_all) | (u_all < 0)):
        raise InvalidInput("`wind_speed_m_s` must be >= 0 and finite (NaN: no wind)")
    for pts, a, u, d in zip(spots, results, u_all, d_all, strict=True):
        normal = np.array([p.normal_deg for p in pts], dtype=float)[:, None]  # (P, 1)
        on = onshore_wind_component(u[None, :], d[None, :], normal)  # (P, T), NaN without wind
        on = np.where(np.isfinite(u)[None, :], on, np.nan)
        a.wind_onshore_m_s = on
        a.spilling_limit = np.where(np.isfinite(on), wind_spilling_limit(on), np.nan)
        a.breaker_type_still = a.breaker_type.copy()
        fin = np.isfinite(a.iribarren) & np.isfinite(on)[:, :, None]
        if fin.any():
            u3 = np.broadcast_to(on[:, :, None], a.iribarren.shape)
            a.breaker_type[fin] = breaker_type_in_wind(a.iribarren[fin], u3[fin])


FORESHORE_BAND_M = 1.0  # foreshore slope over total depths -1 .. +1 m about the still-water line
MIN_ZONE_SLOPE = 0.005  # as the single-wave path's flat-bottom slope (Weggel's fit needs m > 0)
MIN_PROFILE_COS = 0.5  # a profile more than 60° off the contour normal still counts half its length


def _surf_zone(
    spots: Sequence[Sequence[PointSetup]], results: list[SpotArrays], cases: list[tuple[int, int]],
    wl: NDArray[np.float64], K: int,
) -> None:  # fmt: skip
    """The surf-zone path (`models.surfzone`) for the (spot, point) `cases`, all in one march; fills
    `results` in place (see the module docstring)."""
    nt = wl.size
    nodes = surfzone.PROFILE_NODES
    rows = []
    for s, i in cases:
        p = spots[s][i]
        prof = p.table.profile
        assert prof is not None
        ds, bed = surfzone.resampled(prof, nodes)
        onshore = (p.normal_deg + 180.0) % 360.0
        cosp = max(math.cos(math.radians(float(wrap_180(prof.bearing_deg - onshore)))), MIN_PROFILE_COS)
        rows.append((ds, ds * cosp, bed))
    C = len(cases) * nt
    cols = slice(1, 1 + K) if K else slice(0, 1)
    hs = np.concatenate([results[s].near_hs[i, :, cols] for s, i in cases])  # (C, Kt)
    tp = np.concatenate([results[s].near_tp[i, :, cols] for s, i in cases])
    dr = np.concatenate([results[s].near_dir[i, :, cols] for s, i in cases])
    normal = np.repeat([spots[s][i].normal_deg for s, i in cases], nt)[:, None]
    ok = (hs >= MIN_HEIGHT_M) & np.isfinite(tp) & np.isfinite(dr)
    m0 = np.where(ok, (np.where(ok, hs, 0.0) / 4.0) ** 2, 0.0)
    per = np.where(ok, tp, 10.0)
    ang = np.where(ok, np.clip(wrap_180(np.nan_to_num(dr) - normal), -MAX_ANGLE_DEG, MAX_ANGLE_DEG), 0.0)
    bed = np.repeat(np.stack([r[2] for r in rows]), nt, axis=0)  # (C, N)
    dxc = np.repeat([r[1] for r in rows], nt)
    ds = np.repeat([r[0] for r in rows], nt)
    w = np.tile(wl, len(cases))
    wet0 = bed[:, 0] + w > 2.0 * surfzone.MIN_DEPTH_M
    m0 = np.where(wet0[:, None], m0, 0.0)
    r = surfzone.transform(m0, per, ang, np.maximum(bed, -50.0), dxc, w)
    # heights at the breaking position
    whole_hs = np.concatenate([results[s].near_hs[i, :, 0] for s, i in cases])
    whole_tp = np.concatenate([results[s].near_tp[i, :, 0] for s, i in cases])
    tm02 = np.concatenate([results[s].near_tm02[i] for s, i in cases])
    good = (whole_hs >= MIN_HEIGHT_M) & np.isfinite(whole_tp) & wet0 & (r.m0_break.sum(axis=1) > 0)
    Tw = np.where(good, whole_tp, 10.0)
    n_waves = np.where(
        np.isfinite(tm02),
        np.maximum(1.0, np.round(LARGEST_WINDOW_S / np.where(np.isfinite(tm02), tm02, 1.0))),
        1.0,
    )
    # bed slope at the breaking position (± 2 nodes), and of the foreshore about the still-water line
    slope_nodes = np.stack([_node_slopes(rw[2], rw[0]) for rw in rows])
    slope_b = np.clip(np.repeat(slope_nodes, nt, axis=0)[np.arange(C), r.i_break], MIN_ZONE_SLOPE, 0.5)
    depth_b = np.maximum(r.depth_break, surfzone.MIN_DEPTH_M)
    typ, sets, big = surfzone.breaker_heights(r.m0_break.sum(axis=1), depth_b, slope_b, Tw, n_waves)
    main = np.argmax(r.m0_break, axis=1)
    ang_b = r.angle_break[np.arange(C), main]
    fore = _foreshore_slope(bed, w, ds)
    h0 = whole_hs / shoaling_coefficient(1.0 / Tw, np.maximum(bed[:, 0] + w, surfzone.MIN_DEPTH_M))
    runup = surfzone.stockdon_runup(np.where(good, h0, 0.0), Tw, np.nan_to_num(fore, nan=MIN_ZONE_SLOPE))
    train_h = np.full((C, max(K, 0)), np.nan)
    train_ang = np.full((C, max(K, 0)), np.nan)
    if K:
        for k in range(K):
            okk = ok[:, k] & good
            hk, _, _ = surfzone.breaker_heights(r.m0_break[:, k], depth_b, slope_b, per[:, k], n_waves)
            train_h[:, k] = np.where(okk, hk, np.nan)
            train_ang[:, k] = np.where(okk, r.angle_break[:, k], np.nan)
    classes = np.stack([typ, sets, big], axis=1)  # (C, 3)
    hb = np.concatenate([classes, train_h], axis=1)
    hb = np.where(good[:, None], hb, np.nan)
    Tc = (
        np.concatenate([np.repeat(Tw[:, None], 3, axis=1), per[:, :K]], axis=1)
        if K
        else np.repeat(Tw[:, None], 3, axis=1)
    )
    angs = np.concatenate([np.repeat(ang_b[:, None], 3, axis=1), train_ang], axis=1)
    fin = np.isfinite(hb)
    xi = np.full(hb.shape, np.nan)
    kg = np.full(hb.shape, np.nan)
    bt = np.full(hb.shape, "", dtype="<U10")
    mslope = np.repeat(slope_b[:, None], hb.shape[1], axis=1)
    dmat = np.repeat(depth_b[:, None], hb.shape[1], axis=1)
    if fin.any():
        xi[fin] = iribarren(mslope[fin], hb[fin], Tc[fin])
        bt[fin] = breaker_type(xi[fin], at="breaking")
        kg[fin] = komar_gaudiano(hb[fin] / shoaling_coefficient(1.0 / Tc[fin], dmat[fin]), Tc[fin])
    db = np.where(fin, dmat, np.nan)
    for c, (s, i) in enumerate(cases):
        sl = slice(c * nt, (c + 1) * nt)
        a = results[s]
        a.hb[i], a.db[i], a.angle_b[i] = hb[sl], db[sl], np.where(fin[sl], angs[sl], np.nan)
        a.iribarren[i], a.breaker_type[i], a.kg[i] = xi[sl], bt[sl], kg[sl]
        assert a.setup is not None and a.runup is not None and a.break_distance is not None
        assert a.foreshore_slope is not None
        a.setup[i] = np.where(good[sl], r.setup_shore[sl], np.nan)
        a.runup[i] = np.where(good[sl], runup[sl], np.nan)
        a.break_distance[i] = np.where(good[sl], r.i_break[sl] * ds[sl], np.nan)
        a.foreshore_slope[i] = fore[sl]


def _node_slopes(bed: NDArray[np.float64], ds: float) -> NDArray[np.float64]:
    """Bed slope (positive where it shoals shoreward) at each node, over ± 2 nodes."""
    n = bed.size
    j = np.arange(n)
    a, b = np.clip(j - 2, 0, n - 1), np.clip(j + 2, 0, n - 1)
    return (bed[a] - bed[b]) / (np.maximum(b - a, 1) * ds)


def _foreshore_slope(
    bed: NDArray[np.float64], wl: NDArray[np.float64], ds: NDArray[np.float64]
) -> NDArray[np.float64]:
    """Mean bed slope between total depths +1 m and -1 m about the still-water line (the last
    crossings toward the shore), per case; NaN where the profile has no such band."""
    d = bed + wl[:, None]
    n = d.shape[1]
    deep = d > FORESHORE_BAND_M
    # last node deeper than +1 m, and the first node at or above -1 m total depth shoreward of it
    last_deep = n - 1 - np.argmax(deep[:, ::-1], axis=1)
    has = deep.any(axis=1)
    idx = np.arange(n)[None, :]
    dry = (d <= -FORESHORE_BAND_M) & (idx > last_deep[:, None])
    first_dry = np.where(dry.any(axis=1), np.argmax(dry, axis=1), n - 1)
    rows = np.arange(d.shape[0])
    drop = d[rows, last_deep] - d[rows, first_dry]
    run = (first_dry - last_deep) * ds
    with np.errstate(invalid="ignore", divide="ignore"):
        out = np.where(has & (run > 0) & (drop > 0), drop / run, np.nan)
    return out


__all__ = [
    "LARGEST_WINDOW_S", "MAX_ANGLE_DEG", "MIN_HEIGHT_M", "SETS_FRACTION", "SETS_RATIO", "PointSetup", "SpotArrays",
    "compute_spots", "largest_ratio", "nearshore_points",
]  # fmt: skip
