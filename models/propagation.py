"""Swell arrival from an upstream station: deep-water group-velocity delay per spectral component.

A component of frequency f travelling TOWARD direction φ (nautical FROM direction + 180°) that a
station sees at time t reaches a spot displaced by the vector d from the station at
t + (d · ê_φ) / Cg(f), with deep-water Cg = g/(4π f) = gT/(4π) (Munk 1947; Snodgrass et al. 1966,
who used great-circle distances). The delay is signed: with d · ê_φ < 0 the component passes the spot
first (the station is downstream), so the spot at t sees what the station sees at t + |Δt| — a
hindcast from later observations, available only once they are made. Long periods travel faster.

Distances: `great_circle_distance` is the haversine formula on a sphere of radius
`EARTH_MEAN_RADIUS_M` = 6 371 008.8 m (IUGG mean radius R1, from memory); the sphere differs from
the ellipsoid by up to about 0.5 %. The projection uses the initial great-circle bearing at the
station, i.e. the station's tangent plane: fine while the path is short compared with the Earth's
radius (the typical upstream buoy a few hundred km off), increasingly approximate beyond.

Times are seconds (any epoch) or timezone-aware datetimes; outputs keep the caller's time type.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any, NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.constants import DEG, G
from models.errors import InvalidInput
from models.times import to_seconds

__all__ = [
    "EARTH_MEAN_RADIUS_M",
    "SpotArrival",
    "arrival_delay",
    "deep_group_speed",
    "great_circle_distance",
    "initial_bearing",
    "shift_to_spot",
]

EARTH_MEAN_RADIUS_M = 6_371_008.8  # IUGG mean radius R1 (from memory)


def _finite(x: ArrayLike, name: str) -> NDArray[np.float64]:
    a = np.asarray(x, dtype=float)
    if not np.all(np.isfinite(a)):
        raise InvalidInput(f"`{name}` must be finite, got {a[~np.isfinite(a)].ravel()[0]!r}")
    return a


def _latlon(lat: ArrayLike, lon: ArrayLike, which: str) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    la = _finite(lat, f"lat{which}")
    lo = _finite(lon, f"lon{which}")
    if np.any(np.abs(la) > 90):
        raise InvalidInput(f"`lat{which}` must be within [-90, 90] degrees, got {la[np.abs(la) > 90].ravel()[0]!r}")
    return la * DEG, lo * DEG


def great_circle_distance(
    lat1: ArrayLike, lon1: ArrayLike, lat2: ArrayLike, lon2: ArrayLike, *, radius: float = EARTH_MEAN_RADIUS_M
) -> NDArray[np.float64]:
    """Haversine great-circle distance [m] between points given in degrees (sphere of `radius`)."""
    p1, l1 = _latlon(lat1, lon1, "1")
    p2, l2 = _latlon(lat2, lon2, "2")
    a = np.sin((p2 - p1) / 2) ** 2 + np.cos(p1) * np.cos(p2) * np.sin((l2 - l1) / 2) ** 2
    a = np.clip(a, 0.0, 1.0)
    # atan2 form: keeps precision near the antipode, where arcsin(sqrt(a)) loses it
    return 2.0 * radius * np.arctan2(np.sqrt(a), np.sqrt(1.0 - a))


def initial_bearing(lat1: ArrayLike, lon1: ArrayLike, lat2: ArrayLike, lon2: ArrayLike) -> NDArray[np.float64]:
    """Initial great-circle bearing from point 1 to point 2, degrees clockwise from north in [0, 360)."""
    p1, l1 = _latlon(lat1, lon1, "1")
    p2, l2 = _latlon(lat2, lon2, "2")
    dl = l2 - l1
    y = np.sin(dl) * np.cos(p2)
    x = np.cos(p1) * np.sin(p2) - np.sin(p1) * np.cos(p2) * np.cos(dl)
    return np.mod(np.degrees(np.arctan2(y, x)), 360.0)


def deep_group_speed(frequency_hz: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Deep-water group speed Cg = g / (4π f) [m/s]."""
    f = _finite(frequency_hz, "frequency_hz")
    if np.any(f <= 0):
        raise InvalidInput(f"`frequency_hz` must be positive, got {f[f <= 0].ravel()[0]!r}")
    return g / (4.0 * math.pi * f)


def arrival_delay(
    frequency_hz: ArrayLike,
    directions_deg: ArrayLike,
    *,
    distance_m: float,
    bearing_deg: float,
    g: float = G,
) -> NDArray[np.float64]:
    """Delay [s] from station to spot per component, shape (nf, nd).

    `directions_deg` are nautical FROM directions; `bearing_deg` is the direction from the station
    to the spot (clockwise from north) and `distance_m` its length. The delay is signed: negative
    where the component passes the spot before the station (projection < 0).
    """
    f = np.atleast_1d(_finite(frequency_hz, "frequency_hz"))
    d = np.atleast_1d(_finite(directions_deg, "directions_deg"))
    if f.ndim != 1 or d.ndim != 1:
        raise InvalidInput("`frequency_hz` and `directions_deg` must be 1-D")
    if not (math.isfinite(distance_m) and distance_m >= 0):
        raise InvalidInput(f"`distance_m` must be finite and >= 0, got {distance_m!r}")
    if not math.isfinite(bearing_deg):
        raise InvalidInput(f"`bearing_deg` must be finite, got {bearing_deg!r}")
    cg = deep_group_speed(f, g=g)
    # travel TOWARD from+180; projection of the station->spot vector on that direction
    along = distance_m * np.cos((d + 180.0 - bearing_deg) * DEG)
    along = np.where(np.abs(along) < 1e-9 * max(distance_m, 1.0), 0.0, along)  # exact 90°: passes by
    return along[None, :] / cg[:, None]


class SpotArrival(NamedTuple):
    """Station spectra carried to the spot on the requested time grid.

    efth[k, i, j] is the spot spectrum at target_times[k] (m²/Hz/rad, the station's units), zero where
    the station's time for it (target − delay) lies outside the observations.
    """

    times: list[Any]  # the requested target times, as given
    efth: NDArray[np.float64]  # (nt_out, nf, nd)
    delay_s: NDArray[np.float64]  # (nf, nd) signed: < 0 where the spot sees the component first
    available: NDArray[np.bool_]  # (nt_out, nf, nd): station time inside the observation span
    source_position: NDArray[np.float64]  # (nt_out, nf, nd) fractional observation index; -1 if unavailable
    first_observation: NDArray[np.int64]  # (nt_out,) earliest observation index used (-1: none)
    last_observation: NDArray[np.int64]  # (nt_out,) latest observation index used (-1: none)
    dominant_observation: NDArray[np.int64]  # (nt_out,) observation nearest the most energetic component
    coverage: NDArray[np.float64]  # (nt_out,) fraction of (f, θ) cells available
    awaiting: NDArray[np.bool_]  # (nt_out,) some component needs a station time after the last observation
    # (nt_out,) energy-weighted coverage: the share of the latest observation's energy (E Δf over every
    # component, upstream and downstream alike) in the cells available at each target time
    energy_coverage: NDArray[np.float64]


def shift_to_spot(
    times: Sequence[Any],
    frequency_hz: ArrayLike,
    directions_deg: ArrayLike,
    efth: ArrayLike,
    *,
    distance_m: float,
    bearing_deg: float,
    target_times: Sequence[Any],
    g: float = G,
) -> SpotArrival:
    """Turn station observations (nt, nf, nd) into spectra at the spot at `target_times`.

    For each component the spot at time τ sees what the station saw at τ − delay(f, θ) (later than τ
    when the delay is negative: the station is downstream); that value is interpolated linearly
    between the two bracketing observations (in time). Outside the observed span the component is
    unavailable (zero energy, ``available`` False) — it is not extrapolated.
    """
    ts, _ = to_seconds(times, "times", allow_empty=True)
    tt, t_items = to_seconds(target_times, "target_times", allow_empty=True)
    if ts.size == 0:
        raise InvalidInput("`times` must not be empty")
    if np.any(np.diff(ts) <= 0):
        i = int(np.argmax(np.diff(ts) <= 0)) + 1
        raise InvalidInput(f"`times` must be strictly ascending; `times[{i}]` is not after `times[{i - 1}]`")
    e = np.asarray(efth, dtype=float)
    delay = arrival_delay(frequency_hz, directions_deg, distance_m=distance_m, bearing_deg=bearing_deg, g=g)
    nf, nd = delay.shape
    if e.shape != (ts.size, nf, nd):
        raise InvalidInput(f"`efth` must have shape (n_times, nf, nd) = ({ts.size}, {nf}, {nd}), got {e.shape}")
    bad = ~np.isfinite(e) | (e < 0)
    if np.any(bad):
        idx = tuple(int(i) for i in np.argwhere(bad)[0])
        raise InvalidInput(f"`efth` must be finite and >= 0, got {e[idx]!r} at index {idx}")

    emit = tt[:, None, None] - delay[None, :, :]  # the station's time for the component (signed delay)
    arriving = np.isfinite(delay)  # every component: upstream and downstream
    # exact float comparison at the ends: an emission time equal to an observation time is available
    available = arriving[None] & (emit >= ts[0]) & (emit <= ts[-1])
    if ts.size == 1:
        pos = np.where(available, 0.0, -1.0)
    else:
        with np.errstate(invalid="ignore"):
            pos = np.interp(np.where(available, emit, ts[0]).ravel(), ts, np.arange(ts.size, dtype=float))
        pos = np.where(available, pos.reshape(emit.shape), -1.0)
    i0 = np.clip(np.floor(pos), 0, ts.size - 1).astype(np.int64)
    i1 = np.minimum(i0 + 1, ts.size - 1)
    w = np.where(available, pos - i0, 0.0)
    jj, kk = np.meshgrid(np.arange(nf), np.arange(nd), indexing="ij")
    out = (1.0 - w) * e[i0, jj[None], kk[None]] + w * e[i1, jj[None], kk[None]]
    out = np.where(available, out, 0.0)

    n_arr = max(int(arriving.sum()), 1)
    flat_av = available.reshape(tt.size, -1)
    flat_pos = pos.reshape(tt.size, -1)
    any_av = flat_av.any(axis=1)
    first = np.where(any_av, np.floor(np.where(flat_av, flat_pos, np.inf).min(axis=1, initial=np.inf)), -1)
    last = np.where(any_av, np.ceil(np.where(flat_av, flat_pos, -np.inf).max(axis=1, initial=-np.inf)), -1)
    dom_cell = np.argmax(np.where(flat_av, out.reshape(tt.size, -1), -1.0), axis=1)
    dominant = np.where(any_av, np.rint(flat_pos[np.arange(tt.size), dom_cell]), -1)
    return SpotArrival(
        times=t_items,
        efth=out,
        delay_s=delay,
        available=available,
        source_position=pos,
        first_observation=first.astype(np.int64),
        last_observation=last.astype(np.int64),
        dominant_observation=dominant.astype(np.int64),
        coverage=flat_av.sum(axis=1) / n_arr,
        awaiting=np.any(arriving[None] & (emit > ts[-1]), axis=(1, 2)),
        energy_coverage=_energy_coverage(frequency_hz, e[-1], arriving, available),
    )


def _energy_coverage(frequency_hz: ArrayLike, latest: NDArray[np.float64], arriving, available):  # type: ignore[no-untyped-def]
    """Σ_available E Δf / Σ_arriving E Δf with E the latest observation (directions: equal weight)."""
    f = np.asarray(frequency_hz, dtype=float).ravel()
    if f.size > 1:
        d = np.diff(f)
        df = np.concatenate(([d[0]], 0.5 * (d[1:] + d[:-1]), [d[-1]]))
    else:
        df = np.ones(1)
    cell = latest * df[:, None]
    total = float(np.sum(np.where(arriving, cell, 0.0)))
    if not total > 0:
        return np.zeros(available.shape[0])
    return np.sum(np.where(available, cell[None], 0.0), axis=(1, 2)) / total
