"""Depth-limited breaking of regular waves: breaker indices, breaker type, and shoaling with
refraction over straight parallel contours up to the break point.

Heights [m], depths [m] (positive), periods [s], slopes tan β [-], angles [deg] to the contour
normal. Formulas are the published ones with their published coefficients; `g` defaults to
models.constants.G.

References
----------
McCowan, J. (1894) On the highest wave of permanent type. Phil. Mag. 38, 351-358.
Miche, R. (1944) Mouvements ondulatoires de la mer en profondeur constante ou décroissante.
Weggel, J.R. (1972) Maximum breaker height. J. Waterways Harbors Coastal Eng. Div. 98(WW4), 529-548;
    as SPM (1984) eqs 2-92 to 2-94.
Komar, P.D. & Gaudiano, M.K. (1975) Proc. 14th ICCE (from memory; breaker height Hb = 0.39 g^(1/5) (T H0²)^(2/5)).
Goda, Y. (1970) A synthesis of breaker indices. Trans. JSCE 2, 227-230.
Battjes, J.A. (1974) Surf similarity. Proc. 14th ICCE, 466-480.
Battjes, J.A. & Janssen, J.P.F.M. (1978) Energy loss and set-up due to breaking of random waves.
    Proc. 16th ICCE, 569-587.
Battjes, J.A. & Stive, M.J.F. (1985) Calibration and verification of a dissipation model for
    random breaking waves. J. Geophys. Res. 90(C5), 9159-9167.
Douglass, S.L. (1990) Influence of wind on breaking waves. J. Waterway Port Coastal Ocean Eng.
    116(6), 651-663 (laboratory; the direction of the effect, see `breaker_type_in_wind`).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.constants import DEG, RHO_SEAWATER, TWO_PI, G
from models.errors import ConvergenceError, InvalidInput
from models.waves import deep_wavelength, group_velocity, phase_speed, shoaling_coefficient, wavenumber

__all__ = [
    "BreakingResult",
    "battjes_janssen_fraction",
    "battjes_stive_gamma",
    "breaker_type",
    "breaker_type_in_wind",
    "breaking_crest_speed",
    "goda_breaker_height",
    "iribarren",
    "komar_gaudiano",
    "ShoaledWave",
    "mccowan",
    "miche_limit",
    "refract_and_shoal",
    "shoal_to_breaking",
    "wave_power",
    "weggel_breaker_depth",
    "weggel_breaker_height",
    "weggel_coefficients",
    "wind_spilling_limit",
]

MCCOWAN_INDEX = 0.78
_MAX_SLOPE = 0.5  # accepted; Weggel's fit was made for m <= 0.1 (SPM 1984)


def _arr(value: ArrayLike, name: str, unit: str, *, allow_zero: bool = False) -> NDArray[np.float64]:
    a = np.asarray(value, dtype=float)
    ok = np.isfinite(a) & ((a >= 0) if allow_zero else (a > 0))
    if not ok.all():
        bad = a[~ok].ravel()[0]
        sign = "non-negative" if allow_zero else "positive"
        raise InvalidInput(f"`{name}` must be {sign} and finite [{unit}], got {bad!r}")
    return a


def _slope(slope: ArrayLike) -> NDArray[np.float64]:
    m = _arr(slope, "slope", "tan β")
    if np.any(m > _MAX_SLOPE):
        raise InvalidInput(f"`slope` must be <= {_MAX_SLOPE} (tan β), got {m.max()!r}")
    return m


# --------------------------------------------------------------------------- breaker indices


def mccowan(depth: ArrayLike, *, index: float = MCCOWAN_INDEX) -> NDArray[np.float64]:
    """Breaker height Hb = 0.78 h [m] (McCowan 1894 solitary-wave limit)."""
    return index * _arr(depth, "depth", "m")


def miche_limit(period: ArrayLike, depth: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Limiting height Hmax = 0.142 L tanh(kh) [m] (Miche 1944); ≈ L0/7 in deep water."""
    T = _arr(period, "period", "s")
    h = np.asarray(depth, dtype=float)
    k = wavenumber(1.0 / T, h, g=g)
    return 0.142 * TWO_PI / k * np.tanh(np.minimum(k * h, 350.0))


def weggel_coefficients(slope: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Weggel (1972) a = 43.8(1 - e^(-19 m)), b = 1.56/(1 + e^(-19.5 m)) (SPM 1984 eqs 2-93, 2-94)."""
    m = np.asarray(slope, dtype=float)
    if not (np.isfinite(m).all() and np.all(m >= 0) and np.all(m <= _MAX_SLOPE)):
        raise InvalidInput(f"`slope` must be in [0, {_MAX_SLOPE}] (tan β), got {slope!r}")
    return 43.8 * (1.0 - np.exp(-19.0 * m)), 1.56 / (1.0 + np.exp(-19.5 * m))


def weggel_breaker_depth(hb: ArrayLike, period: ArrayLike, slope: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Breaking depth db [m] for breaker height hb: db = hb / (b - a hb/(g T²)) (SPM 1984 eq. 2-92)."""
    H = _arr(hb, "hb", "m")
    T = _arr(period, "period", "s")
    a, b = weggel_coefficients(_slope(slope))
    gamma = b - a * H / (g * T**2)
    if np.any(gamma <= 0):
        raise InvalidInput("`hb` too steep for Weggel's index (b - a Hb/(gT²) <= 0)")
    return H / gamma


def weggel_breaker_height(db: ArrayLike, period: ArrayLike, slope: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Breaker height Hb [m] at depth db: Hb = b db / (1 + a db/(g T²)), the exact inverse of
    `weggel_breaker_depth`."""
    d = _arr(db, "db", "m")
    T = _arr(period, "period", "s")
    a, b = weggel_coefficients(_slope(slope))
    return b * d / (1.0 + a * d / (g * T**2))


def komar_gaudiano(h0: ArrayLike, period: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Breaker height Hb = 0.39 g^(1/5) (T H0²)^(2/5) [m] (Komar & Gaudiano 1975), H0 the
    (unrefracted equivalent) deep-water height."""
    H0 = _arr(h0, "h0", "m")
    T = _arr(period, "period", "s")
    return 0.39 * g**0.2 * (T * H0**2) ** 0.4


def goda_breaker_height(
    depth: ArrayLike, period: ArrayLike, slope: ArrayLike, *, A: float = 0.17, g: float = G
) -> NDArray[np.float64]:
    """Goda (1970) breaker index Hb = A L0 {1 - exp[-1.5 π (h/L0)(1 + 15 m^(4/3))]} [m].

    A = 0.17 for regular waves (about 0.12 for the significant wave of random seas, from memory).
    """
    h = _arr(depth, "depth", "m")
    m = _slope(slope)
    if not (np.isfinite(A) and A > 0):
        raise InvalidInput(f"`A` must be positive, got {A!r}")
    L0 = deep_wavelength(_arr(period, "period", "s"), g=g)
    return A * L0 * -np.expm1(-1.5 * np.pi * (h / L0) * (1.0 + 15.0 * m ** (4.0 / 3.0)))


def battjes_janssen_fraction(hrms: ArrayLike, hmax: ArrayLike) -> NDArray[np.float64]:
    """Fraction of breaking waves Qb from (1 - Qb)/ln Qb = -(Hrms/Hm)² (Battjes & Janssen 1978).

    Qb = 0 for Hrms = 0 and 1 for Hrms >= Hm. Solved in u = ln Qb by Newton: G(u) = 1 - e^u + b² u
    is concave, so from the start u = -1/b² (G < 0) the iterates rise monotonically to the root.
    """
    hr = _arr(hrms, "hrms", "m", allow_zero=True)
    hm = _arr(hmax, "hmax", "m")
    b2 = np.asarray((hr / hm) ** 2, dtype=float)
    out = np.where(b2 >= 1.0, 1.0, 0.0)
    mid = (b2 > 0) & (b2 < 1.0)
    if np.any(mid):
        c = b2[mid]
        u = -1.0 / c
        for _ in range(100):
            eu = np.exp(u)
            step = (1.0 - eu + c * u) / (c - eu)
            u = u - step
            if np.all(np.abs(step) <= 1e-13 * np.maximum(1.0, np.abs(u))):
                break
        else:
            raise ConvergenceError("battjes_janssen_fraction: Newton did not converge")
        out[mid] = np.exp(u)
    return out if out.ndim else out[()]


def battjes_stive_gamma(s0: ArrayLike) -> NDArray[np.float64]:
    """Breaker parameter γ = 0.5 + 0.4 tanh(33 s0), s0 = H0,rms/L0 (Battjes & Stive 1985)."""
    return 0.5 + 0.4 * np.tanh(33.0 * _arr(s0, "s0", "-", allow_zero=True))


# --------------------------------------------------------------------------- surf similarity


def iribarren(slope: ArrayLike, height: ArrayLike, period: ArrayLike, *, g: float = G) -> NDArray[np.float64]:
    """Surf-similarity (Iribarren) number ξ = tan β / √(H/L0) (Battjes 1974)."""
    m = _arr(slope, "slope", "tan β")
    H = _arr(height, "height", "m")
    return m / np.sqrt(H / deep_wavelength(_arr(period, "period", "s"), g=g))


_THRESHOLDS = {"breaking": (0.4, 2.0), "offshore": (0.5, 3.3)}


def breaker_type(xi: ArrayLike, *, at: str = "breaking") -> NDArray[np.str_]:
    """Breaker type from the Iribarren number (Battjes 1974): "spilling", "plunging" or
    "collapsing" (collapsing or surging).

    ``at="breaking"`` for ξb (H = Hb): spilling < 0.4 <= plunging < 2.0 <= collapsing;
    ``at="offshore"`` for ξ0 (H = H0): thresholds 0.5 and 3.3.
    Returns an array of strings (0-d for scalar input; ``str()`` it).
    """
    if at not in _THRESHOLDS:
        raise InvalidInput(f"`at` must be 'breaking' or 'offshore', got {at!r}")
    x = _arr(xi, "xi", "-")
    lo, hi = _THRESHOLDS[at]
    return np.where(x < lo, "spilling", np.where(x < hi, "plunging", "collapsing"))


# Wind and breaker type. Douglass (1990) found in the laboratory that onshore wind makes waves
# break earlier (in deeper water) and spill, and offshore wind holds them up (shallower) and makes
# them plunge. We keep the direction and apply it as a modest shift of the spilling/plunging
# boundary ξb = 0.4 (Battjes 1974): the boundary is multiplied by 1 + WIND_XI_SHIFT · u/WIND_REF_M_S,
# u the onshore wind component clipped to ±WIND_REF_M_S. The size of the shift is OURS (a
# labelled adjustment; the paper's numbers are not reproduced here, from memory only the
# direction), and the plunging/collapsing boundary and every height and depth are left alone.
WIND_XI_SHIFT = 0.25  # at WIND_REF_M_S of onshore (offshore) wind: boundary 0.5 (0.3)
WIND_REF_M_S = 10.0


def wind_spilling_limit(onshore_m_s: ArrayLike) -> NDArray[np.float64]:
    """The spilling/plunging boundary on ξb with an onshore wind component [m/s] (positive onshore,
    negative offshore; NaN = no wind: 0.4, Battjes 1974)."""
    u = np.asarray(onshore_m_s, dtype=float)
    if np.any(np.isinf(u)):
        raise InvalidInput("`onshore_m_s` must be finite (NaN: no wind)")
    lo = _THRESHOLDS["breaking"][0]
    shift = np.clip(np.nan_to_num(u, nan=0.0) / WIND_REF_M_S, -1.0, 1.0)
    return lo * (1.0 + WIND_XI_SHIFT * shift)


def breaker_type_in_wind(xi: ArrayLike, onshore_m_s: ArrayLike) -> NDArray[np.str_]:
    """`breaker_type` of ξb with the spilling/plunging boundary moved by the wind
    (`wind_spilling_limit`): onshore wind never gives a more plunging type than still air,
    offshore wind never a more spilling one; NaN wind gives `breaker_type` exactly."""
    x = _arr(xi, "xi", "-")
    lo = wind_spilling_limit(onshore_m_s)
    hi = _THRESHOLDS["breaking"][1]
    return np.where(x < lo, "spilling", np.where(x < hi, "plunging", "collapsing"))


# --------------------------------------------------------------------------- energy flux


def wave_power(
    height: ArrayLike,
    period: ArrayLike,
    *,
    depth: ArrayLike = np.inf,
    kind: str = "regular",
    rho: float = RHO_SEAWATER,
    g: float = G,
) -> NDArray[np.float64]:
    """Energy flux per metre of crest P = E Cg [W/m].

    ``kind="regular"``: height H of a regular wave, E = ρ g H²/8, Cg at 1/period.
    ``kind="spectral"``: height Hm0 and period Te (energy period), E = ρ g Hm0²/16; in deep water
    P = ρ g² Hm0² Te / (64 π).
    """
    if kind == "regular":
        factor = 1.0 / 8.0
    elif kind == "spectral":
        factor = 1.0 / 16.0
    else:
        raise InvalidInput(f"`kind` must be 'regular' or 'spectral', got {kind!r}")
    H = _arr(height, "height", "m", allow_zero=True)
    T = _arr(period, "period", "s")
    return factor * rho * g * H**2 * group_velocity(1.0 / T, depth, g=g)


def breaking_crest_speed(depth: ArrayLike, *, period: ArrayLike | None = None, g: float = G) -> NDArray[np.float64]:
    """Crest speed at breaking Cb [m/s]: √(g hb) (shallow-water form, the usual choice for peel
    rates), or the linear phase speed at hb when `period` is given."""
    h = _arr(depth, "depth", "m")
    if period is None:
        return np.sqrt(g * h)
    return phase_speed(1.0 / _arr(period, "period", "s"), h, g=g)


# --------------------------------------------------------------------------- march to breaking


class ShoaledWave(NamedTuple):
    """Height [m] and ray angle to the contour normal [deg] at the target depth."""

    height: NDArray[np.float64]
    angle_deg: NDArray[np.float64]


def refract_and_shoal(
    height: ArrayLike,
    period: ArrayLike,
    angle_deg: ArrayLike,
    from_depth: ArrayLike,
    to_depth: ArrayLike,
    *,
    g: float = G,
) -> ShoaledWave:
    """Carry a wave from `from_depth` (``np.inf`` for deep water) to `to_depth` over straight
    parallel contours: Snell (sin θ / C const) and energy flux, H2 = H1 Ks Kr with
    Ks = √(Cg1/Cg2), Kr = √(cos θ1 / cos θ2). No breaking is applied.

    Raises `InvalidInput` where the ray would turn past 90° (going seaward, the wave is trapped
    before reaching `to_depth`).
    """
    H1 = _arr(height, "height", "m", allow_zero=True)
    T = _arr(period, "period", "s")
    th = np.asarray(angle_deg, dtype=float)
    if not (np.isfinite(th).all() and np.all(np.abs(th) < 90.0)):
        raise InvalidInput(f"`angle_deg` must be finite with |angle| < 90 (to the contour normal), got {angle_deg!r}")
    h1 = np.asarray(from_depth, dtype=float)
    h2 = np.asarray(to_depth, dtype=float)
    for v, name in ((h1, "from_depth"), (h2, "to_depth")):
        if not np.all(v > 0):  # np.inf (deep water) allowed; NaN fails
            raise InvalidInput(f"`{name}` must be positive [m] (np.inf for deep water), got {v[~(v > 0)].ravel()[0]!r}")
    f = 1.0 / T
    s1 = np.sin(th * DEG) / phase_speed(f, h1, g=g)
    sin2 = s1 * phase_speed(f, h2, g=g)
    if np.any(np.abs(sin2) >= 1.0):
        raise InvalidInput("`to_depth`: the ray turns back (total reflection) before reaching it")
    cos2 = np.sqrt(1.0 - sin2**2)
    H2 = H1 * np.sqrt(group_velocity(f, h1, g=g) / group_velocity(f, h2, g=g)) * np.sqrt(np.cos(th * DEG) / cos2)
    return ShoaledWave(H2, np.rad2deg(np.arcsin(sin2)))


class BreakingResult(NamedTuple):
    """Break point of a wave shoaled and refracted over straight parallel contours.

    height, depth, angle_deg: breaker height Hb [m], breaking depth db [m], angle of the ray to
    the contour normal at breaking [deg] (sign as given); iribarren: ξb = m/√(Hb/L0);
    breaker_type: from ξb (`breaker_type(..., at="breaking")`); deep_water_height: unrefracted
    deep-water equivalent H0' = Hb/Ks(db) [m]; komar_gaudiano_height: Komar & Gaudiano (1975)
    Hb from H0' [m] for comparison; broke_at_start: True where the wave already breaks at the
    start depth (then depth is the start depth and height the given height).
    """

    height: NDArray[np.float64]
    depth: NDArray[np.float64]
    angle_deg: NDArray[np.float64]
    iribarren: NDArray[np.float64]
    breaker_type: NDArray[np.str_]
    deep_water_height: NDArray[np.float64]
    komar_gaudiano_height: NDArray[np.float64]
    broke_at_start: NDArray[np.bool_]


_SCAN = 48  # log-spaced q = kh between the start and a depth below 1e-4 of it, to bracket the first crossing
_REFINE = 80  # regula falsi steps at most (converges in about 10)


def _local_height(H1, f, s1, cg1, cos1, h, g):  # type: ignore[no-untyped-def]
    """Height and angle at depth h from Snell (sin θ / C const) and energy flux (Ks Kr)."""
    c = phase_speed(f, h, g=g)
    sin = np.clip(s1 * c, -1.0, 1.0)
    cos = np.sqrt(1.0 - sin * sin)
    H = H1 * np.sqrt(cg1 / group_velocity(f, h, g=g)) * np.sqrt(cos1 / cos)
    return H, sin


def shoal_to_breaking(
    height: ArrayLike, period: ArrayLike, angle_deg: ArrayLike, depth: ArrayLike, *, slope: ArrayLike, g: float = G
) -> BreakingResult:
    """March a regular wave shoreward from `depth` to its break point.

    `height` [m] and `angle_deg` (ray to the contour normal, |θ| < 90°) are given AT `depth` [m];
    the contours are straight and parallel and the bed slope is `slope` (tan β, for Weggel's
    index). Shoreward of the start, H(h) = H1 √(Cg1/Cg(h)) √(cos θ1/cos θ(h)) with
    sin θ/C constant (Snell), and the wave breaks at the largest depth where H(h) reaches
    Weggel's breaker height b h/(1 + a h/(gT²)). Vectorised over broadcast inputs.

    Examples
    --------
    >>> r = shoal_to_breaking(1.0, 10.0, 0.0, 20.0, slope=0.02)
    >>> round(float(r.height), 2), round(float(r.depth), 2), str(r.breaker_type)
    (1.54, 1.69, 'spilling')
    """
    H1 = _arr(height, "height", "m")
    T = _arr(period, "period", "s")
    th = np.asarray(angle_deg, dtype=float)
    if not (np.isfinite(th).all() and np.all(np.abs(th) < 90.0)):
        raise InvalidInput(f"`angle_deg` must be finite with |angle| < 90 (to the contour normal), got {angle_deg!r}")
    h1 = _arr(depth, "depth", "m")
    if not np.isfinite(h1).all():
        raise InvalidInput("`depth` must be finite (a start depth on the contours)")
    m = _slope(slope)
    H1, T, th, h1, m = np.broadcast_arrays(H1, T, th, h1, m)
    shape = H1.shape
    H1, T, th, h1, m = (np.ravel(a).astype(float) for a in (H1, T, th, h1, m))
    f = 1.0 / T
    a, b = weggel_coefficients(m)
    gT2 = g * T**2

    # Work in q = kh: depth, C and Cg are explicit in q (h = q tanh q / k0, C = C0 tanh q,
    # Cg = C (1 + 2q/sinh 2q)/2), so the march needs one dispersion solve (at the start) and the
    # root is found on explicit functions (no solve per trial depth).
    omega = TWO_PI * f
    k0 = omega * omega / g
    c0 = g / omega
    s1 = np.sin(th * DEG) / phase_speed(f, h1, g=g)
    cg1 = group_velocity(f, h1, g=g)
    cos1 = np.cos(th * DEG)
    q1 = wavenumber(f, h1, g=g) * h1
    lnH1 = np.log(H1)

    def gap(u, P):  # type: ignore[no-untyped-def]  # ln(H/Hb_weggel) at q = e^u: >= 0 where breaking
        k0_, c0_, s1_, cg1cos1_, lnH1_, a_, b_, gT2_ = P
        q = np.exp(u)
        t = np.tanh(q)
        g2 = 4.0 * q * np.exp(-2.0 * q) / -np.expm1(-4.0 * q)  # 2q / sinh 2q without overflow
        h = q * t / k0_
        c = c0_ * t
        sn = np.minimum(np.abs(s1_ * c), 1.0)
        cos = np.sqrt(1.0 - sn * sn)
        cg = 0.5 * c * (1.0 + g2)
        return lnH1_ + 0.5 * np.log(cg1cos1_ / (cg * cos)) - np.log(b_ * h / (1.0 + a_ * h / gT2_))

    pack = (k0, c0, s1, cg1 * cos1, lnH1, a, b, gT2)
    u1 = np.log(q1)
    at_start = gap(u1, pack) >= 0
    # scan shoreward (log-spaced in q, down to a depth below 1e-4 of the start: h <= q²/k0) for the
    # first crossing, then refine the bracket by regula falsi (Illinois variant)
    u_min = 0.5 * np.log(k0 * 1e-4 * h1)
    du = (np.minimum(u_min, u1) - u1) / (_SCAN - 1)
    ub = u1.copy()
    live = np.flatnonzero(~at_start)
    P = tuple(v[live] for v in pack)
    n = live.size
    ua, ga = u1[live], gap(u1[live], P)  # last scan point not breaking (gap < 0)
    ub_, gb = ua.copy(), ga.copy()  # first scan point breaking (gap >= 0)
    todo = np.arange(n)
    for _ in range(1, _SCAN):  # column by column, each wave only until its first crossing
        if todo.size == 0:
            break
        uj = ua[todo] + du[live[todo]]
        gj = gap(uj, tuple(v[todo] for v in P))
        hit = gj >= 0
        ub_[todo[hit]], gb[todo[hit]] = uj[hit], gj[hit]
        ua[todo[~hit]], ga[todo[~hit]] = uj[~hit], gj[~hit]
        todo = todo[~hit]
    if todo.size:
        raise ConvergenceError("shoal_to_breaking: no break point found above 1e-4 of the start depth")
    side = np.zeros(n, dtype=np.int8)  # which end was replaced last time (Illinois halving)
    out_ub = ub_  # the breaking ends of all live waves; `act` indexes those still refined
    act = np.arange(n)
    for _ in range(_REFINE):
        # done when H/Hb at the breaking end is 1 to 1e-12 (or the bracket cannot shrink further)
        done = (gb <= 1e-12) | (np.abs(ub_ - ua) <= 1e-14 * np.maximum(1.0, np.abs(ub_)))
        if act.size == 0 or np.all(done):
            break
        if 2 * np.count_nonzero(done) > done.size:  # most are done: go on with the rest only
            out_ub[act[done]] = ub_[done]
            keep = ~done
            act, ua, ga, ub_, gb, side = act[keep], ua[keep], ga[keep], ub_[keep], gb[keep], side[keep]
            P = tuple(v[keep] for v in P)
        den = gb - ga
        mid = 0.5 * (ua + ub_)
        uc = np.where(den > 0, ub_ - gb * (ub_ - ua) / np.where(den > 0, den, 1.0), mid)
        uc = np.where((uc - ua) * (uc - ub_) < 0, uc, mid)  # strictly inside the bracket
        gc = gap(uc, P)
        brk = gc >= 0
        ga = np.where(brk & (side == 1), 0.5 * ga, ga)  # same end replaced twice: halve the kept one
        gb = np.where(~brk & (side == -1), 0.5 * gb, gb)
        ub_ = np.where(brk, uc, ub_)
        gb = np.where(brk, gc, gb)
        ua = np.where(brk, ua, uc)
        ga = np.where(brk, ga, gc)
        side = np.where(brk, 1, -1).astype(np.int8)
    else:
        raise ConvergenceError("shoal_to_breaking: the break point did not converge")
    out_ub[act] = ub_
    ub[live] = out_ub
    qb = np.exp(ub)
    lo = np.where(at_start, h1, qb * np.tanh(qb) / k0)
    db = np.where(at_start, h1, lo)
    Hb, sinb = _local_height(H1, f, s1, cg1, cos1, db, g)
    Hb = np.where(at_start, H1, Hb)
    angle_b = np.where(at_start, th, np.rad2deg(np.arcsin(sinb)))
    xi = iribarren(m, Hb, T, g=g)
    h0p = Hb / shoaling_coefficient(f, db, g=g)
    r = BreakingResult(
        height=Hb,
        depth=db,
        angle_deg=angle_b,
        iribarren=xi,
        breaker_type=breaker_type(xi, at="breaking"),
        deep_water_height=h0p,
        komar_gaudiano_height=komar_gaudiano(h0p, T, g=g),
        broke_at_start=at_start,
    )
    return BreakingResult(*(np.reshape(v, shape) for v in r))
