"""Peel direction, peel angle and peel speeds from when the same crest breaks along a break.

Convention (surfing trade terms). Seen by a surfer riding toward shore (facing the direction the
wave travels), a **right** peels toward the surfer's right: breaking starts at the surfer's left
end and runs to the right. Seen from the beach looking out to sea, a right peels to the viewer's
left. A **left** is the mirror image; **both** (a peak) breaks first at an interior point and
runs both ways; a **closeout** breaks (nearly) all at once.

Peel angle α (Hutt, Black & Mead 2001, from memory): the angle between the peel line (the trail
of broken white water, i.e. the path of the breaking point) and the unbroken crest, 0..90°. The
breaking point stays on the crest, which advances at Cb along its normal; so the breaking point
moves along the peel line at Vs with Vs·sin α = Cb, giving surfer speed **Vs = Cb / sin α** and
peel rate (along the crest) **Vp = Vs·cos α = Cb / tan α** (docs/check-values.md §5). From break times:
two points Δs apart that break Δt apart give sin α = Cb·Δt/Δs.

One break point on locally straight contours: the breaking point runs along the breaking-depth
contour, so the peel line is the contour and α equals the angle between crest and contour, which is
the breaking angle θb (angle between the ray and the contour normal). Limits: θb = 0 (normal
incidence) -> α = 0, a closeout; θb -> 90° (a crest wrapped along the contour) -> α -> 90°.

Closeout threshold: α below `CLOSEOUT_ANGLE_DEG` = 20° counts as a closeout. This is common
practice, set near the smallest peel angles Hutt, Black & Mead list for the most skilled surfing
(about 20–30°, from memory); callers may pass their own.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.constants import DEG, G
from models.errors import InvalidInput

__all__ = [
    "CLOSEOUT_ANGLE_DEG",
    "PeelResult",
    "crest_speed",
    "peel_from_break_times",
    "peel_from_breaking_angle",
    "peel_speeds",
]

CLOSEOUT_ANGLE_DEG = 20.0  # common practice (see module docstring)


class PeelResult(NamedTuple):
    direction: str  # "left" | "right" | "both" | "closeout"
    sweep: str  # way the breaking point moves, surfer's view, even for a closeout: "left"|"right"|"both"|"none"
    angle_deg: float  # peel angle of the longer peeling side (0 for a pure closeout)
    left_angle_deg: float | None  # angle of the section peeling to the surfer's left (None if absent)
    right_angle_deg: float | None
    peel_rate_m_s: float  # Cb / tan α (inf for α = 0)
    surfer_speed_m_s: float  # Cb / sin α (inf for α = 0)
    crest_speed_m_s: float
    first_point: int  # index (caller's order) of the point that breaks first
    largest_point: int | None  # index of the largest breaker (None when heights not given)
    segment_angles_deg: NDArray[np.float64]  # per neighbouring pair, in the caller's order


def crest_speed(breaker_depth_m: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Crest speed at breaking, shallow-water Cb = √(g·hb) (common approximation, docs/check-values.md §5)."""
    if isinstance(breaker_depth_m, float | int) and math.isfinite(breaker_depth_m) and breaker_depth_m > 0:
        return np.float64(math.sqrt(g * breaker_depth_m))  # scalar fast path (one call per outlook step)
    h = np.asarray(breaker_depth_m, dtype=float)
    if np.any(~np.isfinite(h) | (h <= 0)):
        raise InvalidInput(f"`breaker_depth_m` must be finite and > 0, got {h[~np.isfinite(h) | (h <= 0)].ravel()[0]!r}")
    return np.sqrt(g * h)


def peel_speeds(angle_deg: ArrayLike, crest_speed_m_s: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """(peel rate Vp = Cb/tan α, surfer speed Vs = Cb/sin α) [m/s]; α = 0 gives inf (a closeout)."""
    if (
        isinstance(angle_deg, float | int) and isinstance(crest_speed_m_s, float | int)
        and 0 <= angle_deg <= 90 and math.isfinite(crest_speed_m_s) and crest_speed_m_s > 0
    ):  # fmt: skip  # scalar fast path, same values as the array path
        r = angle_deg * DEG
        sin = math.sin(r)
        vp = 0.0 if angle_deg >= 90 else (math.inf if sin == 0 else crest_speed_m_s * math.cos(r) / sin)
        vs = math.inf if sin == 0 else crest_speed_m_s / sin
        return np.float64(vp), np.float64(vs)
    a = np.asarray(angle_deg, dtype=float)
    cb = np.asarray(crest_speed_m_s, dtype=float)
    if np.any(~np.isfinite(a) | (a < 0) | (a > 90)):
        raise InvalidInput(f"`angle_deg` must be within [0, 90], got {a[~((a >= 0) & (a <= 90))].ravel()[0]!r}")
    if np.any(~np.isfinite(cb) | (cb <= 0)):
        raise InvalidInput(f"`crest_speed_m_s` must be finite and > 0, got {cb!r}")
    r = a * DEG
    with np.errstate(divide="ignore"):
        vp = np.where(a >= 90, 0.0, cb * np.cos(r) / np.sin(r))
        vs = cb / np.sin(r)
    return vp, vs


def _heading_right(wave_from_deg: float) -> NDArray[np.float64]:
    """Unit vector (x east, y north) to the right of a surfer travelling with the wave."""
    h = (wave_from_deg + 180.0) * DEG  # heading, clockwise from north
    return np.array([math.cos(h), -math.sin(h)])  # heading + 90°


def _result(left_a, right_a, left_len, right_len, cb, first, largest, seg, threshold) -> PeelResult:
    sides = {"left": (left_a, left_len), "right": (right_a, right_len)}
    present = [k for k, (a, _) in sides.items() if a is not None]
    moving = [k for k in present if sides[k][0] > 0]  # a side breaking all at once does not sweep
    sweep = "none" if not moving else ("both" if len(moving) == 2 else moving[0])
    peeling = [k for k in present if sides[k][0] >= threshold]
    if not peeling:
        direction = "closeout"
        angle = min((sides[k][0] for k in present), default=0.0)
    else:
        direction = "both" if len(peeling) == 2 else peeling[0]
        angle = sides[max(peeling, key=lambda k: sides[k][1])][0]
    vp, vs = peel_speeds(angle, cb)
    return PeelResult(direction, sweep, float(angle), left_a, right_a, float(vp), float(vs), float(cb),
                      first, largest, seg)


def peel_from_break_times(
    x_m: ArrayLike,
    y_m: ArrayLike,
    break_time_s: ArrayLike,
    *,
    wave_from_deg: float,
    crest_speed_m_s: float | ArrayLike,
    breaker_height_m: ArrayLike | None = None,
    closeout_angle_deg: float = CLOSEOUT_ANGLE_DEG,
) -> PeelResult:
    """Peel from the times the same crest breaks at points ordered along the break.

    x_m, y_m: breaking positions (local grid, x east, y north) in order along the break (either end
    first); break_time_s: when the crest breaks at each (any common origin, e.g. table travel time
    plus the run from reference point to breaking); wave_from_deg: nautical FROM direction of the
    crest at breaking (fixes which way the surfer faces); crest_speed_m_s: Cb, one value or one per
    point (the local √(g hb): sin α = Cb·dt/ds holds locally, so each segment uses the mean Cb of
    its two ends).

    The first point is the earliest. Sections on each side of it peel away from it at
    α = asin(min(1, Σ Cb|Δt| / Σ Δs)) over that side (the mean slowness of the breaking point);
    a side peels if α >= `closeout_angle_deg`, and if no side does the break is a closeout.
    """
    x = np.atleast_1d(np.asarray(x_m, dtype=float))
    y = np.atleast_1d(np.asarray(y_m, dtype=float))
    t = np.atleast_1d(np.asarray(break_time_s, dtype=float))
    n = t.size
    for name, a in (("x_m", x), ("y_m", y), ("break_time_s", t)):
        if a.ndim != 1 or a.size != n:
            raise InvalidInput(f"`{name}` must be 1-D with one value per break point ({n}), got shape {a.shape}")
        if not np.all(np.isfinite(a)):
            raise InvalidInput(f"`{name}` must be finite, got NaN/inf at index {int(np.argmax(~np.isfinite(a)))}")
    if n < 2:
        raise InvalidInput("`break_time_s` needs at least 2 break points; use peel_from_breaking_angle for one")
    cbs = np.asarray(crest_speed_m_s, dtype=float)
    if cbs.ndim == 0:
        cbs = np.full(n, float(cbs))
    if cbs.shape != (n,) or not np.all(np.isfinite(cbs) & (cbs > 0)):
        raise InvalidInput(f"`crest_speed_m_s` must be finite and > 0, one value or {n}, got {crest_speed_m_s!r}")
    if not math.isfinite(wave_from_deg):
        raise InvalidInput(f"`wave_from_deg` must be finite, got {wave_from_deg!r}")
    if not 0 <= closeout_angle_deg <= 90:
        raise InvalidInput(f"`closeout_angle_deg` must be within [0, 90], got {closeout_angle_deg!r}")
    largest = None
    if breaker_height_m is not None:
        hb = np.atleast_1d(np.asarray(breaker_height_m, dtype=float))
        if hb.shape != (n,) or not np.all(np.isfinite(hb)):
            raise InvalidInput(f"`breaker_height_m` must be {n} finite values, got {hb!r}")
        largest = int(np.argmax(hb))
    ds = np.hypot(np.diff(x), np.diff(y))
    if np.any(ds <= 0):
        i = int(np.argmax(ds <= 0))
        raise InvalidInput(f"break points {i} and {i + 1} coincide (`x_m`, `y_m`)")
    dt = np.diff(t)
    cb_seg = 0.5 * (cbs[1:] + cbs[:-1])
    seg = np.degrees(np.arcsin(np.minimum(1.0, cb_seg * np.abs(dt) / ds)))

    # orient the caller's order so that index increases toward the surfer's right
    right = _heading_right(wave_from_deg)
    to_right = float(np.dot([x[-1] - x[0], y[-1] - y[0]], right)) >= 0
    order = np.arange(n) if to_right else np.arange(n)[::-1]
    first = int(np.argmin(t))
    k = int(np.flatnonzero(order == first)[0])  # position of the first point in surfer-left-to-right order
    tt = t[order]
    dss = ds if to_right else ds[::-1]
    cbo = cb_seg if to_right else cb_seg[::-1]
    ss = np.concatenate([[0.0], np.cumsum(dss)])

    def side(lo: int, hi: int) -> tuple[float | None, float, float]:
        if hi <= lo:
            return None, 0.0, 0.0
        length = ss[hi] - ss[lo]
        run = (cbo[lo:hi] * np.abs(np.diff(tt[lo : hi + 1]))).sum() / length
        cb_mean = float((cbo[lo:hi] * dss[lo:hi]).sum() / length)
        return float(np.degrees(np.arcsin(min(1.0, run)))), float(length), cb_mean

    left_a, left_len, left_cb = side(0, k)
    right_a, right_len, right_cb = side(k, n - 1)
    cb = left_cb if left_len >= right_len else right_cb  # the longer side's (it gives the angle)
    return _result(left_a, right_a, left_len, right_len, cb, first, largest, seg, closeout_angle_deg)


def peel_from_breaking_angle(
    *,
    wave_from_deg: float,
    contour_normal_from_deg: float,
    crest_speed_m_s: float,
    closeout_angle_deg: float = CLOSEOUT_ANGLE_DEG,
) -> PeelResult:
    """Peel at a single break point from the crest's breaking angle to the local contour.

    contour_normal_from_deg: the nautical FROM direction of a wave that would meet the local
    contour head-on (the seaward normal). θb = wave_from − normal (wrapped to ±180°) must be within
    ±90° (the wave travels shoreward). α = |θb| (see the module docstring); θb > 0 (the wave comes
    from clockwise of the normal) makes the crest sweep to the surfer's right.
    """
    for name, v in (("wave_from_deg", wave_from_deg), ("contour_normal_from_deg", contour_normal_from_deg)):
        if not math.isfinite(v):
            raise InvalidInput(f"`{name}` must be finite, got {v!r}")
    if not (math.isfinite(crest_speed_m_s) and crest_speed_m_s > 0):
        raise InvalidInput(f"`crest_speed_m_s` must be finite and > 0, got {crest_speed_m_s!r}")
    if not 0 <= closeout_angle_deg <= 90:
        raise InvalidInput(f"`closeout_angle_deg` must be within [0, 90], got {closeout_angle_deg!r}")
    theta = (wave_from_deg - contour_normal_from_deg + 180.0) % 360.0 - 180.0
    if abs(theta) >= 90.0:
        raise InvalidInput(
            f"`wave_from_deg` {wave_from_deg!r} is {theta:+.1f}° from the contour normal "
            f"{contour_normal_from_deg!r}: the wave does not travel shoreward"
        )
    alpha = abs(theta)
    left = alpha if theta < 0 else None
    right = alpha if theta > 0 else None
    seg = np.array([alpha])
    if theta == 0:
        return _result(None, None, 0.0, 0.0, crest_speed_m_s, 0, None, seg, closeout_angle_deg)
    return _result(left, right, 1.0, 1.0, crest_speed_m_s, 0, None, seg, closeout_angle_deg)
