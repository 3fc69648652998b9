"""Wave spectra: moments and integral parameters, standard shapes, directional spreading and
buoy first-five coefficients.

Units: frequency [Hz], 1-D density [m²/Hz], directional density E(f, θ) [m²/Hz/rad] on
nautical FROM directions [deg]; Fourier coefficients a1, b1, a2, b2 in the math TOWARD frame
(see models/CONVENTIONS.md). Spectra may carry leading batch axes: density (..., nf),
efth (..., nf, nd).

References
----------
Hasselmann, K. et al. (1973) Measurements of wind-wave growth and swell decay during the Joint
    North Sea Wave Project (JONSWAP). Dtsch. Hydrogr. Z. A8(12).
Pierson, W.J. & Moskowitz, L. (1964) J. Geophys. Res. 69(24), 5181-5190.
Longuet-Higgins, M.S., Cartwright, D.E. & Smith, N.D. (1963) Observations of the directional
    spectrum of sea waves using the motions of a floating buoy. Ocean Wave Spectra, 111-136.
Kuik, A.J., van Vledder, G.Ph. & Holthuijsen, L.H. (1988) A method for the routine analysis of
    pitch-and-roll buoy wave data. J. Phys. Oceanogr. 18, 1020-1034.
Lygre, A. & Krogstad, H.E. (1986) Maximum entropy estimation of the directional distribution in
    ocean wave spectra. J. Phys. Oceanogr. 16, 2052-2060 (eq. 13).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.special import gammaln

from models.constants import DEG, TWO_PI
from models.directions import nautical_from_to_math, wrap_360
from models.errors import InvalidInput

__all__ = [
    "Coefficients",
    "Moments",
    "NdbcCoefficients",
    "bin_widths",
    "coefficients_from_spectrum",
    "compass_to_fourier",
    "cos2s",
    "cos2s_normalisation",
    "direction_bin_widths",
    "directional_spectrum_from_coefficients",
    "directional_spread",
    "fourier_to_compass",
    "fourier_to_ndbc",
    "frequency_spectrum",
    "hm0",
    "jonswap",
    "mean_direction",
    "missing_coefficients",
    "moment",
    "moments",
    "ndbc_to_fourier",
    "peak_frequency",
    "peak_period",
    "pierson_moskowitz",
    "spectrum_directional_spread",
    "spectrum_mean_direction",
    "te",
    "tm01",
    "tm02",
]

_R_MAX_MEM = 0.999  # MEM is singular at |c1| = 1; a perfectly unidirectional sea is clipped here


class Moments(NamedTuple):
    """Spectral moments m_n = ∫ f^n E(f) df [m² Hz^n]."""

    m_1: NDArray[np.float64]
    m0: NDArray[np.float64]
    m1: NDArray[np.float64]
    m2: NDArray[np.float64]


class Coefficients(NamedTuple):
    """First-five Fourier coefficients of D(θ) (math TOWARD frame), one value per frequency."""

    a1: NDArray[np.float64]
    b1: NDArray[np.float64]
    a2: NDArray[np.float64]
    b2: NDArray[np.float64]


class NdbcCoefficients(NamedTuple):
    """NDBC form: r1, r2 in 0..1 and alpha1, alpha2 as nautical FROM directions [deg]."""

    r1: NDArray[np.float64]
    r2: NDArray[np.float64]
    alpha1_deg: NDArray[np.float64]
    alpha2_deg: NDArray[np.float64]


# --------------------------------------------------------------------------- validation


def _frequency_iv(frequency: ArrayLike) -> NDArray[np.float64]:
    f = np.asarray(frequency, dtype=float)
    if f.ndim != 1 or f.size < 2:
        raise InvalidInput(f"`frequency` must be 1-D with at least 2 values [Hz], got shape {f.shape}")
    if not (np.isfinite(f).all() and f[0] > 0):
        raise InvalidInput(f"`frequency` must be positive and finite [Hz], got min {f.min()!r}")
    if np.any(np.diff(f) <= 0):
        i = int(np.argmax(np.diff(f) <= 0))
        raise InvalidInput(f"`frequency` must be strictly increasing, got {f[i]!r} then {f[i + 1]!r}")
    return f


def _density_iv(density: ArrayLike, nf: int, name: str = "density") -> NDArray[np.float64]:
    e = np.asarray(density, dtype=float)
    if e.ndim < 1 or e.shape[-1] != nf:
        raise InvalidInput(f"`{name}` must have last axis of length {nf} (frequencies), got shape {e.shape}")
    if not np.isfinite(e).all():
        raise InvalidInput(f"`{name}` must be finite, got {e[~np.isfinite(e)].ravel()[0]!r}")
    if np.any(e < 0):
        raise InvalidInput(f"`{name}` must be non-negative [m²/Hz], got {e.min()!r}")
    return e


def _positive(value: ArrayLike, name: str, unit: str) -> NDArray[np.float64]:
    a = np.asarray(value, dtype=float)
    if a.size == 0 or not (np.isfinite(a).all() and np.all(a > 0)):
        raise InvalidInput(f"`{name}` must be positive and finite [{unit}], got {value!r}")
    return a


def _directions_iv(directions_deg: ArrayLike) -> NDArray[np.float64]:
    d = np.asarray(directions_deg, dtype=float)
    if d.ndim != 1 or d.size < 3:
        raise InvalidInput(f"`directions_deg` must be 1-D with at least 3 values, got shape {d.shape}")
    if not np.isfinite(d).all():
        raise InvalidInput("`directions_deg` must be finite")
    w = wrap_360(d)
    if np.unique(w).size != w.size:
        raise InvalidInput("`directions_deg` must not repeat a direction")
    return d


# --------------------------------------------------------------------------- 1-D moments


def bin_widths(frequency: ArrayLike) -> NDArray[np.float64]:
    """Frequency bin widths [Hz] from midpoints between neighbours.

    Interior bins span half-way to each neighbour; the end bins are extended by the same
    distance on their outer side, so the end widths equal the first and last spacing.
    """
    f = _frequency_iv(frequency)
    d = np.diff(f)
    return np.concatenate(([d[0]], 0.5 * (d[1:] + d[:-1]), [d[-1]]))


def _widths(f: NDArray[np.float64], bandwidth: ArrayLike | None) -> NDArray[np.float64]:
    if bandwidth is None:
        return bin_widths(f)
    b = np.asarray(bandwidth, dtype=float)
    if b.shape != f.shape or not (np.isfinite(b).all() and np.all(b > 0)):
        raise InvalidInput(f"`bandwidth` must be positive with the shape of `frequency` {f.shape}")
    return b


def moment(frequency: ArrayLike, density: ArrayLike, n: float, *, bandwidth: ArrayLike | None = None) -> NDArray[np.float64]:
    """Spectral moment m_n = Σ f^n E(f) Δf [m² Hz^n] over the last axis."""
    f = _frequency_iv(frequency)
    e = _density_iv(density, f.size)
    return np.sum(e * (f**n * _widths(f, bandwidth)), axis=-1)


def moments(frequency: ArrayLike, density: ArrayLike, *, bandwidth: ArrayLike | None = None) -> Moments:
    """The moments m-1, m0, m1, m2 in one pass."""
    f = _frequency_iv(frequency)
    e = _density_iv(density, f.size)
    w = _widths(f, bandwidth)
    return Moments(*(np.sum(e * (f**n * w), axis=-1) for n in (-1, 0, 1, 2)))


def _nonzero(m0: NDArray[np.float64]) -> None:
    if np.any(m0 <= 0):
        raise InvalidInput("`density` is zero at every frequency: the period is undefined")


def hm0(frequency: ArrayLike, density: ArrayLike, *, bandwidth: ArrayLike | None = None) -> NDArray[np.float64]:
    """Spectral significant wave height Hm0 = 4 √m0 [m] (no tail added)."""
    return 4.0 * np.sqrt(moment(frequency, density, 0, bandwidth=bandwidth))


def tm01(frequency: ArrayLike, density: ArrayLike, *, bandwidth: ArrayLike | None = None) -> NDArray[np.float64]:
    """Mean period Tm01 = m0/m1 [s]."""
    m = moments(frequency, density, bandwidth=bandwidth)
    _nonzero(m.m0)
    return m.m0 / m.m1


def tm02(frequency: ArrayLike, density: ArrayLike, *, bandwidth: ArrayLike | None = None) -> NDArray[np.float64]:
    """Mean zero-crossing period Tm02 = √(m0/m2) [s]."""
    m = moments(frequency, density, bandwidth=bandwidth)
    _nonzero(m.m0)
    return np.sqrt(m.m0 / m.m2)


def te(frequency: ArrayLike, density: ArrayLike, *, bandwidth: ArrayLike | None = None) -> NDArray[np.float64]:
    """Energy period Te = Tm-1,0 = m-1/m0 [s]."""
    m = moments(frequency, density, bandwidth=bandwidth)
    _nonzero(m.m0)
    return m.m_1 / m.m0


def peak_frequency(frequency: ArrayLike, density: ArrayLike, *, parabolic: bool = False) -> NDArray[np.float64]:
    """Peak frequency fp [Hz]: the bin of largest density, or with ``parabolic=True`` the vertex
    of the parabola through that bin and its two neighbours (the bin itself at an end of the
    grid or where the fit is degenerate)."""
    f = _frequency_iv(frequency)
    e = _density_iv(density, f.size)
    if np.any(e.max(axis=-1) <= 0):
        raise InvalidInput("`density` is zero at every frequency: the peak is undefined")
    i = np.argmax(e, axis=-1)
    fp = f[i]
    if not parabolic:
        return fp
    ic = np.clip(i, 1, f.size - 2)
    x0, x1, x2 = f[ic - 1], f[ic], f[ic + 1]
    y0 = np.take_along_axis(e, (ic - 1)[..., None], -1)[..., 0]
    y1 = np.take_along_axis(e, ic[..., None], -1)[..., 0]
    y2 = np.take_along_axis(e, (ic + 1)[..., None], -1)[..., 0]
    # vertex of the interpolating parabola through three unevenly spaced points
    num = (x1 - x0) ** 2 * (y1 - y2) - (x1 - x2) ** 2 * (y1 - y0)
    den = (x1 - x0) * (y1 - y2) - (x1 - x2) * (y1 - y0)
    with np.errstate(divide="ignore", invalid="ignore"):
        vertex = x1 - 0.5 * num / den
    ok = (i == ic) & (den != 0) & np.isfinite(vertex) & (vertex > x0) & (vertex < x2)
    return np.where(ok, vertex, fp)


def peak_period(frequency: ArrayLike, density: ArrayLike, *, parabolic: bool = False) -> NDArray[np.float64]:
    """Peak period Tp = 1/fp [s] (see `peak_frequency`)."""
    return 1.0 / peak_frequency(frequency, density, parabolic=parabolic)


# --------------------------------------------------------------------------- shapes


def _shape_iv(frequency: ArrayLike, hs: float, tp: float) -> tuple[NDArray[np.float64], float, float]:
    f = _frequency_iv(frequency)
    hs_ = float(_positive(hs, "hs", "m"))
    tp_ = float(_positive(tp, "tp", "s"))
    if not f[0] < 1.0 / tp_ < f[-1]:
        raise InvalidInput(f"`tp` = {tp_!r} s puts the peak outside `frequency` ({f[0]!r}..{f[-1]!r} Hz)")
    return f, hs_, tp_


def _scale_to_hs(f: NDArray[np.float64], shape: NDArray[np.float64], hs: float) -> NDArray[np.float64]:
    m0 = np.sum(shape * bin_widths(f))
    return shape * (hs**2 / 16.0 / m0)


def pierson_moskowitz(frequency: ArrayLike, *, hs: float, tp: float) -> NDArray[np.float64]:
    """Pierson-Moskowitz (1964) spectrum E(f) [m²/Hz] ∝ f⁻⁵ exp[-1.25 (fp/f)⁴], scaled so that
    `hm0(frequency, E)` equals `hs` exactly on this grid."""
    f, hs_, tp_ = _shape_iv(frequency, hs, tp)
    fp = 1.0 / tp_
    return _scale_to_hs(f, f**-5.0 * np.exp(-1.25 * (fp / f) ** 4), hs_)


def jonswap(
    frequency: ArrayLike,
    *,
    hs: float,
    tp: float,
    gamma: float = 3.3,
    sigma_a: float = 0.07,
    sigma_b: float = 0.09,
) -> NDArray[np.float64]:
    """JONSWAP spectrum (Hasselmann et al. 1973) E(f) [m²/Hz], scaled so that
    `hm0(frequency, E)` equals `hs` exactly on this grid.

    E ∝ f⁻⁵ exp[-1.25 (fp/f)⁴] γ^r, r = exp[-(f - fp)² / (2 σ² fp²)], σ = σa for f ≤ fp and σb
    above. γ = 1 gives Pierson-Moskowitz.
    """
    f, hs_, tp_ = _shape_iv(frequency, hs, tp)
    gamma_ = float(_positive(gamma, "gamma", "-"))
    sa = float(_positive(sigma_a, "sigma_a", "-"))
    sb = float(_positive(sigma_b, "sigma_b", "-"))
    fp = 1.0 / tp_
    sigma = np.where(f <= fp, sa, sb)
    r = np.exp(-((f - fp) ** 2) / (2.0 * sigma**2 * fp**2))
    return _scale_to_hs(f, f**-5.0 * np.exp(-1.25 * (fp / f) ** 4) * gamma_**r, hs_)


# --------------------------------------------------------------------------- directional spreading


def cos2s_normalisation(s: ArrayLike) -> NDArray[np.float64]:
    """G(s) = 2^(2s-1) Γ²(s+1) / (π Γ(2s+1)) [1/rad], so that ∫ G cos^2s(Δ/2) dθ = 1 over 2π."""
    s_ = np.asarray(s, dtype=float)
    if not (np.isfinite(s_).all() and np.all(s_ >= 0)):
        raise InvalidInput(f"`s` must be finite and >= 0, got {s!r}")
    return np.exp((2.0 * s_ - 1.0) * np.log(2.0) + 2.0 * gammaln(s_ + 1.0) - gammaln(2.0 * s_ + 1.0)) / np.pi


def cos2s(
    directions_deg: ArrayLike,
    *,
    mean_dir_deg: ArrayLike | None = None,
    s: ArrayLike,
    mean_dir: ArrayLike | None = None,
) -> NDArray[np.float64]:
    """Cos-2s spreading function D(θ) [1/rad] (Longuet-Higgins et al. 1963), exact normalisation.

    `mean_dir_deg` is the mean nautical FROM direction [deg] (`mean_dir` is accepted as an alias).
    `mean_dir_deg` and `s` broadcast against each other (e.g. one per frequency, shape (nf,));
    the result has their broadcast shape plus a last axis over `directions_deg`.
    Circular moments: a1 = s/(s+1), a2 = s(s-1)/((s+1)(s+2)) about the mean.
    """
    d = np.asarray(directions_deg, dtype=float)
    if d.ndim != 1 or not np.isfinite(d).all():
        raise InvalidInput("`directions_deg` must be 1-D and finite")
    if (mean_dir_deg is None) == (mean_dir is None):
        raise InvalidInput("give exactly one of `mean_dir_deg` or `mean_dir` [deg]")
    mean_dir_deg = mean_dir_deg if mean_dir is None else mean_dir
    m = np.asarray(mean_dir_deg, dtype=float)
    if not np.isfinite(m).all():
        raise InvalidInput(f"`mean_dir_deg` must be finite, got {mean_dir_deg!r}")
    g = cos2s_normalisation(s)
    m, g, s_ = np.broadcast_arrays(m, g, np.asarray(s, dtype=float))
    half = np.abs(np.cos(0.5 * (d - m[..., None]) * DEG))  # |cos| as Δ/2 is taken in [-90°, 90°)
    return g[..., None] * half ** (2.0 * s_[..., None])


def direction_bin_widths(directions_deg: ArrayLike) -> NDArray[np.float64]:
    """Widths [rad] of direction bins from circular midpoints; they add up to 2π."""
    d = _directions_iv(directions_deg)
    w = wrap_360(d)
    order = np.argsort(w)
    ws = w[order]
    gaps = np.diff(np.concatenate((ws, [ws[0] + 360.0])))  # gap to the next direction clockwise
    widths_sorted = 0.5 * (gaps + np.roll(gaps, 1))
    out = np.empty_like(widths_sorted)
    out[order] = widths_sorted
    return out * DEG


def _efth_iv(efth: ArrayLike, nd: int, *, allow_negative: bool = False) -> NDArray[np.float64]:
    e = np.asarray(efth, dtype=float)
    if e.ndim < 2 or e.shape[-1] != nd:
        raise InvalidInput(f"`efth` must have shape (..., nf, {nd}), got {e.shape}")
    if not np.isfinite(e).all():
        raise InvalidInput("`efth` must be finite")
    if not allow_negative and np.any(e < 0):
        raise InvalidInput(f"`efth` must be non-negative [m²/Hz/rad], got {e.min()!r}")
    return e


def frequency_spectrum(efth: ArrayLike, directions_deg: ArrayLike) -> NDArray[np.float64]:
    """E(f) = ∫ E(f, θ) dθ [m²/Hz] from efth (..., nf, nd) in m²/Hz/rad.

    Negative lobes (the truncated Fourier series) are integrated as they are.
    """
    dth = direction_bin_widths(directions_deg)
    return np.sum(_efth_iv(efth, dth.size, allow_negative=True) * dth, axis=-1)


def coefficients_from_spectrum(efth: ArrayLike, directions_deg: ArrayLike) -> Coefficients:
    """a1, b1, a2, b2 per frequency (math TOWARD frame) of efth (..., nf, nd).

    Frequencies with no energy get zeros (an isotropic distribution), not NaN. Negative lobes
    (the truncated Fourier series) are integrated as they are.
    """
    dth = direction_bin_widths(directions_deg)
    e = _efth_iv(efth, dth.size, allow_negative=True) * dth
    th = nautical_from_to_math(directions_deg)
    total = e.sum(axis=-1)
    safe = np.where(total > 0, total, 1.0)
    parts = [np.where(total > 0, (e * fn(n * th)).sum(axis=-1) / safe, 0.0) for n in (1, 2) for fn in (np.cos, np.sin)]
    return Coefficients(parts[0], parts[1], parts[2], parts[3])


def mean_direction(a1: ArrayLike, b1: ArrayLike) -> NDArray[np.float64]:
    """Mean direction [deg nautical FROM] from math-frame a1, b1: 270° - atan2(b1, a1) (Kuik et al. 1988)."""
    a, b = _ab_iv(a1, b1)
    if np.any(np.hypot(a, b) == 0):
        raise InvalidInput("`a1`, `b1`: mean direction undefined for r1 = 0 (isotropic)")
    return wrap_360(270.0 - np.rad2deg(np.arctan2(b, a)))


def directional_spread(a1: ArrayLike, b1: ArrayLike) -> NDArray[np.float64]:
    """Circular spread σ = √(2(1 - r1)) [deg], r1 = √(a1² + b1²) (Kuik et al. 1988)."""
    a, b = _ab_iv(a1, b1)
    r1 = np.minimum(np.hypot(a, b), 1.0)
    return np.rad2deg(np.sqrt(2.0 * (1.0 - r1)))


def _ab_iv(a1: ArrayLike, b1: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    a = np.asarray(a1, dtype=float)
    b = np.asarray(b1, dtype=float)
    for v, name in ((a, "a1"), (b, "b1")):
        if not np.isfinite(v).all():
            raise InvalidInput(f"`{name}` must be finite, got {v[~np.isfinite(v)].ravel()[0]!r}")
    if np.any(np.hypot(a, b) > 1.0 + 1e-9):
        raise InvalidInput(f"`a1`, `b1`: r1 = √(a1² + b1²) must be <= 1, got {np.hypot(a, b).max()!r}")
    return np.broadcast_arrays(a, b)  # type: ignore[return-value]


def _integrated_a1b1(
    frequency: ArrayLike, efth: ArrayLike, directions_deg: ArrayLike
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    f = _frequency_iv(frequency)
    dth = direction_bin_widths(directions_deg)
    e = _efth_iv(efth, dth.size)
    if e.shape[-2] != f.size:
        raise InvalidInput(f"`efth` must have {f.size} frequencies (axis -2), got shape {e.shape}")
    w = e * dth * bin_widths(f)[:, None]
    th = nautical_from_to_math(directions_deg)
    m0 = w.sum(axis=(-2, -1))
    if np.any(m0 <= 0):
        raise InvalidInput("`efth` has no energy: direction undefined")
    return (w * np.cos(th)).sum(axis=(-2, -1)) / m0, (w * np.sin(th)).sum(axis=(-2, -1)) / m0


def spectrum_mean_direction(frequency: ArrayLike, efth: ArrayLike, directions_deg: ArrayLike) -> NDArray[np.float64]:
    """Mean direction [deg nautical FROM] of E(f, θ) from frequency-integrated a1, b1 (Kuik et al. 1988)."""
    return mean_direction(*_integrated_a1b1(frequency, efth, directions_deg))


def spectrum_directional_spread(frequency: ArrayLike, efth: ArrayLike, directions_deg: ArrayLike) -> NDArray[np.float64]:
    """Spread [deg] of E(f, θ) from frequency-integrated a1, b1 (Kuik et al. 1988)."""
    return directional_spread(*_integrated_a1b1(frequency, efth, directions_deg))


# --------------------------------------------------------------------------- coefficient forms


def ndbc_to_fourier(r1: ArrayLike, r2: ArrayLike, alpha1_deg: ArrayLike, alpha2_deg: ArrayLike) -> Coefficients:
    """NDBC (r1, r2, α1, α2 nautical FROM [deg]) -> a1, b1, a2, b2 in the math TOWARD frame.

    θ1 = 270° - α1, θ2 = 270° - α2; a1 = r1 cos θ1, b1 = r1 sin θ1, a2 = r2 cos 2θ2, b2 = r2 sin 2θ2.
    NaN inputs give NaN outputs at the same place (see `missing_coefficients`).
    """
    r1_, r2_, a1_, a2_ = (np.asarray(v, dtype=float) for v in (r1, r2, alpha1_deg, alpha2_deg))
    th1 = (270.0 - a1_) * DEG
    th2 = 2.0 * (270.0 - a2_) * DEG
    return Coefficients(r1_ * np.cos(th1), r1_ * np.sin(th1), r2_ * np.cos(th2), r2_ * np.sin(th2))


def fourier_to_ndbc(a1: ArrayLike, b1: ArrayLike, a2: ArrayLike, b2: ArrayLike) -> NdbcCoefficients:
    """Math-frame a1, b1, a2, b2 -> NDBC (r1, r2, α1 = 270° - atan2(b1, a1), α2 = 270° - ½ atan2(b2, a2)).

    α2 is defined modulo 180°; it is returned in [0, 360) from the formula above.
    """
    a1_, b1_, a2_, b2_ = (np.asarray(v, dtype=float) for v in (a1, b1, a2, b2))
    alpha1 = wrap_360(np.where(np.isfinite(a1_ + b1_), 270.0 - np.rad2deg(np.arctan2(b1_, a1_)), 0.0))
    alpha2 = wrap_360(np.where(np.isfinite(a2_ + b2_), 270.0 - 0.5 * np.rad2deg(np.arctan2(b2_, a2_)), 0.0))
    nan1 = ~np.isfinite(a1_ + b1_)
    nan2 = ~np.isfinite(a2_ + b2_)
    return NdbcCoefficients(
        np.hypot(a1_, b1_), np.hypot(a2_, b2_), np.where(nan1, np.nan, alpha1), np.where(nan2, np.nan, alpha2)
    )


def fourier_to_compass(a1: ArrayLike, b1: ArrayLike, a2: ArrayLike, b2: ArrayLike) -> Coefficients:
    """Math TOWARD frame -> compass FROM frame (φ clockwise from north, waves coming from φ).

    With φ = 270° - θ: cos φ = -sin θ, sin φ = -cos θ, cos 2φ = -cos 2θ, sin 2φ = sin 2θ, so
    (a1, b1, a2, b2)_compass = (-b1, -a1, -a2, b2); the mean FROM direction is atan2(b1, a1)
    in that frame. The map is its own inverse.
    """
    a1_, b1_, a2_, b2_ = (np.asarray(v, dtype=float) for v in (a1, b1, a2, b2))
    return Coefficients(-b1_, -a1_, -a2_, b2_)


def compass_to_fourier(a1: ArrayLike, b1: ArrayLike, a2: ArrayLike, b2: ArrayLike) -> Coefficients:
    """Compass FROM frame -> math TOWARD frame (inverse of `fourier_to_compass`, the same map)."""
    return fourier_to_compass(a1, b1, a2, b2)


def missing_coefficients(r1: ArrayLike, r2: ArrayLike, alpha1_deg: ArrayLike, alpha2_deg: ArrayLike) -> NDArray[np.bool_]:
    """True where any of the four NDBC coefficients is missing (NaN or inf); those frequencies take
    coefficients interpolated from their neighbours in `directional_spectrum_from_coefficients`."""
    arrs = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (r1, r2, alpha1_deg, alpha2_deg)))
    return ~np.all([np.isfinite(a) for a in arrs], axis=0)


def _fill_missing_bands(f, missing, r1, r2, al1, al2):
    """NDBC coefficients with the `missing` bands interpolated (as a1..b2, linear in frequency) from
    the complete ones."""
    good = ~missing
    c = ndbc_to_fourier(r1[good], r2[good], al1[good], al2[good])
    filled = Coefficients(*(np.interp(f, f[good], v) for v in c))
    n = fourier_to_ndbc(*filled)
    return tuple(np.where(missing, new, old) for new, old in zip(n, (r1, r2, al1, al2), strict=True))


def _mem(th: NDArray[np.float64], c: Coefficients) -> NDArray[np.float64]:
    """Lygre & Krogstad (1986) eq. 13; th (nd,) math radians; coefficients (nf,). Returns (nf, nd)."""
    c1 = c.a1 + 1j * c.b1
    c2 = c.a2 + 1j * c.b2
    r1 = np.abs(c1)
    scale = np.ones_like(r1)
    np.divide(_R_MAX_MEM, r1, out=scale, where=r1 > _R_MAX_MEM)
    c1 = c1 * scale
    phi1 = (c1 - c2 * np.conj(c1)) / (1.0 - np.abs(c1) ** 2)
    phi2 = c2 - c1 * phi1
    num = np.real(1.0 - phi1 * np.conj(c1) - phi2 * np.conj(c2))
    z = np.exp(-1j * th)
    den = np.abs(1.0 - phi1[:, None] * z - phi2[:, None] * z**2) ** 2
    with np.errstate(divide="ignore", invalid="ignore"):
        return num[:, None] / (TWO_PI * den)


def directional_spectrum_from_coefficients(
    frequency: ArrayLike,
    density: ArrayLike,
    directions_deg: ArrayLike,
    *,
    r1: ArrayLike,
    r2: ArrayLike,
    alpha1_deg: ArrayLike,
    alpha2_deg: ArrayLike,
    method: str = "mem",
) -> NDArray[np.float64]:
    """E(f, θ) [m²/Hz/rad], shape (nf, nd), on nautical FROM `directions_deg`, from a 1-D
    spectrum and the NDBC-form buoy coefficients (r in 0..1, α nautical FROM degrees).

    Methods
    -------
    ``"fourier"``: NDBC truncated series D = (1/π)[½ + r1 cos(α - α1) + r2 cos 2(α - α2)]
    (can be negative where the data are narrow; kept as published, so E(f, θ) can be < 0:
    use "weighted" or "mem" for anything that needs a density).
    ``"weighted"``: D = (1/π)[½ + (2/3) r1 cos(α - α1) + (1/6) r2 cos 2(α - α2)], clipped at 0
    (non-negative for consistent coefficients).
    ``"mem"``: maximum entropy method of Lygre & Krogstad (1986); it reproduces a1..b2 but can
    split a single peak in two.

    Each row of D is normalised so that Σ D Δθ = 1 on the given directions, so the frequency
    spectrum is kept exactly. Frequencies whose coefficients are missing (see
    `missing_coefficients`) take a1, b1, a2, b2 interpolated linearly in frequency from the nearest
    complete bands (held beyond the first and last): a band's energy keeps coming from the
    directions its neighbours show, never from every direction, land included. The set of
    admissible first-five moments is convex, so the interpolated coefficients are admissible when
    their neighbours are. Only when no band has coefficients is the distribution isotropic. Where
    MEM has no valid solution the weighted series is used; the result never contains NaN.
    """
    f = _frequency_iv(frequency)
    e = _density_iv(density, f.size)
    if e.ndim != 1:
        raise InvalidInput(f"`density` must be 1-D (nf,), got shape {e.shape}")
    d = _directions_iv(directions_deg)
    if method not in ("mem", "fourier", "weighted"):
        raise InvalidInput(f"`method` must be 'mem', 'fourier' or 'weighted', got {method!r}")
    arrs = []
    for v, name in ((r1, "r1"), (r2, "r2"), (alpha1_deg, "alpha1_deg"), (alpha2_deg, "alpha2_deg")):
        a = np.asarray(v, dtype=float)
        if a.shape != f.shape:
            raise InvalidInput(f"`{name}` must have the shape of `frequency` {f.shape}, got {a.shape}")
        arrs.append(a)
    missing = missing_coefficients(*arrs)
    r1_, r2_, al1, al2 = (np.where(missing, 0.0, a) for a in arrs)
    for a, name in ((r1_, "r1"), (r2_, "r2")):
        if np.any((a < 0) | (a > 1.0 + 1e-6)):
            bad = a[(a < 0) | (a > 1.0 + 1e-6)][0]
            raise InvalidInput(f"`{name}` must be in 0..1, got {bad!r}")
    r1_ = np.minimum(r1_, 1.0)
    r2_ = np.minimum(r2_, 1.0)
    if missing.any() and not missing.all():
        r1_, r2_, al1, al2 = _fill_missing_bands(f, missing, r1_, r2_, al1, al2)
    dth = direction_bin_widths(d)

    def series(w1: float, w2: float) -> NDArray[np.float64]:
        x1 = (d[None, :] - al1[:, None]) * DEG
        x2 = (d[None, :] - al2[:, None]) * DEG
        return (0.5 + w1 * r1_[:, None] * np.cos(x1) + w2 * r2_[:, None] * np.cos(2.0 * x2)) / np.pi

    weighted = np.maximum(series(2.0 / 3.0, 1.0 / 6.0), 0.0)
    if method == "fourier":
        D = series(1.0, 1.0)
    elif method == "weighted":
        D = weighted
    else:
        D = _mem(nautical_from_to_math(d), ndbc_to_fourier(r1_, r2_, al1, al2))
        bad = ~np.all(np.isfinite(D) & (D >= 0), axis=-1)
        D = np.where(bad[:, None], weighted, D)
    if missing.all():  # nothing to interpolate from
        D = np.full_like(D, 1.0 / TWO_PI)
    total = np.sum(D * dth, axis=-1)
    D = np.where((total > 0)[:, None], D / np.where(total > 0, total, 1.0)[:, None], 1.0 / TWO_PI)
    return e[:, None] * D
