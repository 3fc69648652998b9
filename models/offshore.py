"""Offshore spectra of one input, partitioned once and shared by every spot that uses the input.

`prepare_offshore` runs the swell-train partitioning (`models.partition.partition_series`:
watershed + merging) and builds the stack the table application works on: the whole spectrum,
then each train's spectrum (its label mask), plus the offshore summary per step (Hm0, Tp, peak
direction of the main train, deep-water wave power).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import datetime
from typing import Any

import numpy as np
from numpy.typing import NDArray

from models.hazard import wave_power_deep_kw_m
from models.partition import partition_series
from models.spectra import frequency_spectrum, hm0, moments, peak_period

MAX_TRAINS = 4  # swell trains kept per step (the largest first)


@dataclass(frozen=True)
class OffshoreBatch:
    """Offshore spectra of one input on one grid, partitioned: efth (nt, nf, nd) m²/Hz/rad."""

    source: str
    kind: str
    times: list[datetime]
    frequency: NDArray[np.float64]
    directions: NDArray[np.float64]
    efth: NDArray[np.float64]
    stack: NDArray[np.float64]  # (nt, 1 + K, nf, nd): whole spectrum, then trains 0..K-1
    trains: tuple[tuple[Any, ...], ...]  # TrainSummary per step (at most K)
    hm0: NDArray[np.float64]
    tp: NDArray[np.float64]  # NaN where empty
    peak_dir: NDArray[np.float64]  # peak direction of train 0 (NaN where empty)
    power_kw_m: NDArray[np.float64]
    issued: datetime | None = None
    observed_at: list[datetime | None] = field(default_factory=list)
    coverage: list[float] = field(default_factory=list)  # arrival steps: energy share observed
    estimate: list[str | None] = field(default_factory=list)  # per step: how E(f, θ) was obtained
    memo: dict[str, Any] = field(default_factory=dict, compare=False, repr=False)  # per-batch formatting

    def subset(self, idx: Sequence[int]) -> OffshoreBatch:
        """The batch at steps `idx` only (same grid and source)."""
        i = np.asarray(idx, dtype=int)
        return OffshoreBatch(
            source=self.source, kind=self.kind, times=[self.times[k] for k in i], frequency=self.frequency,
            directions=self.directions, efth=self.efth[i], stack=self.stack[i],
            trains=tuple(self.trains[k] for k in i), hm0=self.hm0[i], tp=self.tp[i], peak_dir=self.peak_dir[i],
            power_kw_m=self.power_kw_m[i], issued=self.issued,
            observed_at=[self.observed_at[k] for k in i] if self.observed_at else [],
            coverage=[self.coverage[k] for k in i] if self.coverage else [],
            estimate=[self.estimate[k] for k in i] if self.estimate else [],
        )  # fmt: skip


def prepare_offshore(
    times: Sequence[datetime],
    frequency: NDArray[np.float64],
    directions: NDArray[np.float64],
    efth: NDArray[np.float64],
    *,
    source: str,
    kind: str,
    issued: datetime | None = None,
    observed_at: Sequence[datetime | None] | None = None,
    coverage: Sequence[float] | None = None,
    estimate: Sequence[str | None] | None = None,
    max_trains: int = MAX_TRAINS,
) -> OffshoreBatch:
    """Partition the spectra and build the per-train masked stack (done once per input, shared by spots)."""
    f = np.asarray(frequency, dtype=float)
    d = np.asarray(directions, dtype=float)
    e = np.asarray(efth, dtype=float)
    nt = e.shape[0]
    part = partition_series(f, d, e)
    # an empty step's partition is one zero-energy train (label 0 on a zero spectrum): not a swell
    # (only whole empty steps are cleared, so train k stays label k of the stack)
    found = [tuple(trains) if any(t.m0_m2 > 0 for t in trains) else () for trains in part.trains]
    k = max(1, min(max_trains, max((len(t) for t in found), default=1)))
    stack = np.zeros((nt, 1 + k) + e.shape[1:])
    stack[:, 0] = e
    for j in range(k):
        stack[:, 1 + j] = np.where(part.labels == j, e, 0.0)
    density = frequency_spectrum(e, d)
    h = hm0(f, density)
    mom = moments(f, density)
    ok = mom.m0 > 0
    tp = np.full(nt, np.nan)
    if ok.any():
        tp[ok] = peak_period(f, density[ok])
    te = np.where(ok, mom.m_1 / np.where(ok, mom.m0, 1.0), 1.0)  # energy period Tm-1,0
    power = np.where(ok, wave_power_deep_kw_m(h, te), 0.0)
    peak_dir = np.array([t[0].peak_direction_deg if t else np.nan for t in found], dtype=float)
    return OffshoreBatch(
        source=source, kind=kind, times=list(times), frequency=f, directions=d, efth=e, stack=stack,
        trains=tuple(t[:k] for t in found), hm0=h, tp=tp, peak_dir=peak_dir, power_kw_m=power,
        issued=issued, observed_at=list(observed_at) if observed_at is not None else [],
        coverage=list(coverage) if coverage is not None else [],
        estimate=list(estimate) if estimate is not None else [],
    )  # fmt: skip


__all__ = ["MAX_TRAINS", "OffshoreBatch", "prepare_offshore"]
