"""Many transfer tables applied to one input's spectra at once: nearshore Hm0, Tp, mean direction, Tm02.

`models.transfer.apply` is E_near(f) = Σ_j E(f, θ_j) W[f, j] plus the energy-weighted direction
vector Σ_j E (Wx, Wy)[f, j] (math frame, x east), with W = Δθ0 K²(f) A and
(Wx, Wy) = Δθ0 K²(f) (cos, sin)(β_near) A, A the periodic linear interpolation from the spectrum's
directions to the table's bins. Here W, Wx, Wy are built once per (table, spectral grid) and
memoised (`transfer_weights`), and a chunk of tables is applied to every step and swell train of
an input with one matrix product per frequency (`nearshore_many`).
"""

from __future__ import annotations

import math
import weakref
from collections.abc import Sequence
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
from numpy.typing import NDArray

from models.spectra import bin_widths
from models.transfer import TransferTable, _direction_matrix


@dataclass(frozen=True)
class TransferWeights:
    """A table's application on one spectral grid, precomputed (same maths as `apply`)."""

    wt: NDArray[np.float64]  # (nf, nd_spec, 3): W, Wx, Wy last, as `nearshore_many` stacks them

    @property
    def w(self) -> NDArray[np.float64]:
        """(3, nf, nd_spec): W, Wx, Wy."""
        return self.wt.transpose(2, 0, 1)


_WEIGHTS: weakref.WeakKeyDictionary[TransferTable, dict[tuple[bytes, bytes], TransferWeights]] = (
    weakref.WeakKeyDictionary()
)


def interp_matrix(x: NDArray[np.float64], xp: NDArray[np.float64]) -> NDArray[np.float64]:
    """B[i, k] such that B @ fp = np.interp(x, xp, fp) (ascending xp, clamped at the ends)."""
    B = np.zeros((x.size, xp.size))
    if xp.size == 1:
        B[:, 0] = 1.0
        return B
    xc = np.clip(x, xp[0], xp[-1])
    i = np.clip(np.searchsorted(xp, xc, side="right") - 1, 0, xp.size - 2)
    t = (xc - xp[i]) / (xp[i + 1] - xp[i])
    rows = np.arange(x.size)
    np.add.at(B, (rows, i), 1.0 - t)
    np.add.at(B, (rows, i + 1), t)
    return B


def transfer_weights(
    table: TransferTable, frequency_hz: NDArray[np.float64], directions_deg: NDArray[np.float64]
) -> TransferWeights:
    """The (memoised) weights of `table` on the spectral grid (frequency_hz, directions_deg)."""
    f = np.ascontiguousarray(frequency_hz, dtype=float)
    d = np.ascontiguousarray(directions_deg, dtype=float)
    per = _WEIGHTS.setdefault(table, {})
    key = (f.tobytes(), d.tobytes())
    if key not in per:
        tf = 1.0 / table.periods_s[::-1]  # ascending table frequencies, as in `apply`
        k2 = (table.coefficient**2)[::-1]
        nb = np.radians(90.0 - np.nan_to_num(table.nearshore_direction_deg[::-1], nan=0.0))
        B = interp_matrix(f, tf)  # (nf, np): linear in frequency, clamped
        A = _direction_matrix(d, table.directions_deg)  # (nd_table, nd_spec)
        dth = math.radians(table.direction_bin_deg)
        w = np.stack([B @ k2, B @ (k2 * np.cos(nb)), B @ (k2 * np.sin(nb))])  # (3, nf, nd_table)
        per[key] = TransferWeights(wt=np.ascontiguousarray((dth * (w @ A)).transpose(1, 2, 0)))
    return per[key]


class Nearshore(NamedTuple):
    """Per table (P), step (T) and spectrum (1 + K: whole, then trains) at the reference depth."""

    hs: NDArray[np.float64]  # (P, T, 1 + K) Hm0
    tp: NDArray[np.float64]  # (P, T, 1 + K) peak period, NaN where empty
    direction: NDArray[np.float64]  # (P, T, 1 + K) mean FROM direction, NaN where empty
    tm02: NDArray[np.float64]  # (P, T) of the whole spectrum, NaN where empty


CHUNK_TABLES = 16  # tables per matrix product: its (nf, T·K, 3·tables) product stays in cache (16 was
# fastest of 8..128 on 1,000 tables, bench/bench_outlook.py; 128 took 1.5x as long)


def nearshore_many(
    frequency: NDArray[np.float64],
    directions: NDArray[np.float64],
    stack: NDArray[np.float64],
    tables: Sequence[TransferTable],
) -> Nearshore:
    """Nearshore Hm0, Tp, mean direction (per whole spectrum and train) and Tm02 of the whole
    spectrum for every table, from `stack` (T, 1 + K, nf, nd) on the grid (frequency, directions)."""
    f = np.asarray(frequency, dtype=float)
    nt, nk, nf, nd = stack.shape
    P = len(tables)
    E = np.ascontiguousarray(stack.reshape(nt * nk, nf, nd).transpose(1, 0, 2))  # (nf, T·K, nd)
    widths = bin_widths(f)
    hs = np.zeros((P, nt, nk))
    tp = np.full((P, nt, nk), np.nan)
    dr = np.full((P, nt, nk), np.nan)
    tm02 = np.full((P, nt), np.nan)
    M = nt * nk
    fw = f**2 * widths
    for c0 in range(0, P, CHUNK_TABLES):
        chunk = tables[c0 : c0 + CHUNK_TABLES]
        n = len(chunk)
        W = np.stack([transfer_weights(t, f, directions).wt for t in chunk], axis=-1)  # (nf, nd, 3, n)
        R = np.matmul(E, W.reshape(nf, nd, 3 * n)).reshape(nf, M, 3, n)
        dens, vx, vy = R[:, :, 0], R[:, :, 1], R[:, :, 2]  # (nf, T·K, n): f first, reduced along axis 0
        sl = slice(c0, c0 + n)
        m0 = np.einsum("f,fmn->nm", widths, dens)  # (n, T·K)
        hs[sl] = (4.0 * np.sqrt(np.maximum(m0, 0.0))).reshape(n, nt, nk)
        ok = dens.max(axis=0) > 0
        peak = np.where(ok, 1.0 / f[np.argmax(dens, axis=0)], np.nan)  # (T·K, n)
        tp[sl] = peak.T.reshape(n, nt, nk)
        # energy-weighted circular mean of the per-frequency mean directions (unit vectors, FROM):
        # Σ E·(vx, vy)/|v| over the frequencies with energy; a zero vector counts as math angle 0
        # (arctan2(0, 0) = 0 in `apply`), i.e. the unit vector (1, 0)
        d = np.maximum(dens, 0.0)
        r2 = vx * vx + vy * vy  # |v|² (np.hypot is several times slower; no overflow at these scales)
        has = r2 > 0
        with np.errstate(invalid="ignore", divide="ignore"):
            q = d / np.sqrt(r2)
        # (sin, cos) of the nautical angle 90° - φ are (cos φ, sin φ) = (ux, uy)
        sx = np.where(has, q * vx, d).sum(axis=0)
        sy = np.where(has, q * vy, 0.0).sum(axis=0)
        mean = np.where(ok, np.degrees(np.arctan2(sx, sy)) % 360.0, np.nan)
        dr[sl] = mean.T.reshape(n, nt, nk)
        m2 = np.einsum("f,ftn->nt", fw, dens.reshape(nf, nt, nk, n)[:, :, 0])  # whole spectrum only
        m00 = m0.reshape(n, nt, nk)[:, :, 0]
        good = (m00 > 0) & (m2 > 0)
        with np.errstate(invalid="ignore", divide="ignore"):
            tm02[sl] = np.where(good, np.sqrt(m00 / m2), np.nan)
    return Nearshore(hs, tp, dr, tm02)


__all__ = ["CHUNK_TABLES", "Nearshore", "TransferWeights", "interp_matrix", "nearshore_many", "transfer_weights"]
