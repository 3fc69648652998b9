"""Peel of one step of a spot, from the breaker arrays of `models.surf`.

With several break points: from when the same crest (the peak component of the largest train)
breaks at each, i.e. the table's crest travel time to the reference point + the run from there to
the breaking position at the local phase speed, turning by Snell (`run_time`), then
`models.peel.peel_from_break_times`. With one break point (or no usable times): from the breaking
angle to the contour at the point with the largest sets breaker (`peel_from_breaking_angle`).
Positions and times use the typical class; "largest" uses the sets class.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import NamedTuple

import numpy as np
from numpy.typing import NDArray

from models.constants import DEG, G
from models.directions import wrap_180
from models.errors import InvalidInput
from models.peel import (
    CLOSEOUT_ANGLE_DEG,
    PeelResult,
    crest_speed,
    peel_from_break_times,
    peel_from_breaking_angle,
)
from models.surf import PointSetup, SpotArrays
from models.transfer import TransferTable
from models.waves import phase_speed


class StepPeel(NamedTuple):
    """A step's peel: the `models.peel` result and which of the spot's points it names."""

    result: PeelResult
    first_point: int  # index into the spot's points
    largest_point: int | None  # point of the largest sets breaker (None when no sets breaker)
    method: str  # "break-times" | "breaking-angle"


def crest_at_reference(table: TransferTable, period_s: float, from_deg: float) -> tuple[float, float]:
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


def run_time(
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


def peel_one(p: PointSetup, angle_b: float, db: float) -> PeelResult:
    """Peel at one break point from its breaking angle to the contour (`peel_from_breaking_angle`)."""
    return peel_from_breaking_angle(
        wave_from_deg=(p.normal_deg + angle_b) % 360.0,  # FROM direction of the crest at breaking
        contour_normal_from_deg=p.normal_deg,
        crest_speed_m_s=float(crest_speed(db)),
    )


def peel_one_many(
    p: PointSetup, angle_b: Sequence[float], db: Sequence[float], hb: Sequence[float]
) -> list[PeelResult | None]:
    """`peel_one` at every step of a one-point spot (None where `hb` is not finite: nothing breaks),
    with the same arithmetic step by step (so the same results) but without building and checking
    each call's arguments: the outlook's single-point steps, where one call per step was its
    largest cost. Bad values raise as `peel_one` does."""
    normal = p.normal_deg
    if not math.isfinite(normal):
        raise InvalidInput(f"`contour_normal_from_deg` must be finite, got {normal!r}")
    out: list[PeelResult | None] = []
    for a, d, h in zip(angle_b, db, hb, strict=True):
        if not math.isfinite(h):
            out.append(None)
            continue
        wave_from = (normal + a) % 360.0
        if not (math.isfinite(wave_from) and math.isfinite(d) and d > 0):
            out.append(peel_one(p, a, d))  # raises with peel_one's message
            continue
        theta = (wave_from - normal + 180.0) % 360.0 - 180.0
        if abs(theta) >= 90.0:
            out.append(peel_one(p, a, d))
            continue
        cb = math.sqrt(G * d)  # crest_speed
        alpha = abs(theta)
        if theta == 0:
            direction, sweep, angle, left, right = "closeout", "none", 0.0, None, None
        else:
            side = "left" if theta < 0 else "right"
            left, right = (alpha, None) if theta < 0 else (None, alpha)
            direction, sweep, angle = (side if alpha >= CLOSEOUT_ANGLE_DEG else "closeout"), side, alpha
        r = angle * DEG  # peel_speeds' scalar path
        sin = math.sin(r)
        vp = 0.0 if angle >= 90 else (math.inf if sin == 0 else cb * math.cos(r) / sin)
        vs = math.inf if sin == 0 else cb / sin
        out.append(PeelResult(direction, sweep, float(angle), left, right, float(vp), float(vs), float(cb), 0, None,
                              np.array([alpha])))  # fmt: skip
    return out


class PeelColumns(NamedTuple):
    """`peel_one_many` as columns over the steps: None / NaN where nothing breaks."""

    direction: list[str | None]  # "left" | "right" | "closeout"
    sweep: list[str | None]  # "left" | "right" | "none"
    angle_deg: NDArray[np.float64]  # peel angle α = |θb|
    peel_rate_m_s: NDArray[np.float64]  # Cb cos α / sin α (inf at α = 0, 0 at 90°)


def peel_one_columns(
    p: PointSetup, angle_b: NDArray[np.float64], db: NDArray[np.float64], hb: NDArray[np.float64]
) -> PeelColumns:
    """`peel_one_many` for all steps at once in numpy (the same arithmetic, so the same values to a
    rounding unit of the trigonometric functions). A step whose values `peel_one` would refuse goes
    through `peel_one`, which raises with its message."""
    normal = p.normal_deg
    if not math.isfinite(normal):
        raise InvalidInput(f"`contour_normal_from_deg` must be finite, got {normal!r}")
    a, d, h = (np.asarray(v, dtype=float) for v in (angle_b, db, hb))
    brk = np.isfinite(h)
    with np.errstate(invalid="ignore"):
        wave_from = (normal + a) % 360.0
        theta = (wave_from - normal + 180.0) % 360.0 - 180.0
        bad = brk & ~(np.isfinite(wave_from) & np.isfinite(d) & (d > 0) & (np.abs(theta) < 90.0))
    for i in np.flatnonzero(bad).tolist():
        peel_one(p, float(a[i]), float(d[i]))  # raises (the wave does not reach the contour sensibly)
    alpha = np.where(brk, np.abs(theta), np.nan)
    with np.errstate(invalid="ignore", divide="ignore"):
        cb = np.sqrt(G * np.where(brk, d, np.nan))
        r = alpha * DEG
        sin = np.sin(r)
        rate = np.where(alpha >= 90, 0.0, np.where(sin == 0, np.inf, cb * np.cos(r) / sin))
    side = np.where(theta < 0, "left", "right")
    sweep = np.where(theta == 0, "none", side)
    direction = np.where((theta == 0) | (alpha < CLOSEOUT_ANGLE_DEG), "closeout", side)
    brk_l = brk.tolist()
    return PeelColumns(
        [v if b else None for v, b in zip(direction.tolist(), brk_l, strict=True)],
        [v if b else None for v, b in zip(sweep.tolist(), brk_l, strict=True)],
        alpha,
        rate,
    )


def step_peel(
    points: Sequence[PointSetup], arr: SpotArrays, step: int, *, offshore_tp: float, offshore_dir: float
) -> StepPeel | None:
    """Peel of one step (see the module docstring); None when nothing breaks."""
    hb = arr.hb[:, step, 0].tolist()  # few points: plain Python is cheaper than numpy reductions here
    idx = np.array([i for i, v in enumerate(hb) if math.isfinite(v)], dtype=int)
    if idx.size == 0:
        return None
    sets = arr.hb[:, step, 1]
    sl = [(v, i) for i, v in zip(idx.tolist(), sets[idx].tolist(), strict=True) if math.isfinite(v)]
    i_big = None  # the largest sets breaker (the first such point on a tie, as argmax)
    if sl:
        top = max(v for v, _ in sl)
        i_big = next(i for v, i in sl if v == top)
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
            tt, from_ref = crest_at_reference(p.table, offshore_tp, offshore_dir)
            bd = float(arr.break_distance[i, step]) if arr.break_distance is not None else math.nan
            if math.isfinite(bd) and p.table.profile is not None:
                # surf-zone path: the breaking position on the point's profile (models.surfzone)
                b = math.radians(p.table.profile.bearing_deg)
                xb, yb = p.table.reference_x + bd * math.sin(b), p.table.reference_y + bd * math.cos(b)
            else:
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
            t_run = run_time(xb - p.table.reference_x, yb - p.table.reference_y, h_ref, float(db[i]), offshore_tp,
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
                return StepPeel(r, int(sel[r.first_point]), i_big, "break-times")
            except ValueError:  # coincident breaking positions etc.: fall back to the angle
                pass
    # one break point (or no usable times): the breaking angle at the largest point
    i = i_big if i_big is not None else int(idx[0])
    return StepPeel(peel_one(points[i], float(ang[i]), float(db[i])), i, i_big, "breaking-angle")


__all__ = [
    "PeelColumns", "StepPeel", "crest_at_reference", "peel_one", "peel_one_columns", "peel_one_many", "run_time", "step_peel",
]  # fmt: skip
