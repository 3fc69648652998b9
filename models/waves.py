"""Linear (Airy) wave theory: dispersion, phase and group speed, shoaling.

All functions take frequency in Hz and depth in metres, broadcast numpy-style, and return
ndarrays (0-d for scalar input). `depth=np.inf` means deep water.

References
----------
Eckart, C. (1952) The propagation of gravity waves from deep to shallow water.
    Natl. Bur. Standards Circ. 521, 165-173 (the explicit start for the iteration).
Fenton, J.D. & McKee, W.D. (1990) On calculating the lengths of water waves.
    Coastal Engineering 14, 499-513 (explicit approximation, 1.7 % accuracy).
Dean, R.G. & Dalrymple, R.A. (1991) Water Wave Mechanics for Engineers and Scientists,
    ch. 3-4 (C, Cg, n, shoaling by energy-flux conservation).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.constants import TWO_PI, G
from models.errors import ConvergenceError, InvalidInput

__all__ = [
    "deep_group_velocity",
    "deep_phase_speed",
    "deep_wavelength",
    "group_velocity",
    "group_velocity_ratio",
    "phase_speed",
    "phase_speed_depth_derivative",
    "shoaling_coefficient",
    "wavelength",
    "wavenumber",
    "wavenumber_deep",
]

_STEP_STOP = 1e-4  # Halley is cubic: a relative step below 1e-4 leaves an error below ~1e-13
_MAX_ITER = 30
_BLOCK = 16384  # elements per block: the work arrays stay in cache (bench/bench_physics.py)
_KH_CLIP = 350.0  # cosh/sinh overflow beyond ~710; tanh is 1 to machine precision long before


def _iv(frequency: ArrayLike, depth: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    f = np.asarray(frequency, dtype=float)
    h = np.asarray(depth, dtype=float)
    # min/max reductions are cheap and propagate NaN, so one pass each checks the whole array
    if f.size and not (f.min() > 0 and f.max() < np.inf):
        bad = f[~(np.isfinite(f) & (f > 0))].ravel()[0]
        raise InvalidInput(f"`frequency` must be positive and finite [Hz], got {bad!r}")
    if h.size and not h.min() > 0:
        bad = h[~(h > 0)].ravel()[0]
        raise InvalidInput(f"`depth` must be positive [m] (np.inf for deep water), got {bad!r}")
    return np.broadcast_arrays(f, h)  # type: ignore[return-value]


def _halley_block(y, x, t, s, f, w) -> float:  # type: ignore[no-untyped-def]
    """Solve x tanh x = y into `x` (in place); t, s, f, w are work arrays of y's length.

    Returns the largest relative size of the last Halley step.
    """
    # Eckart (1952) start x = y / sqrt(tanh y): exact in both limits, within 5 % between
    np.tanh(y, out=x)
    np.sqrt(x, out=x)
    np.divide(y, x, out=x)
    worst = np.inf
    for it in range(_MAX_ITER):
        # Halley on F(x) = x t - y with t = tanh x, s = sech^2 x = 1 - t^2 (one tanh per step):
        # F' = t + x s, F'' = 2 s (1 - x t), step = F F' / (F'^2 - F s (1 - x t))
        np.tanh(x, out=t)
        np.multiply(x, t, out=f)
        np.multiply(t, t, out=s)
        np.subtract(1.0, s, out=s)
        np.subtract(1.0, f, out=w)
        w *= s
        f -= y
        s *= x
        s += t
        w *= f
        np.multiply(s, f, out=f)
        np.multiply(s, s, out=t)
        t -= w
        f /= t
        x -= f
        if it >= 1:  # from the Eckart start two steps always go below 1e-13; checking earlier costs time
            worst = float(max(f.max(), -f.min()) / x.min())
            if worst <= _STEP_STOP:
                break
    return worst


def _solve_kh(y: NDArray[np.float64]) -> NDArray[np.float64]:
    """Solve x tanh x = y (y = k0 h > 0) for x = k h, block by block."""
    flat = np.ascontiguousarray(y, dtype=float).ravel()
    out = np.empty_like(flat)
    n = min(_BLOCK, flat.size)
    work = [np.empty(n) for _ in range(4)]
    for start in range(0, flat.size, _BLOCK):
        yb = flat[start : start + _BLOCK]
        m = yb.size
        worst = _halley_block(yb, out[start : start + m], *(a[:m] for a in work))
        if not worst <= _STEP_STOP:
            raise ConvergenceError(
                f"dispersion relation did not converge: relative step {worst:.3g} after {_MAX_ITER} iterations"
            )
    return out.reshape(np.shape(y))


def wavenumber(frequency: ArrayLike, depth: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Wavenumber k [rad/m] from the exact linear dispersion relation ω² = g k tanh(k h).

    Parameters
    ----------
    frequency : array_like
        Wave frequency [Hz], > 0.
    depth : array_like
        Still-water depth [m], > 0; ``np.inf`` for deep water.
    g : float, keyword-only
        Gravity [m/s²].

    Notes
    -----
    Halley iteration on x tanh x = k0 h (cubic convergence, one tanh per step) started from
    the explicit Eckart (1952) approximation; stops once the relative step is below 1e-4,
    which leaves a relative error below 1e-13 (checked in tests against a long-double
    Newton solve); raises `ConvergenceError` otherwise.

    Examples
    --------
    >>> round(float(wavenumber(0.1, 10.0, g=9.81)), 6)
    0.068019
    """
    f, h = _iv(frequency, depth)
    if h.size and h.max() < np.inf:  # common case: all depths finite, no masking copies
        y = f * f
        y *= TWO_PI**2 / g
        y *= h
        kh = _solve_kh(y)
        kh /= h
        return kh
    k0 = np.asarray((TWO_PI * f) ** 2 / g)
    finite = np.isfinite(h)
    k = np.array(k0, dtype=float)
    if np.any(finite):
        y = k0[finite] * h[finite]
        k[finite] = _solve_kh(y) / h[finite]
    return k


def wavenumber_deep(frequency: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Deep-water wavenumber k0 = ω²/g [rad/m]."""
    f, _ = _iv(frequency, 1.0)
    return (TWO_PI * f) ** 2 / g


def wavelength(frequency: ArrayLike, depth: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Wavelength L = 2π/k [m]."""
    return TWO_PI / wavenumber(frequency, depth, g=g)


def deep_wavelength(period: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Deep-water wavelength L0 = g T²/2π [m] for period T [s]."""
    T = np.asarray(period, dtype=float)
    if not np.all(np.isfinite(T)) or np.any(T <= 0):
        raise InvalidInput(f"`period` must be positive and finite [s], got {T!r}")
    return g * T**2 / TWO_PI


def phase_speed(frequency: ArrayLike, depth: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Phase speed C = ω/k [m/s]."""
    f, h = _iv(frequency, depth)
    return TWO_PI * f / wavenumber(f, h, g=g)


def deep_phase_speed(frequency: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Deep-water phase speed C0 = g/ω [m/s]."""
    f, _ = _iv(frequency, 1.0)
    return g / (TWO_PI * f)


def group_velocity_ratio(frequency: ArrayLike, depth: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """n = Cg/C = ½(1 + 2kh / sinh 2kh) (1 in shallow water, ½ in deep water)."""
    f, h = _iv(frequency, depth)
    kh = wavenumber(f, h, g=g) * h
    kh2 = np.minimum(2.0 * kh, 2.0 * _KH_CLIP)
    with np.errstate(invalid="ignore"):
        ratio = np.where(np.isfinite(kh), kh2 / np.sinh(kh2), 0.0)
    return 0.5 * (1.0 + ratio)


def group_velocity(frequency: ArrayLike, depth: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Group velocity Cg = n C [m/s]."""
    return group_velocity_ratio(frequency, depth, g=g) * phase_speed(frequency, depth, g=g)


def deep_group_velocity(frequency: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Deep-water group velocity Cg0 = g/(2ω) = gT/4π [m/s]."""
    return 0.5 * deep_phase_speed(frequency, g=g)


def shoaling_coefficient(frequency: ArrayLike, depth: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Linear shoaling coefficient Ks = sqrt(Cg0 / Cg) (energy-flux conservation, no refraction)."""
    return np.sqrt(deep_group_velocity(frequency, g=g) / group_velocity(frequency, depth, g=g))


def phase_speed_depth_derivative(frequency: ArrayLike, depth: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """dC/dh at fixed frequency [1/s], for the ray equations (∇C = dC/dh · ∇h).

    From ω² = g k tanh(kh) at fixed ω: dC/dh = ω sech²(kh) / (tanh(kh) + kh sech²(kh)).
    It tends to sqrt(g/h)/2 in shallow water and to 0 in deep water.
    """
    f, h = _iv(frequency, depth)
    omega = TWO_PI * f
    kh = np.minimum(wavenumber(f, h, g=g) * h, _KH_CLIP)
    t = np.tanh(kh)
    sech2 = 1.0 - t * t
    return omega * sech2 / (t + kh * sech2)
