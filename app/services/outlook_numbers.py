"""Rounding of outlook values for JSON: to a step (0.1 m, 0.5 ft, whole degrees...), None for NaN/inf.

The array forms (`nums`, `degs`, `grid`) round exactly as the scalar ones (`num`, `deg`): half to
even at the step, then to 6 decimals, never -0.0, so a value reads the same wherever it is shown.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from numpy.typing import NDArray


def num(v: Any, step: float = 0.1) -> float | None:
    """Round to a multiple of `step`; None for NaN/inf (never NaN in JSON)."""
    if v is None:
        return None
    x = float(v)
    if not math.isfinite(x):
        return None
    return round(round(x / step) * step, 6)


def deg(v: Any) -> float | None:
    """Whole degrees in [0, 360); None for NaN/inf."""
    x = num(v, 1.0)
    return None if x is None else x % 360.0


def none_for_nan(r: NDArray[np.float64]) -> list[float | None]:
    """Flat list of `r`'s values with None where not finite."""
    out: list[float | None] = r.ravel().tolist()
    for i in np.flatnonzero(~np.isfinite(r.ravel())).tolist():
        out[i] = None
    return out


def nums(values: Any, step: float = 0.1) -> list[float | None]:
    """`num` over an array at once (same rounding: half to even, then to 6 decimals), flattened."""
    a = np.asarray(values, dtype=float)
    with np.errstate(invalid="ignore", over="ignore"):
        r = np.round(np.round(a / step) * step, 6) + 0.0  # + 0.0: no -0.0 (as round() gives)
    return none_for_nan(r)


def degs(values: Any) -> list[float | None]:
    """`deg` over an array at once, flattened."""
    a = np.asarray(values, dtype=float)
    with np.errstate(invalid="ignore"):
        return none_for_nan((np.round(a) + 0.0) % 360.0)  # as deg: whole degrees, then mod 360


def grid(values: NDArray[np.float64], step: float = 0.1, as_deg: bool = False) -> list[list[float | None]]:
    """2-D array -> rows of rounded values (None for NaN); a 1-D array -> one-value rows."""
    a = np.asarray(values, dtype=float)
    flat = degs(a) if as_deg else nums(a, step)
    n = a.shape[-1] if a.ndim > 1 else 1
    if n == 1:
        return [[v] for v in flat]
    return [flat[i : i + n] for i in range(0, len(flat), n)]


__all__ = ["deg", "degs", "grid", "none_for_nan", "num", "nums"]
