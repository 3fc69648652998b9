"""Rounding of outlook values for JSON: to a step (0.1 m, 0.5 ft, whole degrees...), None for NaN/inf.

The array forms (`nums`, `degs`, `grid`) round exactly as the scalar ones (`num`, `deg`): half to
even at the step, then to 6 decimals, never -0.0, so a value reads the same wherever it is shown.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
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


DEG = "deg"  # `round_many`'s step for whole degrees in [0, 360) (as `degs`)


def round_many(specs: Sequence[tuple[Any, float | str]]) -> list[list[Any]]:
    """`nums` (a 1-D array, or a scalar's one-value list) or `grid` rows as tuples (a 2-D array) of each
    (values, step) in one pass: one rounding over all of them, as numpy's cost is per call when
    the arrays are as short as an outlook's 72 steps. `step` DEG rounds as `degs`. The arithmetic
    is the same element by element, so the values are the same as the one-array forms'."""
    arrays = [np.asarray(a, dtype=float) for a, _ in specs]
    if not arrays:
        return []
    sizes = [a.size for a in arrays]
    flat = np.concatenate([a.ravel() for a in arrays])
    is_deg = [st == DEG for _, st in specs]
    step = np.repeat([1.0 if d else float(st) for d, (_, st) in zip(is_deg, specs, strict=True)], sizes)
    with np.errstate(invalid="ignore", over="ignore"):
        r = np.round(np.round(flat / step) * step, 6) + 0.0
        if any(is_deg):
            r = np.where(np.repeat(is_deg, sizes), (np.round(flat) + 0.0) % 360.0, r)
    vals = none_for_nan(r)
    out: list[list[Any]] = []
    o = 0
    for a, n in zip(arrays, sizes, strict=True):
        if a.ndim == 2:
            w = a.shape[1]  # rows as tuples, cut in C (a list per row cost a tenth of the steps' time)
            out.append(list(zip(*[iter(vals[o : o + n])] * w, strict=True)) if w else [() for _ in range(a.shape[0])])
        else:
            out.append(vals[o : o + n])
        o += n
    return out


__all__ = ["DEG", "deg", "degs", "grid", "none_for_nan", "num", "nums", "round_many"]
