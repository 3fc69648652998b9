"""Short-term wave-height statistics for a narrow-band sea (Rayleigh distribution).

P(H > h) = exp(-h²/Hrms²), Hrms = √(8 m0) = Hm0/√2 (Longuet-Higgins 1952, J. Mar. Res. 11,
245-266). All ratios are exact for the Rayleigh law; real seas run a few per cent lower
(finite bandwidth), which is the user's business, not these functions'.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.integrate import quad
from scipy.special import erfc

from models.errors import InvalidInput

__all__ = [
    "HM0_PER_HRMS",
    "expected_max_height_ratio",
    "highest_fraction_ratio",
    "median_max_height_ratio",
    "number_of_waves",
]

HM0_PER_HRMS = math.sqrt(2.0)  # Hm0 = 4√m0, Hrms = √(8 m0)


def _reference(reference: str) -> float:
    if reference == "hrms":
        return 1.0
    if reference == "hm0":
        return 1.0 / HM0_PER_HRMS
    raise InvalidInput(f"`reference` must be 'hrms' or 'hm0', got {reference!r}")


def highest_fraction_ratio(n: ArrayLike, *, reference: str = "hrms") -> NDArray[np.float64]:
    """Mean of the highest 1/n of the waves, H_1/n, divided by Hrms (or Hm0).

    H_1/n / Hrms = √(ln n) + n (√π/2) erfc(√(ln n)); n = 1 gives the mean height √π/2,
    n = 3 the significant height 1.41573 Hrms.
    """
    n_ = np.asarray(n, dtype=float)
    if not (np.isfinite(n_).all() and np.all(n_ >= 1)):
        raise InvalidInput(f"`n` must be finite and >= 1, got {n!r}")
    x = np.sqrt(np.log(n_))
    return (x + n_ * (math.sqrt(math.pi) / 2.0) * erfc(x)) * _reference(reference)


def _n_iv(n_waves: ArrayLike) -> NDArray[np.float64]:
    n = np.asarray(n_waves, dtype=float)
    if not (np.isfinite(n).all() and np.all(n >= 1)):
        raise InvalidInput(f"`n_waves` must be finite and >= 1, got {n_waves!r}")
    return n


def _expected_max(n: float) -> float:
    # E[Hmax]/Hrms = ∫0^∞ 1 - (1 - exp(-x²))^N dx, written with log1p/expm1 so large N is exact
    x0 = math.sqrt(math.log(n)) if n > 1 else 0.0

    def tail(x: float) -> float:
        return -math.expm1(n * math.log1p(-math.exp(-x * x))) if x > 0 else 1.0

    lo, _ = quad(tail, 0.0, x0, limit=200, epsabs=1e-13, epsrel=1e-12) if x0 > 0 else (0.0, 0.0)
    hi, _ = quad(tail, x0, x0 + 12.0, limit=200, epsabs=1e-13, epsrel=1e-12)
    return lo + hi


def expected_max_height_ratio(n_waves: ArrayLike, *, reference: str = "hrms") -> NDArray[np.float64]:
    """Expected largest of N independent Rayleigh heights, E[Hmax]/Hrms (or /Hm0), by exact
    integration (N need not be an integer; N = 1 gives √π/2).

    Asymptotically √(ln N) + γ_E/(2√(ln N)) (Longuet-Higgins 1952).
    """
    n = _n_iv(n_waves)
    flat = n.ravel()
    values = {v: _expected_max(v) for v in np.unique(flat)}
    out = np.array([values[v] for v in flat], dtype=float).reshape(n.shape)
    return out * _reference(reference)


def median_max_height_ratio(n_waves: ArrayLike, *, reference: str = "hrms") -> NDArray[np.float64]:
    """Median of the largest of N Rayleigh heights / Hrms (or /Hm0): √(-ln(1 - 2^(-1/N)))."""
    n = _n_iv(n_waves)
    return np.sqrt(-np.log(-np.expm1(-np.log(2.0) / n))) * _reference(reference)


def number_of_waves(duration_s: ArrayLike, mean_period_s: ArrayLike) -> NDArray[np.float64]:
    """Number of waves N = duration / mean period (use Tm02, the zero-crossing period)."""
    d = np.asarray(duration_s, dtype=float)
    t = np.asarray(mean_period_s, dtype=float)
    if not (np.isfinite(d).all() and np.all(d > 0)):
        raise InvalidInput(f"`duration_s` must be positive and finite [s], got {duration_s!r}")
    if not (np.isfinite(t).all() and np.all(t > 0)):
        raise InvalidInput(f"`mean_period_s` must be positive and finite [s], got {mean_period_s!r}")
    return d / t
