"""Linear (Airy) wave theory: dispersion, phase and group speed, shoaling.

All functions take frequency in Hz and depth in metres, broadcast numpy-style, and return
ndarrays (0-d for scalar input). `depth=np.inf` means deep water.

References
----------
Fenton, J.D. & McKee, W.D. (1990) On calculating the lengths of water waves.
    Coastal Engineering 14, 499-513 (the explicit start for the Newton iteration).
Dean, R.G. & Dalrymple, R.A. (1991) Water Wave Mechanics for Engineers and Scientists,
    ch. 3-4 (C, Cg, n, shoaling by energy-flux conservation).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.constants import G, TWO_PI
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

_RTOL = 1e-12
_MAX_ITER = 40
_KH_CLIP = 350.0  # cosh/sinh overflow beyond ~710; tanh is 1 to machine precision long before


def _iv(frequency: ArrayLike, depth: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    f = np.asarray(frequency, dtype=float)
    h = np.asarray(depth, dtype=float)
    if not np.all(np.isfinite(f)) or np.any(f <= 0):
        bad = f[~(np.isfinite(f) & (f > 0))].ravel()[0]
        raise InvalidInput(f"`frequency` must be positive and finite [Hz], got {bad!r}")
    if np.any(np.isnan(h)) or np.any(h <= 0):
        bad = h[~(h > 0)].ravel()[0]
        raise InvalidInput(f"`depth` must be positive [m] (np.inf for deep water), got {bad!r}")
    return np.broadcast_arrays(f, h)  # type: ignore[return-value]


def _solve_kh(y: NDArray[np.float64]) -> NDArray[np.float64]:
    """Solve x tanh x = y for x > 0 (y = k0 h > 0) by Newton from the Fenton-McKee start."""
    x = y / np.tanh(y**0.75) ** (2.0 / 3.0)
    for _ in range(_MAX_ITER):
        t = np.tanh(x)
        # f'(x) = tanh x + x sech^2 x, with sech^2 = 1 - tanh^2 (one transcendental per step)
        dx = (x * t - y) / (t + x * (1.0 - t * t))
        x = x - dx
        if np.all(np.abs(dx) <= _RTOL * x):
            return x
    worst = float(np.max(np.abs(dx) / x))
    raise ConvergenceError(f"dispersion relation did not converge: relative step {worst:.3g} after {_MAX_ITER} iterations")


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
    Newton iteration on x tanh x = k0 h started from Fenton & McKee (1990), converged to a
    relative step of 1e-12; raises `ConvergenceError` otherwise.

    Examples
    --------
    >>> round(float(wavenumber(0.1, 10.0, g=9.81)), 6)
    0.068019
    """
    f, h = _iv(frequency, depth)
    omega = TWO_PI * f
    k0 = np.asarray(omega**2 / g)
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
