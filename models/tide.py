"""Harmonic tide prediction with nodal corrections (docs/tide-wind.md §1).

    h(t) = Z0 + Σ_i f_i(t) H_i cos(V_i(t) + u_i(t) − g_i)

H_i, g_i: a constituent's amplitude and Greenwich phase lag (UTC), as tide tables publish them;
V_i: the equilibrium argument at Greenwich from the Doodson-type combination of the mean hour
angle of the sun T, and the mean longitudes of the moon s, sun h, lunar perigee p (Doodson 1921);
f_i, u_i: the nodal factor and angle from the moon's node N, with Schureman's (1958, "Manual of
Harmonic Analysis and Prediction of Tides", US C&GS Spec. Pub. 98) formulas in I, ν, ξ (also in
Pugh 1987, "Tides, Surges and Mean Sea-Level", ch. 4 and Table 4.3). The mean longitudes are the
polynomials of Meeus (1998, "Astronomical Algorithms", ch. 22 and 47; from memory, first order in
T is enough over centuries for tides). The tests compare predictions with `utide` (Codiga 2011),
which uses Foreman's (1977) satellite sums: an independent computation of the same corrections.

Times are seconds since 1970-01-01 UTC (or aware datetimes, `models.times.to_seconds`); UT is
used for TT (ΔT ≈ 70 s moves the moon by 0.01°, far below what matters for a tide).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any, NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.errors import InvalidInput
from models.times import to_seconds

__all__ = [
    "CONSTITUENTS",
    "Constituent",
    "TideExtremes",
    "astronomical_arguments",
    "nodal_corrections",
    "predict",
    "predict_rate",
    "tide_extremes",
]

_J2000_UNIX = 946_728_000.0  # 2000-01-01 12:00 UTC in seconds since 1970
_OMEGA = math.radians(23.452)  # obliquity of the ecliptic (Schureman's value)
_INCL = math.radians(5.145)  # inclination of the moon's orbit to the ecliptic


class Constituent(NamedTuple):
    """One harmonic constituent given as a tide table gives it."""

    name: str
    amplitude_m: float
    phase_deg: float  # Greenwich phase lag g (UTC)


# Doodson-type coefficients of V = a·T + b·s + c·h + d·p + phase (degrees) and the nodal family.
# T: mean solar hour angle at Greenwich (15°/h, 180° at 00 UT). Schureman (1958) Table 2;
# Pugh (1987) Table 4.2. Nodal families (Schureman eqs. 73-78, 215-235):
#   none (S2, P1, SSA); "M2": f = cos⁴(I/2)/0.9154, u = 2ξ − 2ν; "O1": f = sin I cos²(I/2)/0.3800,
#   u = 2ξ − ν; "K1": eq. 227 / ν' eq. 224; "K2": eq. 235 / 2ν'' eq. 232; compound tides multiply
#   their parents' f and add their u. Only constituents the tests check against utide are listed
#   (long-period and minor lunar ones, whose satellite sums differ most, are left out).
_TABLE: dict[str, tuple[tuple[int, int, int, int, float], tuple[tuple[str, int], ...]]] = {
    "M2": ((2, -2, 2, 0, 0.0), (("M2", 1),)),
    "S2": ((2, 0, 0, 0, 0.0), ()),
    "N2": ((2, -3, 2, 1, 0.0), (("M2", 1),)),
    "MU2": ((2, -4, 4, 0, 0.0), (("M2", 1),)),
    "NU2": ((2, -3, 4, -1, 0.0), (("M2", 1),)),
    "K2": ((2, 0, 2, 0, 0.0), (("K2", 1),)),
    "K1": ((1, 0, 1, 0, -90.0), (("K1", 1),)),
    "O1": ((1, -2, 1, 0, 90.0), (("O1", 1),)),
    "P1": ((1, 0, -1, 0, 90.0), ()),
    "Q1": ((1, -3, 1, 1, 90.0), (("O1", 1),)),
    "M4": ((4, -4, 4, 0, 0.0), (("M2", 2),)),
    "MS4": ((4, -2, 2, 0, 0.0), (("M2", 1),)),
    "MN4": ((4, -5, 4, 1, 0.0), (("M2", 2),)),
    "M6": ((6, -6, 6, 0, 0.0), (("M2", 3),)),
    "SSA": ((0, 0, 2, 0, 0.0), ()),
}
CONSTITUENTS = tuple(_TABLE)


def _speed_deg_h(name: str) -> float:
    """Angular speed [deg/h] from the rates of T, s, h, p (Meeus mean motions)."""
    a, b, c, d, _ = _TABLE[name][0]
    rate = np.array([15.0, 481267.88123421, 36000.76983, 4069.0137287]) / np.array(
        [1.0, 876600.0, 876600.0, 876600.0]
    )
    return float(a * rate[0] + b * rate[1] + c * rate[2] + d * rate[3])


def astronomical_arguments(seconds: ArrayLike) -> dict[str, NDArray[np.float64]]:
    """Mean hour angle of the sun T and mean longitudes s, h, p, N [deg] at `seconds` (UTC)."""
    t = np.asarray(seconds, dtype=float)
    cent = (t - _J2000_UNIX) / (86400.0 * 36525.0)
    return {
        "T": 180.0 + 15.0 * (np.mod(t, 86400.0) / 3600.0),
        "s": 218.3164477 + 481267.88123421 * cent,
        "h": 280.46646 + 36000.76983 * cent,
        "p": 83.3532465 + 4069.0137287 * cent,
        "N": 125.04452 - 1934.136261 * cent,
    }


def _inu_xi(n_deg: NDArray[np.float64]) -> tuple[NDArray[np.float64], ...]:
    """I (inclination of the moon's orbit to the equator), ν and ξ [rad] from the node N.

    Spherical triangle of equinox, node and the orbit's intersection with the equator
    (Schureman 1958 §§ 15-20), here by vectors in ecliptic coordinates so no quadrant is lost:
    ν = right ascension of the intersection, ξ = N − the arc from the intersection to the node.
    """
    n = np.radians(n_deg)
    si, ci = math.sin(_INCL), math.cos(_INCL)
    so, co = math.sin(_OMEGA), math.cos(_OMEGA)
    orbit = np.stack([si * np.sin(n), -si * np.cos(n), np.full_like(n, ci)])  # orbit pole
    pole = np.array([0.0, so, co])[:, None]  # celestial pole in ecliptic coordinates
    cos_i = np.clip(np.sum(orbit * pole, axis=0), -1.0, 1.0)
    cross = np.cross(pole.T, orbit.T).T  # ascending intersection of the orbit on the equator
    cross /= np.linalg.norm(cross, axis=0)
    nu = np.arctan2(cross[1] * co - cross[2] * so, cross[0])  # equatorial y = y cos ω − z sin ω
    node = np.stack([np.cos(n), np.sin(n), np.zeros_like(n)])
    arc = np.arctan2(np.sum(np.cross(cross.T, node.T).T * orbit, axis=0), np.sum(cross * node, axis=0))
    xi = np.mod(n - arc + np.pi, 2 * np.pi) - np.pi
    return np.arccos(cos_i), nu, xi


def nodal_corrections(
    seconds: ArrayLike, names: Sequence[str]
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """(f, u [deg]) with shape (len(names), len(seconds)): Schureman's (1958) nodal factors."""
    t = np.atleast_1d(np.asarray(seconds, dtype=float))
    inc, nu, xi = _inu_xi(astronomical_arguments(t)["N"])
    s2i, si2 = np.sin(2 * inc), np.sin(inc) ** 2
    nu1 = np.arctan2(s2i * np.sin(nu), s2i * np.cos(nu) + 0.3347)  # ν' (eq. 224)
    nu2x2 = np.arctan2(si2 * np.sin(2 * nu), si2 * np.cos(2 * nu) + 0.0727)  # 2ν'' (eq. 232)
    fam = {
        "M2": (np.cos(inc / 2) ** 4 / 0.9154, 2 * xi - 2 * nu),
        "O1": (np.sin(inc) * np.cos(inc / 2) ** 2 / 0.3800, 2 * xi - nu),
        "K1": (np.sqrt(0.8965 * s2i**2 + 0.6001 * s2i * np.cos(nu) + 0.1006), -nu1),
        "K2": (np.sqrt(19.0444 * si2**2 + 2.7702 * si2 * np.cos(2 * nu) + 0.0981), -nu2x2),
    }
    f = np.ones((len(names), t.size))
    u = np.zeros((len(names), t.size))
    for i, name in enumerate(names):
        for family, power in _TABLE[_key(name)][1]:
            ff, uu = fam[family]
            f[i] *= ff**power
            u[i] += power * uu
    return f, np.degrees(u)


def _key(name: str) -> str:
    key = name.strip().upper()
    if key not in _TABLE:
        raise InvalidInput(f"unknown tide constituent {name!r} (known: {', '.join(CONSTITUENTS)})")
    return key


def _check(constituents: Sequence[Constituent | tuple[Any, ...]]) -> list[Constituent]:
    out = []
    for i, c in enumerate(constituents):
        name, amp, phase = c
        _key(str(name))
        if not (math.isfinite(float(amp)) and float(amp) >= 0 and math.isfinite(float(phase))):
            raise InvalidInput(
                f"`constituents[{i}]` ({name}) needs a finite amplitude ≥ 0 and phase, got {amp!r}, {phase!r}"
            )
        out.append(Constituent(str(name), float(amp), float(phase)))
    return out


def _terms(seconds: NDArray[np.float64], cons: list[Constituent]) -> tuple[NDArray[np.float64], ...]:
    names = [c.name for c in cons]
    arg = astronomical_arguments(seconds)
    f, u = nodal_corrections(seconds, names)
    amp = np.array([c.amplitude_m for c in cons])[:, None]
    g = np.array([c.phase_deg for c in cons])[:, None]
    v = np.stack([a * arg["T"] + b * arg["s"] + c * arg["h"] + d * arg["p"] + ph
                  for a, b, c, d, ph in (_TABLE[_key(n)][0] for n in names)])  # fmt: skip
    speed = np.array([_speed_deg_h(n) for n in names])[:, None]
    return f * amp, np.radians(np.mod(v + u - g, 360.0)), np.radians(speed) / 3600.0


def predict(
    times: Sequence[Any] | ArrayLike,
    constituents: Sequence[Constituent | tuple[Any, ...]],
    *,
    mean_level_m: float = 0.0,
) -> NDArray[np.float64]:
    """Predicted water level [m] above the datum of `mean_level_m` at `times` (aware or seconds UTC)."""
    t, _ = to_seconds(times, "times", allow_empty=True)
    cons = _check(constituents)
    if not cons or t.size == 0:
        return np.full(t.size, float(mean_level_m))
    fa, phase, _ = _terms(t, cons)
    return float(mean_level_m) + np.sum(fa * np.cos(phase), axis=0)


def predict_rate(
    times: Sequence[Any] | ArrayLike, constituents: Sequence[Constituent | tuple[Any, ...]]
) -> NDArray[np.float64]:
    """dh/dt [m/s] of `predict` (f and u held: they change over years)."""
    t, _ = to_seconds(times, "times", allow_empty=True)
    cons = _check(constituents)
    if not cons or t.size == 0:
        return np.zeros(t.size)
    fa, phase, omega = _terms(t, cons)
    return -np.sum(fa * omega * np.sin(phase), axis=0)


class TideExtremes(NamedTuple):
    """High and low waters: times [s since 1970 UTC] and levels [m]."""

    high_times: NDArray[np.float64]
    high_levels: NDArray[np.float64]
    low_times: NDArray[np.float64]
    low_levels: NDArray[np.float64]


def tide_extremes(
    start_s: float,
    end_s: float,
    constituents: Sequence[Constituent | tuple[Any, ...]],
    *,
    mean_level_m: float = 0.0,
    step_s: float = 600.0,
) -> TideExtremes:
    """High and low waters in [start_s, end_s]: sign changes of dh/dt on a `step_s` grid, each
    refined by the secant on the rate (to well under a minute for `step_s` ≤ 30 min)."""
    if not (math.isfinite(start_s) and math.isfinite(end_s) and end_s > start_s and step_s > 0):
        raise InvalidInput(
            f"`start_s` < `end_s` and `step_s` > 0 required, got {start_s!r}, {end_s!r}, {step_s!r}"
        )
    cons = _check(constituents)
    empty = np.empty(0)
    if not cons:
        return TideExtremes(empty, empty, empty, empty)
    grid = np.arange(start_s, end_s + step_s, step_s)
    rate = predict_rate(grid, cons)
    idx = np.nonzero(np.sign(rate[:-1]) * np.sign(rate[1:]) < 0)[0]
    r0, r1 = rate[idx], rate[idx + 1]
    te = grid[idx] + step_s * r0 / (r0 - r1)
    for _ in range(2):  # secant refinement on the rate
        rt = predict_rate(te, cons)
        dt = 60.0
        slope = (predict_rate(te + dt, cons) - rt) / dt
        te = te - np.where(slope != 0, rt / np.where(slope != 0, slope, 1.0), 0.0)
    keep = (te >= start_s) & (te <= end_s)
    te, high = te[keep], (r0 > 0)[keep]
    level = predict(te, cons, mean_level_m=mean_level_m)
    return TideExtremes(te[high], level[high], te[~high], level[~high])
