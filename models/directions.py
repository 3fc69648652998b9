"""Direction conventions and circular helpers.

Edges (files, API, tables) use nautical directions: the direction waves come FROM, degrees
clockwise from true north. Kernels use the mathematical angle: the direction waves travel
TOWARD, radians counter-clockwise from +x (east). See models/CONVENTIONS.md.

    math = (270° - nautical_from) in radians, wrapped to [-π, π)
    nautical_from = (270° - math in degrees), wrapped to [0, 360)
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.errors import InvalidInput

__all__ = [
    "circular_difference_deg",
    "circular_mean_deg",
    "math_to_nautical_from",
    "nautical_from_to_math",
    "wrap_180",
    "wrap_360",
]


def _finite(value: ArrayLike, name: str) -> NDArray[np.float64]:
    a = np.asarray(value, dtype=float)
    if a.size and not np.isfinite(a).all():
        bad = a[~np.isfinite(a)].ravel()[0]
        raise InvalidInput(f"`{name}` must be finite, got {bad!r}")
    return a


def wrap_360(deg: ArrayLike) -> NDArray[np.float64]:
    """Wrap degrees to [0, 360)."""
    a = np.mod(_finite(deg, "deg"), 360.0)
    return np.where(a >= 360.0, 0.0, a)  # mod of tiny negatives can round to 360


def wrap_180(deg: ArrayLike) -> NDArray[np.float64]:
    """Wrap degrees to [-180, 180)."""
    return wrap_360(np.asarray(deg, dtype=float) + 180.0) - 180.0


def nautical_from_to_math(deg: ArrayLike) -> NDArray[np.float64]:
    """Nautical FROM direction [deg clockwise from N] -> math TOWARD angle [rad CCW from east] in [-π, π).

    >>> float(nautical_from_to_math(270.0))  # from the west = travelling east
    0.0
    """
    return np.deg2rad(wrap_180(270.0 - _finite(deg, "deg")))


def math_to_nautical_from(rad: ArrayLike) -> NDArray[np.float64]:
    """Math TOWARD angle [rad CCW from east] -> nautical FROM direction [deg clockwise from N] in [0, 360).

    >>> float(math_to_nautical_from(np.pi / 2))  # travelling north = from the south
    180.0
    """
    return wrap_360(270.0 - np.rad2deg(_finite(rad, "rad")))


def circular_difference_deg(a_deg: ArrayLike, b_deg: ArrayLike) -> NDArray[np.float64]:
    """Signed smallest difference a - b [deg], wrapped to [-180, 180)."""
    return wrap_180(_finite(a_deg, "a_deg") - _finite(b_deg, "b_deg"))


def circular_mean_deg(
    deg: ArrayLike, *, weights: ArrayLike | None = None, axis: int | None = None
) -> NDArray[np.float64]:
    """Weighted circular mean of directions [deg] in [0, 360) (mean of unit vectors).

    Raises `InvalidInput` when the resultant is zero (e.g. two opposite directions), where the
    mean is undefined.
    """
    th = np.deg2rad(_finite(deg, "deg"))
    w = np.ones_like(th) if weights is None else np.broadcast_to(_finite(weights, "weights"), th.shape)
    if np.any(w < 0):
        raise InvalidInput("`weights` must be non-negative")
    c = np.sum(w * np.cos(th), axis=axis)
    s = np.sum(w * np.sin(th), axis=axis)
    r = np.hypot(c, s)
    scale = np.sum(w, axis=axis)
    if np.any(~(r > 1e-12 * np.maximum(scale, 1e-300))):
        raise InvalidInput("`deg`: circular mean undefined (zero resultant or zero total weight)")
    return wrap_360(np.rad2deg(np.arctan2(s, c)))
