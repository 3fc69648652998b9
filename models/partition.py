"""Split a directional spectrum E(f, θ) into swell trains: watershed, then merging.

Method (after Hanson & Phillips 2001, J. Atmos. Oceanic Technol. 18:277-293; details from memory):

1. Watershed. Every cell of the (frequency, direction) grid points to its highest neighbour among
   the 8 around it (direction periodic, frequency not) when that is higher than itself; cells that
   no neighbour exceeds are peaks. Following the pointers (steepest ascent) ends at one peak; the
   cells ending at the same peak form a partition. Ties are broken by grid position so plateaus end
   at one peak and every path ends (a strict total order on (value, position)).
2. Merging, repeated until nothing changes:
   - a partition whose energy fraction is below `min_energy_fraction` or whose peak is below the
     noise floor (max(`noise_floor`, `min_peak_fraction` × the global peak)) joins the adjacent
     partition it shares the highest saddle with (the nearest peak if it touches none);
   - two adjacent partitions whose peaks are close, Δ² <= `kappa` (δa² + δb²), are combined. Δ is
     the distance between their peaks and δ² their spreads (energy-weighted variance about the
     mean), both in the (fx, fy) = f (cos θ, sin θ) plane. Hanson & Phillips use this form; the
     default `kappa` = 0.4 is from memory (to verify).
3. Wind sea (optional, wind given): a train is flagged when its peak phase speed is below
   `wind_factor` · U10 · cos(θpeak − θwind), deep-water c = g/(2π f); Hanson & Phillips use a
   factor 1.5 (from memory).

Each cell belongs to exactly one train, so train energies add up to the total. Trains are numbered
0, 1, ... by decreasing energy. Directions are nautical FROM, degrees; E in m²/Hz/rad.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.constants import DEG, G
from models.errors import InvalidInput
from models.spectra import bin_widths, direction_bin_widths

__all__ = [
    "KAPPA",
    "PartitionResult",
    "SeriesPartition",
    "TrainSummary",
    "partition_series",
    "partition_spectrum",
    "watershed",
]

KAPPA = 0.4  # Hanson & Phillips 2001 closeness factor (from memory)
WIND_FACTOR = 1.5  # Hanson & Phillips 2001 wind-sea factor (from memory)


class TrainSummary(NamedTuple):
    label: int
    hm0_m: float  # 4 √m0 of the train
    tp_s: float  # 1 / peak of the train's frequency spectrum
    peak_direction_deg: float  # FROM direction of the train's peak cell
    mean_direction_deg: float  # circular energy-weighted mean (FROM)
    spread_deg: float  # Kuik et al. 1988: √(2(1 − r1))
    energy_fraction: float
    m0_m2: float
    wind_sea: bool | None  # None when no wind was given


class PartitionResult(NamedTuple):
    labels: NDArray[np.int64]  # (nf, nd) train label per cell, in the caller's direction order
    trains: tuple[TrainSummary, ...]


class SeriesPartition(NamedTuple):
    labels: NDArray[np.int64]  # (nt, nf, nd)
    trains: tuple[tuple[TrainSummary, ...], ...]  # per time step


def _grid_iv(frequency_hz: ArrayLike, directions_deg: ArrayLike, efth: ArrayLike):
    f = np.asarray(frequency_hz, dtype=float)
    d = np.asarray(directions_deg, dtype=float)
    if f.ndim != 1 or f.size < 2 or not np.all(np.isfinite(f)) or np.any(f <= 0) or np.any(np.diff(f) <= 0):
        raise InvalidInput("`frequency_hz` must be 1-D, at least 2 values, positive, finite and ascending")
    if d.ndim != 1 or d.size < 3 or not np.all(np.isfinite(d)):
        raise InvalidInput("`directions_deg` must be 1-D with at least 3 finite values")
    e = np.asarray(efth, dtype=float)
    if e.ndim < 2 or e.shape[-2:] != (f.size, d.size):
        raise InvalidInput(f"`efth` must end in shape (nf, nd) = ({f.size}, {d.size}), got {e.shape}")
    bad = ~np.isfinite(e) | (e < 0)
    if np.any(bad):
        idx = tuple(int(i) for i in np.argwhere(bad)[0])
        raise InvalidInput(f"`efth` must be finite and >= 0, got {e[idx]!r} at index {idx}")
    return f, d, e


def watershed(efth_sorted: NDArray[np.float64]) -> NDArray[np.int64]:
    """Steepest-ascent watershed of (B, nf, nd) grids (direction periodic, in circular order).

    Returns, per cell, the flat index (within its grid) of the peak it ascends to.
    """
    b, nf, nd = efth_sorted.shape
    n = nf * nd
    v = efth_sorted.reshape(b, n)
    own = np.arange(n)
    best_v = v.copy()
    best_i = np.broadcast_to(own, (b, n)).copy()
    fi, di = np.divmod(own, nd)
    for dfi in (-1, 0, 1):
        for ddi in (-1, 0, 1):
            if dfi == 0 and ddi == 0:
                continue
            nfi = fi + dfi
            ok = (nfi >= 0) & (nfi < nf)
            nb = np.where(ok, np.clip(nfi, 0, nf - 1) * nd + (di + ddi) % nd, own)
            cv = np.where(ok, v[:, nb], -np.inf)
            better = (cv > best_v) | ((cv == best_v) & (nb > best_i))
            best_v = np.where(better, cv, best_v)
            best_i = np.where(better, nb, best_i)
    ptr = (best_i + (np.arange(b) * n)[:, None]).ravel()
    while True:  # pointer jumping: path lengths halve each round
        nxt = ptr[ptr]
        if np.array_equal(nxt, ptr):
            break
        ptr = nxt
    return ptr.reshape(b, n) - (np.arange(b) * n)[:, None]


def _adjacency(lab: NDArray[np.int64], e: NDArray[np.float64]) -> dict[tuple[int, int], float]:
    """Highest saddle min(E_a, E_b) over neighbouring cell pairs of different partitions."""
    nf, nd = lab.shape
    out: dict[tuple[int, int], float] = {}
    for dfi, ddi in ((0, 1), (1, -1), (1, 0), (1, 1)):  # each unordered neighbour pair once
        a = lab[: nf - dfi]
        ea = e[: nf - dfi]
        bl = np.roll(lab, -ddi, axis=1)[dfi:]
        eb = np.roll(e, -ddi, axis=1)[dfi:]
        diff = a != bl
        if not np.any(diff):
            continue
        la, lb = a[diff], bl[diff]
        s = np.minimum(ea[diff], eb[diff])
        lo, hi = np.minimum(la, lb), np.maximum(la, lb)
        for p, q, sv in zip(lo.tolist(), hi.tolist(), s.tolist(), strict=True):
            if sv > out.get((p, q), -1.0):
                out[(p, q)] = sv
    return out


def _centre(m, ew, e, fx, fy) -> tuple[float, float, float, float]:
    """Peak position (fx, fy) of the cells `m`, and their energy-weighted spread δ² about the mean."""
    wt = ew[m]
    k = int(np.flatnonzero(m.ravel())[np.argmax(e[m])])
    px, py = float(fx.ravel()[k]), float(fy.ravel()[k])
    if wt.sum() <= 0:
        return px, py, 0.0, 0.0
    mx = float((wt * fx[m]).sum() / wt.sum())
    my = float((wt * fy[m]).sum() / wt.sum())
    var = float((wt * ((fx[m] - mx) ** 2 + (fy[m] - my) ** 2)).sum() / wt.sum())
    return px, py, var, 1.0


def _merge_one(lab, e, w, fx, fy, floor, min_frac, kappa) -> NDArray[np.int64]:
    """Apply merging to one (nf, nd) grid (sorted directions); returns the merged label grid."""
    while True:
        ids = np.unique(lab)
        if ids.size == 1:
            return lab
        ew = e * w
        m0 = {int(i): float(ew[lab == i].sum()) for i in ids}
        tot = sum(m0.values())
        peak_val = {int(i): float(e[lab == i].max()) for i in ids}
        adj = _adjacency(lab, e)

        def centre(i: int) -> tuple[float, float, float, float]:
            return _centre(lab == i, ew, e, fx, fy)  # noqa: B023 (used within this iteration only)

        small = [i for i in m0 if (tot > 0 and m0[i] / tot < min_frac) or peak_val[i] < floor]
        if small:
            i = min(small, key=lambda k: (m0[k], peak_val[k]))
            nbrs = {(q if p == i else p): s for (p, q), s in adj.items() if i in (p, q)}
            if nbrs:
                j = max(nbrs, key=lambda k: (nbrs[k], m0[k]))
            else:
                pi = centre(i)
                j = min((k for k in m0 if k != i), key=lambda k: (centre(k)[0] - pi[0]) ** 2 + (centre(k)[1] - pi[1]) ** 2)
            lab = np.where(lab == i, j, lab)
            continue
        if kappa > 0 and adj:
            cs = {int(i): centre(int(i)) for i in ids}
            best, ratio = None, math.inf
            for p, q in adj:
                d2 = (cs[p][0] - cs[q][0]) ** 2 + (cs[p][1] - cs[q][1]) ** 2
                lim = kappa * (cs[p][2] + cs[q][2])
                if d2 <= lim and (d2 / lim if lim > 0 else 0.0) < ratio:
                    best, ratio = (p, q), (d2 / lim if lim > 0 else 0.0)
            if best is not None:
                keep, gone = (best if m0[best[0]] >= m0[best[1]] else best[::-1])
                lab = np.where(lab == gone, keep, lab)
                continue
        return lab


def _summaries(lab, e, f, d_sorted, wf, wd, wind, g) -> tuple[NDArray[np.int64], tuple[TrainSummary, ...]]:
    ew = e * wf[:, None] * wd[None, :]
    tot = float(ew.sum())
    ids = np.unique(lab)
    m0s = np.array([ew[lab == i].sum() for i in ids])
    order = ids[np.argsort(-m0s, kind="stable")]
    relabel = np.empty(int(ids.max()) + 1, dtype=np.int64)
    relabel[order] = np.arange(order.size)
    new = relabel[lab]
    c, s = np.cos(d_sorted * DEG), np.sin(d_sorted * DEG)
    trains = []
    for k in range(order.size):
        m = new == k
        part = np.where(m, ew, 0.0)
        m0 = float(part.sum())
        e1d = part.sum(axis=1) / wf
        fp = f[int(np.argmax(e1d))]
        pk = np.unravel_index(int(np.argmax(np.where(m, e, -1.0))), e.shape)
        if m0 > 0:
            a1, b1 = float((part * c).sum() / m0), float((part * s).sum() / m0)
            mean_dir = math.degrees(math.atan2(b1, a1)) % 360.0
            spread = math.degrees(math.sqrt(max(0.0, 2.0 * (1.0 - math.hypot(a1, b1)))))
        else:
            mean_dir, spread = float(d_sorted[pk[1]]), 0.0
        wind_sea = None
        if wind is not None:
            u, wdir = wind
            cp = g / (2.0 * math.pi * f[pk[0]])
            wind_sea = bool(cp < WIND_FACTOR * u * math.cos((d_sorted[pk[1]] - wdir) * DEG))
        trains.append(
            TrainSummary(
                label=k,
                hm0_m=4.0 * math.sqrt(m0),
                tp_s=float(1.0 / fp),
                peak_direction_deg=float(d_sorted[pk[1]] % 360.0),
                mean_direction_deg=mean_dir,
                spread_deg=spread,
                energy_fraction=m0 / tot if tot > 0 else 0.0,
                m0_m2=m0,
                wind_sea=wind_sea,
            )
        )
    return new, tuple(trains)


def partition_series(
    frequency_hz: ArrayLike,
    directions_deg: ArrayLike,
    efth: ArrayLike,
    *,
    min_energy_fraction: float = 0.02,
    min_peak_fraction: float = 0.01,
    noise_floor: float = 0.0,
    kappa: float = KAPPA,
    wind_speed_m_s: ArrayLike | None = None,
    wind_from_deg: ArrayLike | None = None,
    bandwidth_hz: ArrayLike | None = None,
    g: float = G,
) -> SeriesPartition:
    """Partition a series of spectra efth (nt, nf, nd) [m²/Hz/rad]; see the module docstring.

    The watershed runs on all steps at once; merging is per step (few partitions each).
    `wind_speed_m_s` / `wind_from_deg`: scalars or one per step, both or neither.
    """
    f, d, e = _grid_iv(frequency_hz, directions_deg, efth)
    if e.ndim != 3:
        raise InvalidInput(f"`efth` must be (nt, nf, nd), got shape {e.shape}")
    for name, v in (("min_energy_fraction", min_energy_fraction), ("min_peak_fraction", min_peak_fraction)):
        if not (math.isfinite(v) and 0 <= v < 1):
            raise InvalidInput(f"`{name}` must be within [0, 1), got {v!r}")
    if not (math.isfinite(noise_floor) and noise_floor >= 0):
        raise InvalidInput(f"`noise_floor` must be finite and >= 0, got {noise_floor!r}")
    if not (math.isfinite(kappa) and kappa >= 0):
        raise InvalidInput(f"`kappa` must be finite and >= 0, got {kappa!r}")
    nt = e.shape[0]
    wind = None
    if (wind_speed_m_s is None) != (wind_from_deg is None):
        raise InvalidInput("`wind_speed_m_s` and `wind_from_deg` go together: give both or neither")
    if wind_speed_m_s is not None:
        try:
            u = np.broadcast_to(np.asarray(wind_speed_m_s, dtype=float), (nt,))
            wdir = np.broadcast_to(np.asarray(wind_from_deg, dtype=float), (nt,))
        except ValueError:
            raise InvalidInput(f"`wind_speed_m_s` / `wind_from_deg` must be scalars or {nt} values") from None
        if not (np.all(np.isfinite(u)) and np.all(u >= 0) and np.all(np.isfinite(wdir))):
            raise InvalidInput("`wind_speed_m_s` must be finite and >= 0, `wind_from_deg` finite")
        wind = (u, wdir)

    wf = bin_widths(f) if bandwidth_hz is None else np.asarray(bandwidth_hz, dtype=float)
    if wf.shape != f.shape or not np.all(np.isfinite(wf) & (wf > 0)):
        raise InvalidInput(f"`bandwidth_hz` must be positive with the shape of `frequency_hz` {f.shape}")
    wd_all = direction_bin_widths(d)
    order = np.argsort(d % 360.0, kind="stable")
    ds = d[order]
    wd = wd_all[order]
    es = e[:, :, order]
    w = wf[:, None] * wd[None, :]
    fx = f[:, None] * np.cos(ds * DEG)[None, :]
    fy = f[:, None] * np.sin(ds * DEG)[None, :]

    roots = watershed(es)
    labels_sorted = np.empty(es.shape, dtype=np.int64)
    trains = []
    gmax = es.reshape(nt, -1).max(axis=1)
    for t in range(nt):
        lab = roots[t].reshape(f.size, d.size)
        floor = max(noise_floor, min_peak_fraction * gmax[t])
        lab = _merge_one(lab, es[t], w, fx, fy, floor, min_energy_fraction, kappa)
        wt = None if wind is None else (float(wind[0][t]), float(wind[1][t]))
        new, tr = _summaries(lab, es[t], f, ds, wf, wd, wt, g)
        labels_sorted[t] = new
        trains.append(tr)
    labels = np.empty_like(labels_sorted)
    labels[:, :, order] = labels_sorted
    return SeriesPartition(labels=labels, trains=tuple(trains))


def partition_spectrum(
    frequency_hz: ArrayLike,
    directions_deg: ArrayLike,
    efth: ArrayLike,
    *,
    wind_speed_m_s: float | None = None,
    wind_from_deg: float | None = None,
    **options: float,
) -> PartitionResult:
    """Partition one spectrum efth (nf, nd); options as for `partition_series`."""
    e = np.asarray(efth, dtype=float)
    if e.ndim != 2:
        raise InvalidInput(f"`efth` must be (nf, nd), got shape {e.shape}")
    r = partition_series(frequency_hz, directions_deg, e[None], wind_speed_m_s=wind_speed_m_s,
                         wind_from_deg=wind_from_deg, **options)
    return PartitionResult(labels=r.labels[0], trains=r.trains[0])
