"""Forecast verification of breaker heights: pairing, scores and a calibration factor.

Scores (Wilks 2011, Statistical Methods in the Atmospheric Sciences, 3rd ed., §8.3 on continuous
predictands), on n pairs of observed o_i and forecast f_i:

- bias = mean(o − f)  (observed minus forecast: positive means the forecast runs low; Wilks's
  "mean error" is the opposite sign, forecast minus observed)
- RMSE = √mean((o − f)²)
- scatter index = RMSE / mean(o)  (common practice in wave-model verification)
- correlation = Pearson r of o and f

The calibration factor c multiplies the forecast: least squares through the origin,
c = Σ o·f / Σ f² (minimises Σ (o − c f)²). Its standard error is the heteroscedasticity-consistent
one (White 1980, Econometrica 48, 817-838; the n/(n − 1) small-sample form "HC1" of MacKinnon &
White 1985, J. Econometrics 29): se² = n/(n−1) · Σ f²·r² / (Σ f²)², r = o − c f. Surf-height errors
grow with the height (an observer's 20 % is 0.2 m on 1 m, 0.6 m on 3 m), so the classical
s²/Σ f² would claim too small an uncertainty.

Pure numpy; no app imports.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import datetime, timedelta

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.errors import InvalidInput

__all__ = [
    "PERIOD_BANDS_S",
    "Pairing",
    "SECTORS",
    "Scores",
    "calibration_factor",
    "pair_times",
    "period_band",
    "scores",
    "scores_by",
    "sector_of",
]

# Eight offshore direction sectors of 45°, centred on the compass points (nautical FROM).
SECTORS = ("N", "NE", "E", "SE", "S", "SW", "W", "NW")
# Period bands [s]: wind sea, short swell, mid swell, long-period groundswell (common practice).
PERIOD_BANDS_S = (0.0, 8.0, 12.0, 16.0, math.inf)


def sector_of(direction_deg: float | None) -> str | None:
    """The 45° compass sector of a nautical FROM direction (None for a missing one)."""
    if direction_deg is None or not math.isfinite(direction_deg):
        return None
    return SECTORS[int(((direction_deg % 360.0) + 22.5) // 45.0) % 8]


def period_band(period_s: float | None) -> str | None:
    """The period band label, e.g. '8-12 s' (None for a missing period)."""
    if period_s is None or not math.isfinite(period_s) or period_s <= 0:
        return None
    for lo, hi in zip(PERIOD_BANDS_S[:-1], PERIOD_BANDS_S[1:], strict=True):
        if lo <= period_s < hi:
            if lo == 0.0:
                return f"<{hi:g} s"
            return f">={lo:g} s" if math.isinf(hi) else f"{lo:g}-{hi:g} s"
    return None  # pragma: no cover - the bands cover (0, inf)


def _pairs(observed: ArrayLike, forecast: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    o = np.asarray(observed, dtype=float).ravel()
    f = np.asarray(forecast, dtype=float).ravel()
    if o.shape != f.shape:
        raise InvalidInput(f"observed and forecast differ in length ({o.size} vs {f.size})")
    ok = np.isfinite(o) & np.isfinite(f)
    return o[ok], f[ok]


def calibration_factor(observed: ArrayLike, forecast: ArrayLike) -> tuple[float, float]:
    """(c, standard error of c): least squares through the origin, HC1 standard error.

    NaN for both when there is no pair with a non-zero forecast; the error is NaN for one pair.
    """
    o, f = _pairs(observed, forecast)
    sff = float(np.sum(f * f))
    n = o.size
    if n == 0 or sff <= 0.0:
        return math.nan, math.nan
    c = float(np.sum(o * f)) / sff
    if n < 2:
        return c, math.nan
    r = o - c * f
    se2 = n / (n - 1) * float(np.sum(f * f * r * r)) / sff**2
    return c, math.sqrt(se2)


@dataclass(frozen=True)
class Scores:
    n: int
    bias_m: float
    rmse_m: float
    scatter_index: float
    correlation: float
    calibration_factor: float
    calibration_factor_stderr: float
    mean_observed_m: float
    mean_forecast_m: float

    def as_dict(self, digits: int = 4) -> dict[str, float | int | None]:
        """JSON-ready: rounded, NaN as None."""
        out: dict[str, float | int | None] = {"n": self.n}
        for k in ("bias_m", "rmse_m", "scatter_index", "correlation", "calibration_factor",
                  "calibration_factor_stderr", "mean_observed_m", "mean_forecast_m"):  # fmt: skip
            v = float(getattr(self, k))
            out[k] = round(v, digits) if math.isfinite(v) else None
        return out


def scores(observed: ArrayLike, forecast: ArrayLike) -> Scores:
    """Every score on the pairs where both values are finite (see the module docstring)."""
    o, f = _pairs(observed, forecast)
    n = o.size
    nan = math.nan
    if n == 0:
        return Scores(0, nan, nan, nan, nan, nan, nan, nan, nan)
    e = o - f
    bias = float(np.mean(e))
    rmse = float(np.sqrt(np.mean(e * e)))
    mo, mf = float(np.mean(o)), float(np.mean(f))
    si = rmse / mo if mo > 0 else nan
    if n >= 2:
        do, df = o - mo, f - mf
        den = math.sqrt(float(np.sum(do * do)) * float(np.sum(df * df)))
        r = float(np.sum(do * df)) / den if den > 0 else nan
    else:
        r = nan
    c, se = calibration_factor(o, f)
    return Scores(n, bias, rmse, si, r, c, se, mo, mf)


def scores_by(
    observed: ArrayLike, forecast: ArrayLike, labels: Sequence[str | None]
) -> dict[str, Scores]:
    """Scores per label (sector or period band); pairs labelled None are left out."""
    o = np.asarray(observed, dtype=float).ravel()
    f = np.asarray(forecast, dtype=float).ravel()
    if not (o.size == f.size == len(labels)):
        raise InvalidInput("observed, forecast and labels must have one entry per pair")
    out: dict[str, Scores] = {}
    for lab in dict.fromkeys(x for x in labels if x is not None):
        idx = [i for i, x in enumerate(labels) if x == lab]
        out[lab] = scores(o[idx], f[idx])
    return out


@dataclass(frozen=True)
class Pairing:
    """For each observation: the index of the forecast time it is paired with, or -1."""

    index: NDArray[np.int64]
    offset_s: NDArray[np.float64] = field(default_factory=lambda: np.empty(0))


def pair_times(
    observed: Sequence[datetime], forecast: Sequence[datetime], *, tolerance: timedelta = timedelta(minutes=30)
) -> Pairing:
    """Pair each observation time with the nearest forecast time within `tolerance` (-1 when none).

    Forecast steps are hourly; an observation at 10:20 is the 10:00 step, one at 10:40 the 11:00
    step (the nearest; a tie goes to the earlier step).
    """
    fts = np.array([t.timestamp() for t in forecast], dtype=float)
    order = np.argsort(fts, kind="stable")
    fs = fts[order]
    idx = np.full(len(observed), -1, dtype=np.int64)
    off = np.full(len(observed), np.nan)
    if fs.size == 0:
        return Pairing(idx, off)
    tol = tolerance.total_seconds()
    for i, t in enumerate(observed):
        x = t.timestamp()
        k = int(np.searchsorted(fs, x))
        best = None
        for j in (k - 1, k):
            if 0 <= j < fs.size and (best is None or abs(fs[j] - x) < abs(fs[best] - x)):
                best = j
        if best is not None and abs(fs[best] - x) <= tol:
            idx[i] = int(order[best])
            off[i] = fs[best] - x
    return Pairing(idx, off)
