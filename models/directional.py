"""Directional distribution D(θ) per frequency from printed buoy coefficients (r1, r2, α1, α2).

Why and with which sources: docs/directional.md. In short, per band:

1. Missing bands (any of the four coefficients NaN/inf) are filled from the nearest bands that have
   all four: r1, r2 linearly in frequency, α1 and 2·α2 along the shorter arc; the ends copy their
   neighbour. They are flagged `interpolated`.
2. Each printed value is read as the interval ± half its printed resolution (two decimals → ±0.005;
   whole degrees → ±0.5°). A set outside the admissible region of a distribution on the circle
   (the Toeplitz matrix of 1, c1, c2 positive definite, c_n = a_n + i·b_n; aligned, r2 ≥ 2·r1² − 1)
   is moved to the nearest admissible set, in units of the printed resolution; `projected` marks
   it, `within_resolution` says whether the move stayed inside the printed intervals.
3. The estimate: a unimodal cos-2s distribution (Longuet-Higgins, Cartwright & Smith 1963) about
   α1 whose s is fitted to r1 (kept inside its interval, so the Kuik spread is the data's) and to
   m2 = r2·cos 2(α2 − α1) — unless the data show two peaks: the whole interval box lies below every
   symmetric unimodal distribution (the lower convex hull of the uniform-arc moments, Khintchine's
   representation of unimodal laws). Only then the maximum entropy estimate (Lygre & Krogstad
   1986, eq. 13) on the projected coefficients, which keeps all four moments.

Directions: nautical FROM, degrees; D in 1/rad, Σ D Δθ = 1 on the given directions.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.constants import DEG, TWO_PI
from models.directions import nautical_from_to_math, wrap_360
from models.errors import InvalidInput
from models.spectra import _mem, cos2s, direction_bin_widths, ndbc_to_fourier

__all__ = [
    "ANGLE_RESOLUTION_DEG",
    "COS2S",
    "MEM",
    "R_RESOLUTION",
    "DirectionalEstimate",
    "count_peaks",
    "estimate_directional",
    "fill_missing",
    "project_admissible",
    "shows_two_peaks",
    "unimodal_m2_floor",
]

R_RESOLUTION = 0.01  # r1, r2 printed with two decimals
ANGLE_RESOLUTION_DEG = 1.0  # α1, α2 printed in whole degrees (a finer print only narrows the interval)
COS2S = "cos-2s moment fit"
MEM = "maximum entropy"
# the projected set keeps this share of 1 − |c1|² as a margin, so MEM's Toeplitz system stays regular
_MARGIN = 1e-3
_R1_MAX = 1.0 - 1e-4  # r1 = 1 is a single direction: capped here (s ≈ 10⁴, one 5° bin)


class DirectionalEstimate(NamedTuple):
    """D(θ) per band and how it was obtained."""

    D: NDArray[np.float64]  # (nf, nd) 1/rad, Σ D Δθ = 1 per band
    method: NDArray[np.str_]  # (nf,) COS2S or MEM
    s: NDArray[np.float64]  # (nf,) fitted cos-2s s (NaN where MEM)
    interpolated: NDArray[np.bool_]  # (nf,) band filled from its neighbours
    projected: NDArray[np.bool_]  # (nf,) printed set outside the admissible region
    within_resolution: NDArray[np.bool_]  # (nf,) the projection stayed inside the printed intervals

    @property
    def label(self) -> str:
        """The estimate of the spectrum as one phrase (for outlook steps)."""
        n_mem = int(np.sum(self.method == MEM))
        if n_mem == 0:
            return COS2S
        if n_mem == self.method.size:
            return MEM
        return f"{COS2S}; {MEM} in {n_mem} of {self.method.size} bands (two peaks)"


# --------------------------------------------------------------------------- missing bands


def fill_missing(
    frequency: ArrayLike, r1: ArrayLike, r2: ArrayLike, alpha1_deg: ArrayLike, alpha2_deg: ArrayLike
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], NDArray[np.bool_]]:
    """Fill bands with any coefficient missing from the nearest complete bands (see module doc).

    Returns r1, r2, α1, α2 and the `interpolated` mask. InvalidInput when no band is complete.
    """
    f = np.asarray(frequency, dtype=float)
    arrs = [np.asarray(v, dtype=float) for v in (r1, r2, alpha1_deg, alpha2_deg)]
    missing = ~np.all([np.isfinite(a) for a in arrs], axis=0)
    if missing.all():
        raise InvalidInput("no band has all four coefficients (r1, r2, α1, α2): no directional information")
    if not missing.any():
        return (*arrs, missing)  # type: ignore[return-value]
    good = ~missing
    fg = f[good]
    out_r = [np.where(missing, np.interp(f, fg, a[good]), a) for a in arrs[:2]]
    out_a = []
    for a, mult in ((arrs[2], 1.0), (arrs[3], 2.0)):
        # unwrap along the complete bands, so interpolation takes the shorter arc between neighbours
        un = np.unwrap(a[good] * mult * DEG) / DEG
        out_a.append(np.where(missing, wrap_360(np.interp(f, fg, un) / mult), a))
    return out_r[0], out_r[1], out_a[0], out_a[1], missing


# --------------------------------------------------------------------------- admissible region


def _r2_range(r1: NDArray[np.float64], cos_d: NDArray[np.float64], margin: float):  # type: ignore[no-untyped-def]
    """Admissible r2 for given r1 and misalignment δ = 2(θ2 − θ1): |r2 e^{iδ} − r1²| ≤ ρ, ρ = (1 − r1²)(1 − margin).

    Returns (lo, hi), NaN where no r2 fits (1 − r1² too small for the misalignment).
    """
    rho = (1.0 - r1**2) * (1.0 - margin)
    b = r1**2 * cos_d
    disc = b**2 - r1**4 + rho**2
    root = np.sqrt(np.where(disc >= 0, disc, np.nan))
    return np.maximum(b - root, 0.0), np.minimum(b + root, 1.0)


def project_admissible(
    r1: ArrayLike,
    r2: ArrayLike,
    alpha1_deg: ArrayLike,
    alpha2_deg: ArrayLike,
    *,
    r_resolution: float = R_RESOLUTION,
    angle_resolution_deg: float = ANGLE_RESOLUTION_DEG,
    margin: float = _MARGIN,
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], NDArray[np.bool_], NDArray[np.bool_]]:
    """The admissible set nearest each printed (r1, r2, α1, α2), per band.

    α2 first turns toward α1 by up to half the angle resolution (α2 is defined modulo 180°); then
    (r1, r2) moves to the nearest point, in units of half the r resolution, where
    |c2 − c1²| ≤ (1 − |c1|²)(1 − margin) (the 3×3 Toeplitz matrix of 1, c1, c2 positive definite;
    aligned: 2·r1² − 1 ≤ r2 ≤ 1). Returns r1, r2, α2, `projected`, `within_resolution`.
    """
    r1_ = np.clip(np.asarray(r1, dtype=float), 0.0, 1.0)
    r2_ = np.clip(np.asarray(r2, dtype=float), 0.0, 1.0)
    a1 = np.asarray(alpha1_deg, dtype=float)
    a2 = np.asarray(alpha2_deg, dtype=float)
    h = 0.5 * r_resolution
    ha = 0.5 * angle_resolution_deg
    # misalignment of the second-order orientation, taken in (−90°, 90°]; reduce it by up to ha
    mis = (a2 - a1 + 90.0) % 180.0 - 90.0
    mis_new = np.sign(mis) * np.maximum(np.abs(mis) - ha, 0.0)
    a2_new = np.where(np.abs(mis) <= ha, a1, a2 - (mis - mis_new))
    r1c = np.minimum(r1_, _R1_MAX)
    lo, hi = _r2_range(r1c, np.cos(2.0 * mis * DEG), margin)
    ok = np.isfinite(lo) & (r2_ >= lo - 1e-12) & (r2_ <= hi + 1e-12)  # admissible as printed: kept
    cos_d = np.cos(2.0 * mis_new * DEG)
    # candidates for r1: a fine sweep of the printed interval, and of all of [0, 1) (gross errors)
    cand = np.concatenate((np.linspace(-1.0, 1.0, 41) * h, np.linspace(-1.0, 1.0, 401)))
    R1 = np.where(np.arange(cand.size) < 41, r1c[..., None] + cand, 0.5 * (cand + 1.0))
    R1 = np.clip(R1, 0.0, _R1_MAX)
    clo, chi = _r2_range(R1, cos_d[..., None], margin)
    R2 = np.clip(r2_[..., None], clo, chi)
    cost = ((R1 - r1_[..., None]) ** 2 + (R2 - r2_[..., None]) ** 2) / h**2
    cost = np.where(np.isfinite(clo), cost, np.inf)
    k = np.argmin(cost, axis=-1)
    p1 = np.take_along_axis(R1, k[..., None], -1)[..., 0]
    p2 = np.take_along_axis(R2, k[..., None], -1)[..., 0]
    new_r1 = np.where(ok, r1c, p1)
    new_r2 = np.where(ok, r2_, p2)
    within = (np.abs(new_r1 - r1_) <= h + 1e-12) & (np.abs(new_r2 - r2_) <= h + 1e-12)
    return new_r1, new_r2, np.where(ok, a2, a2_new), ~ok, within


# --------------------------------------------------------------------------- one peak or two


def _uniform_arc_hull() -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Lower convex hull of (sin w / w, sin 2w / 2w), w in (0, π]: the moments (r1, m2) of uniform
    arcs of half-width w. Every symmetric unimodal distribution is a mixture of such arcs
    (Khintchine), so its (r1, m2) lies on or above this hull."""
    w = np.linspace(1e-6, np.pi, 4001)
    x, y = np.sin(w) / w, np.sin(2.0 * w) / (2.0 * w)
    order = np.argsort(x)
    hull: list[tuple[float, float]] = []
    for px, py in zip(x[order].tolist(), y[order].tolist(), strict=True):  # Andrew's monotone chain, lower part
        while len(hull) >= 2:
            (ax, ay), (bx, by) = hull[-2], hull[-1]
            if (bx - ax) * (py - ay) - (by - ay) * (px - ax) > 0:
                break
            hull.pop()
        hull.append((px, py))
    h = np.array(hull)
    return h[:, 0], h[:, 1]


_HULL_X, _HULL_Y = _uniform_arc_hull()


def unimodal_m2_floor(r1: ArrayLike) -> NDArray[np.float64]:
    """The least m2 a symmetric unimodal distribution with this r1 can have (see `_uniform_arc_hull`)."""
    return np.interp(np.asarray(r1, dtype=float), _HULL_X, _HULL_Y)


def shows_two_peaks(
    r1: ArrayLike,
    r2: ArrayLike,
    alpha1_deg: ArrayLike,
    alpha2_deg: ArrayLike,
    *,
    r_resolution: float = R_RESOLUTION,
    angle_resolution_deg: float = ANGLE_RESOLUTION_DEG,
) -> NDArray[np.bool_]:
    """True where no value inside the printed intervals is consistent with one symmetric peak:
    the largest m2 = r2·cos 2(α2 − α1) of the box is below the unimodal floor at every r1 of the box."""
    r1_ = np.asarray(r1, dtype=float)
    h = 0.5 * r_resolution
    mis = np.abs((np.asarray(alpha2_deg, dtype=float) - np.asarray(alpha1_deg, dtype=float) + 90.0) % 180.0 - 90.0)
    mis = np.maximum(mis - angle_resolution_deg, 0.0)  # each angle ± half the resolution
    cos2 = np.cos(2.0 * mis * DEG)
    r2_ = np.asarray(r2, dtype=float)
    m2_hi = np.where(cos2 >= 0, r2_ + h, np.maximum(r2_ - h, 0.0)) * cos2  # the box's largest m2
    grid = np.clip(r1_[..., None] + np.linspace(-h, h, 5), 0.0, 1.0)
    return m2_hi < unimodal_m2_floor(grid).min(axis=-1)


# --------------------------------------------------------------------------- estimates


def _cos2s_r1(s: NDArray[np.float64]) -> NDArray[np.float64]:
    return s / (s + 1.0)


def _cos2s_r2(s: NDArray[np.float64]) -> NDArray[np.float64]:
    return s * (s - 1.0) / ((s + 1.0) * (s + 2.0))


def fit_cos2s(r1: ArrayLike, m2: ArrayLike, *, r_resolution: float = R_RESOLUTION) -> NDArray[np.float64]:
    """s of the cos-2s whose (r1, r2) = (s/(s+1), s(s−1)/((s+1)(s+2))) (Longuet-Higgins et al. 1963)
    is nearest (r1, m2), with its r1 inside the printed interval of r1 (the spread is the data's)."""
    r1_ = np.asarray(r1, dtype=float)
    h = 0.5 * r_resolution
    lo = np.clip(r1_ - h, 0.0, _R1_MAX)
    hi = np.clip(r1_ + h, 0.0, _R1_MAX)
    t = np.linspace(0.0, 1.0, 65)
    R = lo[..., None] + (hi - lo)[..., None] * t
    S = R / (1.0 - R)
    cost = (R - r1_[..., None]) ** 2 + (_cos2s_r2(S) - np.asarray(m2, dtype=float)[..., None]) ** 2
    k = np.argmin(cost, axis=-1)
    return np.take_along_axis(S, k[..., None], -1)[..., 0]


def estimate_directional(
    frequency: ArrayLike,
    directions_deg: ArrayLike,
    *,
    r1: ArrayLike,
    r2: ArrayLike,
    alpha1_deg: ArrayLike,
    alpha2_deg: ArrayLike,
    r_resolution: float = R_RESOLUTION,
    angle_resolution_deg: float = ANGLE_RESOLUTION_DEG,
) -> DirectionalEstimate:
    """D(θ) per band from NDBC-form coefficients (r 0..1, α nautical FROM degrees); see the module doc."""
    f = np.asarray(frequency, dtype=float)
    d = np.asarray(directions_deg, dtype=float)
    if f.ndim != 1 or f.size < 1:
        raise InvalidInput(f"`frequency` must be 1-D, got shape {f.shape}")
    for v, name in ((r1, "r1"), (r2, "r2"), (alpha1_deg, "alpha1_deg"), (alpha2_deg, "alpha2_deg")):
        if np.shape(v) != f.shape:
            raise InvalidInput(f"`{name}` must have the shape of `frequency` {f.shape}, got {np.shape(v)}")
    for v, name in ((r1, "r1"), (r2, "r2")):
        a = np.asarray(v, dtype=float)
        bad = np.isfinite(a) & ((a < 0) | (a > 1.0 + 0.5 * r_resolution))
        if bad.any():
            raise InvalidInput(f"`{name}` must be in 0..1, got {a[bad][0]!r} at band {int(np.argmax(bad))}")
    if not (r_resolution > 0 and angle_resolution_deg >= 0):
        raise InvalidInput("`r_resolution` must be > 0 and `angle_resolution_deg` >= 0")
    dth = direction_bin_widths(d)
    R1, R2, A1, A2, interp = fill_missing(f, r1, r2, alpha1_deg, alpha2_deg)
    two = shows_two_peaks(R1, R2, A1, A2, r_resolution=r_resolution, angle_resolution_deg=angle_resolution_deg)
    p1, p2, pa2, projected, within = project_admissible(
        R1, R2, A1, A2, r_resolution=r_resolution, angle_resolution_deg=angle_resolution_deg
    )
    m2 = p2 * np.cos(2.0 * (pa2 - A1) * DEG)
    s = fit_cos2s(p1, m2, r_resolution=r_resolution)
    D = cos2s(d, mean_dir_deg=A1, s=s)
    if two.any():
        Dm = _mem(nautical_from_to_math(d), ndbc_to_fourier(p1[two], p2[two], A1[two], pa2[two]))
        ok = np.all(np.isfinite(Dm) & (Dm >= 0), axis=-1)  # a regular system by the margin; kept as a guard
        idx = np.flatnonzero(two)[ok]
        D[idx] = Dm[ok]
        two = np.zeros_like(two)
        two[idx] = True
    total = np.sum(D * dth, axis=-1)
    D = np.where((total > 0)[:, None], D / np.where(total > 0, total, 1.0)[:, None], 1.0 / TWO_PI)
    method = np.where(two, MEM, COS2S)
    return DirectionalEstimate(D, method, np.where(two, np.nan, s), interp, projected, within)


def count_peaks(values: ArrayLike, *, rel: float = 1e-3) -> int:
    """Local maxima of a periodic sequence that stand clearly above their surroundings: a maximum
    counts when it exceeds the lowest point between it and every higher maximum by more than
    `rel` × the global maximum (round-off bumps on flat stretches are ~1e-9 and do not count)."""
    v = np.asarray(values, dtype=float)
    n = v.size
    top = float(v.max()) if n else 0.0
    if n < 3 or top <= 0:
        return 0
    tol = rel * top
    start = int(np.argmax(v))
    w = np.roll(v, -start)  # start at the global maximum: it always counts
    peaks = 1
    low, cand = np.inf, None
    for x in w[1:]:
        if cand is None:
            low = min(low, x)
            if x - low > tol:
                cand = x
        elif x > cand:
            cand = x
        elif cand - x > tol:  # descended clearly from a candidate that rose clearly: a peak
            peaks += 1
            low, cand = x, None
    return peaks  # a candidate still open at the end rises into the global maximum: not a peak
