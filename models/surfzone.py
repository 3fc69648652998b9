"""Random waves across the surf zone, 1-D along each break point's own depth profile.

The profile runs from the table's reference point along the mean direction the arriving energy
travels (`profile_bearing`) to the shore; it is sampled from the (smoothed) grid once when the
table is built and stored with it (`SurfProfile`). Along it, every swell train carries its own
energy flux (per unit length of contour, per ρg):

    d(E_i Cg_i cos θ_i)/dx = −D · E_i / E,     E = Σ E_i,   E_i = m0_i,

θ_i by Snell's law from the train's angle to the contour normal at the reference point, x the
cross-shore distance (the profile distance × cos of its angle to the contour normal). The bulk
dissipation D is split over the trains in proportion to their energy (as spectral models do,
Eldeberky & Battjes 1996, from memory), with

- Battjes & Janssen (1978): D = (α/4) f̄ Q_b H_m², (1 − Q_b)/ln Q_b = −(H_rms/H_m)²,
  H_m = (0.88/k̄) tanh(γ k̄ h / 0.88) (the Miche-type form), α = 1, γ from Battjes & Stive (1985)
  γ = 0.5 + 0.4 tanh(33 s0), s0 = H_rms,0/L0 (deep-water H_rms and L0 at the mean frequency f̄);
- Thornton & Guza (1983), as a cross-check: D = (3√π/16) B³ f̄ H_rms⁷ / (γ_TG⁴ h⁵), B = 1,
  γ_TG = 0.42 (from memory).

H_rms = √(8E) never exceeds H_m (common practice in implementations of the model; it keeps the
inner surf zone at the depth-limited value where the beach is too steep for D to keep up).
Set-up from the radiation stress (Longuet-Higgins & Stewart 1964):
dη/dx = −(1/(h + η)) dS_xx/dx, S_xx = Σ E_i (n_i (1 + cos² θ_i) − ½); every depth is
bed + water level + set-up.

Breaker heights (`breaker_heights`): at the breaking position (where the total H_m0 along the
profile is largest) the heights follow the composite Weibull distribution of Battjes &
Groenendijk (2000): Rayleigh below H_tr = (0.35 + 5.8 tan α) h, Weibull with exponent 3.6 above,
H_rms = (2.69 + 3.24 √m0/h) √m0. Typical = H1/3, sets = H1/10, largest = H with exceedance 1/N
times the Gumbel-asymptote factor 1 + 0.5772/(k ln N) (from memory). Each is capped by Weggel's
(1972) breaker height at the breaking depth: a height past breaking is never reported.
Run-up (`stockdon_runup`): Stockdon et al. (2006) R2 %.

Units: metres, seconds, degrees; directions as in models/CONVENTIONS.md. Pure numpy/scipy.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cache
from typing import Any, NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.optimize import brentq
from scipy.special import gamma as gamma_fn
from scipy.special import gammainc, gammaincc

from models.bathymetry import DepthGrid
from models.breaking import battjes_stive_gamma, weggel_breaker_height
from models.constants import DEG, TWO_PI, G
from models.errors import InvalidInput
from models.waves import wavenumber

__all__ = [
    "DISSIPATION",
    "SurfProfile",
    "SurfZone",
    "breaking_fraction",
    "composite_weibull",
    "extract_profile",
    "profile_bearing",
    "stockdon_runup",
    "transform",
]

DISSIPATION = ("battjes-janssen", "thornton-guza", "none")
LAND_M = 3.0  # profiles reach this height above the datum (water levels up to it have a shoreline)
MIN_DEPTH_M = 0.05  # total depth at which a node counts as dry (the shoreline)
BLOCK_CASES = 8192
SETS_SHARE = 0.1  # Q_b at the breaking position: the sets are the highest tenth of the waves
PROFILE_NODES = 64  # nodes a profile is resampled to for the march (all profiles of a call alike)
K1, K2 = 2.0, 3.6  # composite Weibull exponents (Battjes & Groenendijk 2000)
EULER_GAMMA = 0.5772156649015329


# --------------------------------------------------------------------------- the profile


@dataclass(frozen=True, eq=False)
class SurfProfile:
    """Bed depths (below the bathymetry datum; ≤ 0 is dry) along a straight line from the
    reference point (x0, y0) [m] toward `bearing_deg` (nautical, the direction waves travel).
    `extended` says the grid ended first and the last slope was continued to the shore."""

    distance_m: NDArray[np.float64]
    bed_m: NDArray[np.float64]
    bearing_deg: float
    x0: float
    y0: float
    extended: bool = False

    def to_arrays(self) -> dict[str, Any]:
        return {
            "profile_distance_m": np.asarray(self.distance_m), "profile_bed_m": np.asarray(self.bed_m),
            "profile_bearing_deg": float(self.bearing_deg), "profile_x0": float(self.x0),
            "profile_y0": float(self.y0), "profile_extended": float(self.extended),
        }  # fmt: skip

    @classmethod
    def from_arrays(cls, data: dict[str, Any]) -> SurfProfile | None:
        """The profile stored by `to_arrays`, or None when `data` has none (older tables)."""
        if "profile_bed_m" not in data:
            return None
        d = np.asarray(data["profile_distance_m"], dtype=float)
        b = np.asarray(data["profile_bed_m"], dtype=float)
        if d.shape != b.shape or d.ndim != 1 or d.size < 2 or np.any(np.diff(d) <= 0):
            raise InvalidInput("`profile_distance_m` must be ascending and match `profile_bed_m`")
        return cls(d, b, float(data["profile_bearing_deg"]), float(data["profile_x0"]), float(data["profile_y0"]),
                   bool(float(data.get("profile_extended", 0.0))))  # fmt: skip

    def slope_at(self, distance_m: ArrayLike, half_window_m: float = 20.0) -> NDArray[np.float64]:
        """Mean bed slope (positive where the bed shoals shoreward) over ± `half_window_m`."""
        s = np.asarray(distance_m, dtype=float)
        lo = np.interp(s - half_window_m, self.distance_m, self.bed_m)
        hi = np.interp(s + half_window_m, self.distance_m, self.bed_m)
        return (lo - hi) / (2.0 * half_window_m)


def profile_bearing(
    coefficient: NDArray[np.float64], nearshore_direction_deg: NDArray[np.float64]
) -> float | None:
    """The direction [deg, nautical TOWARD] the energy a table lets in travels at its reference
    point: the K²-weighted circular mean of its nearshore FROM directions, plus 180°. None when
    nothing arrives."""
    w = np.where(np.isfinite(nearshore_direction_deg), coefficient**2, 0.0)
    if not w.sum() > 0:
        return None
    rad = np.radians(np.nan_to_num(nearshore_direction_deg))
    sx, sy = float(np.sum(w * np.sin(rad))), float(np.sum(w * np.cos(rad)))
    return (math.degrees(math.atan2(sx, sy)) + 180.0) % 360.0


def extract_profile(
    grid: DepthGrid,
    x0: float,
    y0: float,
    bearing_deg: float,
    *,
    step_m: float | None = None,
    max_length_m: float = 20000.0,
) -> SurfProfile:
    """Sample the bed from (x0, y0) toward `bearing_deg` until it is dry (depth ≤ 0, the first
    dry sample kept) or the grid ends; in the latter case the mean slope of the last quarter is
    continued to the shore (`extended`), or a flat bed stops there (InvalidInput: no shore).
    Beyond the datum shoreline the foreshore slope is continued up to `LAND_M` above it."""
    if not bool(grid.contains(x0, y0)):
        raise InvalidInput(f"profile start ({x0!r}, {y0!r}) [m] is off the grid {grid.extent}")
    h0 = float(grid.depth_at(x0, y0))
    if not h0 > 0:
        raise InvalidInput(f"profile start ({x0:.1f}, {y0:.1f}) [m] is dry (depth {h0:.2f} m)")
    ds = 0.5 * min(grid.dx, grid.dy) if step_m is None else float(step_m)
    if not ds > 0:
        raise InvalidInput(f"`step_m` must be positive [m], got {step_m!r}")
    n = int(max_length_m / ds) + 1
    s = ds * np.arange(n)
    b = math.radians(float(bearing_deg))
    x, y = x0 + s * math.sin(b), y0 + s * math.cos(b)
    inside = np.asarray(grid.contains(x, y), dtype=bool)
    stop = int(np.argmin(inside)) if not inside.all() else n
    s, x, y = s[:stop], x[:stop], y[:stop]
    bed = np.asarray(grid.depth_at(x, y), dtype=float)
    dry = np.flatnonzero(bed <= 0.0)
    extended = False
    if dry.size:
        k = int(dry[0]) + 1
        s, bed = s[:k], bed[:k]
    else:
        q = max(2, s.size // 4)
        slope = (bed[-q] - bed[-1]) / (s[-1] - s[-q])
        if not slope > 1e-4:
            raise InvalidInput(
                f"the profile from ({x0:.1f}, {y0:.1f}) toward {bearing_deg:.0f}° leaves the grid at depth "
                f"{bed[-1]:.1f} m without reaching the shore"
            )
        extra = ds * np.arange(1, int(bed[-1] / slope / ds) + 2)
        s = np.concatenate([s, s[-1] + extra])
        bed = np.concatenate([bed, bed[-1] - slope * extra])
        extended = True
    # above the datum shoreline grids rarely resolve the beach: continue the foreshore (the mean
    # slope where the bed is 0..2 m deep, at least 1:100) up to LAND_M, so any water level up to
    # that has a shoreline on the profile
    fore = bed > 0.0
    band = fore & (bed <= 2.0)
    if band.sum() >= 2:
        sb, bb = s[band], bed[band]
        m = max(float((bb[0] - bb[-1]) / max(sb[-1] - sb[0], 1e-9)), 0.01)
    else:
        m = max(float((bed[0] - bed[-1]) / max(s[-1] - s[0], 1e-9)), 0.01)
    top = float(bed[-1])
    if top > -LAND_M:
        extra = ds * np.arange(1, int((LAND_M + top) / (m * ds)) + 2)
        s = np.concatenate([s, s[-1] + extra])
        bed = np.concatenate([bed, top - m * extra])
    return SurfProfile(s, bed, float(bearing_deg) % 360.0, float(x0), float(y0), extended=extended)


def resampled(profile: SurfProfile, nodes: int = PROFILE_NODES) -> tuple[float, NDArray[np.float64]]:
    """(spacing, bed at `nodes` equally spaced points from the start to the last sample)."""
    s = np.linspace(0.0, float(profile.distance_m[-1]), nodes)
    return float(s[1] - s[0]), np.interp(s, profile.distance_m, profile.bed_m)


# --------------------------------------------------------------------------- the march


class SurfZone(NamedTuple):
    """Per case (C) and train (K). `*_profile` arrays (C, N) only with `keep_profiles=True`."""

    i_break: NDArray[np.intp]  # node where the sets break (the breaking position; see `transform`)
    x_break: NDArray[np.float64]  # cross-shore distance from the start [m]
    depth_break: NDArray[np.float64]  # total depth there (bed + water level + set-up) [m]
    m0_break: NDArray[np.float64]  # (C, K) train variances there [m²]
    angle_break: NDArray[np.float64]  # (C, K) angle to the contour normal there [deg]
    qb_break: NDArray[np.float64]  # fraction of breaking waves there
    setup_shore: NDArray[np.float64]  # set-up at the last wet node [m]
    x_shore: NDArray[np.float64]  # cross-shore distance of the last wet node [m]
    gamma: NDArray[np.float64]  # breaker parameter used
    hrms_profile: NDArray[np.float64] | None
    depth_profile: NDArray[np.float64] | None  # total depth, NaN where dry
    eta_profile: NDArray[np.float64] | None
    qb_profile: NDArray[np.float64] | None


def _kh_start(f: NDArray[np.float64], h: NDArray[np.float64], g: float) -> NDArray[np.float64]:
    """kh at depth h (h > 0), exact (models.waves)."""
    return wavenumber(f, h, g=g) * h


def _kh_next(
    x: NDArray[np.float64], y: NDArray[np.float64]
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """(kh, tanh kh) for k0h = y by three Newton steps on x tanh x = y from x (kh at the previous
    node: the depth changes little between nodes, so the start is close; error below 1e-9)."""
    for _ in range(3):
        t = np.tanh(x)
        x = x - (x * t - y) / (t + x * (1.0 - t * t))
    return x, np.tanh(x)


def _speeds(x: NDArray[np.float64], t: NDArray[np.float64], omega: NDArray[np.float64], g: float):  # type: ignore[no-untyped-def]
    """(C, n) from kh = x, t = tanh x: C = g t/ω, n = ½(1 + 2x/sinh 2x) = ½ + x(1 - t²)/(2t)."""
    return g * t / omega, 0.5 + 0.5 * x * (1.0 - t * t) / np.maximum(t, 1e-300)


@cache
def _qb_table() -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    b = np.linspace(0.1, 0.9999, 4000)
    c = b * b
    u = -1.0 / c
    for _ in range(200):  # Newton from u = -1/b² rises monotonically to the root
        eu = np.exp(u)
        u = np.minimum(u - (1.0 - eu + c * u) / (c - eu), 0.0)
    return b, np.exp(u)


def breaking_fraction(b: ArrayLike) -> NDArray[np.float64]:
    """Q_b from (1 - Q_b)/ln Q_b = -b², b = H_rms/H_m (Battjes & Janssen 1978), for whole arrays:
    linear in a table on b = 0.1 .. 0.9999 solved once by Newton (in u = ln Q_b from u = -1/b²;
    within 1e-6 of `models.breaking.battjes_janssen_fraction`, the checked form). Q_b < 1e-43
    (b < 0.1) is 0; Q_b = 1 for b >= 1 (the root is double there; b = 0.9999 gives 0.9998)."""
    bt, qt = _qb_table()
    x = np.clip(np.asarray(b, dtype=float), 0.1, 0.9999)
    pos = (x - 0.1) * ((bt.size - 1) / 0.8999)
    i = np.minimum(pos.astype(np.intp), bt.size - 2)
    t = pos - i
    q = qt[i] * (1.0 - t) + qt[i + 1] * t
    return np.where(np.asarray(b) >= 1.0, 1.0, np.where(np.asarray(b) < 0.1, 0.0, q))


def _hmax(
    kbar: NDArray[np.float64], h: NDArray[np.float64], gamma: NDArray[np.float64]
) -> NDArray[np.float64]:
    return 0.88 / kbar * np.tanh(gamma * kbar * h / 0.88)


def transform(
    m0: ArrayLike,
    period_s: ArrayLike,
    angle_deg: ArrayLike,
    bed_m: ArrayLike,
    dx_m: ArrayLike,
    water_level_m: ArrayLike = 0.0,
    *,
    dissipation: str = "battjes-janssen",
    gamma: ArrayLike | None = None,
    alpha: float = 1.0,
    tg_gamma: float = 0.42,
    tg_b: float = 1.0,
    cap: bool = True,
    keep_profiles: bool = False,
    g: float = G,
) -> SurfZone:
    """March C cases of K trains across their profiles (see the module docstring).

    m0 (C, K) train variances at node 0 [m²]; period_s (C, K) [s]; angle_deg (C, K) angles to the
    contour normal at node 0 (|θ| < 90); bed_m (C, N) bed depth below datum at equally spaced nodes,
    dx_m (C,) their cross-shore spacing; water_level_m (C,) above datum. `gamma` (C,) overrides
    Battjes & Stive's. A train with m0 = 0 carries nothing.

    The breaking position: Q_b is the share of the waves that are breaking (Battjes & Janssen
    1978), so the sets, the highest tenth, are breaking where Q_b first reaches 1/10 (shoalcast's
    reading); where it never does, the node of the largest total H_m0. The trains' variances and
    angles, Q_b and the total depth are reported there.
    """
    m0 = np.atleast_2d(np.asarray(m0, dtype=float))
    C, K = m0.shape
    T = np.broadcast_to(np.asarray(period_s, dtype=float), (C, K))
    th0 = np.broadcast_to(np.asarray(angle_deg, dtype=float), (C, K))
    bed = np.atleast_2d(np.asarray(bed_m, dtype=float))
    dx = np.broadcast_to(np.asarray(dx_m, dtype=float), (C,))
    wl = np.broadcast_to(np.asarray(water_level_m, dtype=float), (C,))
    if dissipation not in DISSIPATION:
        raise InvalidInput(f"`dissipation` must be one of {DISSIPATION}, got {dissipation!r}")
    if bed.shape[0] != C or bed.shape[1] < 2:
        raise InvalidInput(f"`bed_m` must have shape ({C}, N >= 2), got {bed.shape}")
    for name, a in (("m0", m0), ("period_s", T), ("angle_deg", th0), ("dx_m", dx), ("water_level_m", wl)):
        if not np.all(np.isfinite(a)):
            raise InvalidInput(f"`{name}` must be finite")
    if np.any(m0 < 0) or np.any(T <= 0) or np.any(dx <= 0) or np.any(np.abs(th0) >= 90.0):
        raise InvalidInput("`m0` >= 0, `period_s` > 0, `dx_m` > 0 and |`angle_deg`| < 90 are required")
    if C > BLOCK_CASES:  # blocks keep the work arrays in cache (about twice as fast as one pass)
        parts = [
            transform(m0[a : a + BLOCK_CASES], T[a : a + BLOCK_CASES], th0[a : a + BLOCK_CASES],
                      bed[a : a + BLOCK_CASES], dx[a : a + BLOCK_CASES], wl[a : a + BLOCK_CASES],
                      dissipation=dissipation, gamma=None if gamma is None else np.broadcast_to(gamma, (C,))[a : a + BLOCK_CASES],
                      alpha=alpha, tg_gamma=tg_gamma, tg_b=tg_b, cap=cap,
                      keep_profiles=keep_profiles, g=g)
            for a in range(0, C, BLOCK_CASES)
        ]  # fmt: skip
        return SurfZone(*(None if p[0] is None else np.concatenate(p) for p in zip(*parts, strict=True)))
    N = bed.shape[1]
    f = 1.0 / T
    live = m0 > 0
    mt = m0.sum(axis=1)
    fbar = np.where(mt > 0, np.sum(m0 * f, axis=1) / np.where(mt > 0, mt, 1.0), 0.1)
    h = bed[:, 0] + wl
    if np.any((h <= MIN_DEPTH_M) & (mt > 0)):
        raise InvalidInput("the profile start must be wet (bed + water level > 0.05 m) where waves arrive")
    # trains and the mean frequency side by side: columns 0..K-1 trains, K the mean frequency f̄
    fa = np.concatenate([f, fbar[:, None]], axis=1)
    omega = TWO_PI * fa
    k0 = omega * omega / g
    hh = np.maximum(h, MIN_DEPTH_M)
    x = _kh_start(fa, hh[:, None], g)
    c, n = _speeds(x, np.tanh(x), omega, g)
    s1 = np.sin(th0 * DEG) / c[:, :K]  # Snell: sin θ / C
    cos = np.cos(th0 * DEG)
    F = m0 * n[:, :K] * c[:, :K] * cos  # energy flux per ρg, per unit contour length
    if gamma is None:
        inv_ks2 = (n * c)[:, :K] / (0.5 * g / omega[:, :K])  # 1/Ks² = Cg/Cg0 (s0 only sets γ)
        hrms0 = np.sqrt(8.0 * np.sum(m0 * inv_ks2, axis=1))
        L0 = g / (TWO_PI * fbar**2)
        gam = np.asarray(battjes_stive_gamma(hrms0 / L0), dtype=float)
    else:
        gam = np.broadcast_to(np.asarray(gamma, dtype=float), (C,)).copy()

    def diss(E: NDArray[np.float64], hd: NDArray[np.float64], kbar: NDArray[np.float64]) -> tuple:  # type: ignore[type-arg]
        hrms = np.sqrt(8.0 * E)
        hm = _hmax(kbar, hd, gam)
        if dissipation == "battjes-janssen":
            qb = breaking_fraction(hrms / hm)
            return 0.25 * alpha * fbar * qb * hm**2, qb, hm
        if dissipation == "thornton-guza":
            d = (3.0 * math.sqrt(math.pi) / 16.0) * tg_b**3 * fbar * hrms**7 / (tg_gamma**4 * hd**5)
            return d, np.minimum((hrms / (tg_gamma * hd)) ** 4, 1.0), hm
        return np.zeros_like(E), np.zeros_like(E), hm

    def sxx(E_i, n_i, cos_i):  # type: ignore[no-untyped-def]
        return np.sum(E_i * (n_i * (1.0 + cos_i**2) - 0.5), axis=1)

    E_i = np.where(live, m0, 0.0)
    eta = np.zeros(C)
    wet = h > MIN_DEPTH_M
    _, qb0, hm0 = diss(E_i.sum(axis=1), hh, x[:, K] / hh)
    if cap:
        tot = 8.0 * E_i.sum(axis=1)
        scale = np.where(tot > hm0**2, hm0**2 / np.maximum(tot, 1e-300), 1.0)
        E_i, F = E_i * scale[:, None], F * scale[:, None]
    S_prev = sxx(E_i, n[:, :K], cos)
    h_prev = hh
    # the breaking position: the first node where Q_b (the share of waves breaking) reaches 1/10,
    # the share the sets are (fallback: the largest H_m0 along the profile)
    i_break = np.zeros(C, dtype=np.intp)
    m0_b, ang_b, qb_b, d_b = E_i.copy(), th0.copy(), np.asarray(qb0, dtype=float).copy(), hh.copy()
    found = np.asarray(qb0) >= SETS_SHARE
    best = 4.0 * np.sqrt(E_i.sum(axis=1))
    x_shore = np.zeros(C)
    setup = np.zeros(C)
    prof = None
    if keep_profiles:
        prof = [np.full((C, N), np.nan) for _ in range(4)]
        prof[0][:, 0], prof[1][:, 0], prof[2][:, 0], prof[3][:, 0] = np.sqrt(8 * E_i.sum(1)), hh, 0.0, qb0
    for j in range(1, N):
        hj = bed[:, j] + wl + eta
        wet = wet & (hj > MIN_DEPTH_M)
        if not wet.any():
            break
        hd = np.where(wet, hj, h_prev)
        x, t = _kh_next(x, k0 * hd[:, None])
        c, n = _speeds(x, t, omega, g)
        sn = np.clip(s1 * c[:, :K], -0.999999, 0.999999)
        cs = np.sqrt(1.0 - sn * sn)
        cgcos = n[:, :K] * c[:, :K] * cs
        kbar = x[:, K] / hd
        E_p = F / cgcos  # conservative predictor
        Et = E_p.sum(axis=1)
        D, qb, hm = diss(Et, hd, kbar)
        if dissipation == "none":
            Fn = F
        else:  # F_j = F_(j-1) / (1 + r dx), r = D_i/F_i at node j from the predictor: implicit in the
            # loss rate, so stable and positive at any spacing (first order in dx)
            r = D[:, None] / np.maximum(Et[:, None] * cgcos, 1e-300)
            Fn = F / (1.0 + r * dx[:, None])
        En = Fn / cgcos
        if cap:
            tot = 8.0 * En.sum(axis=1)
            scale = np.where(tot > hm**2, hm**2 / np.maximum(tot, 1e-300), 1.0)
            En, Fn = En * scale[:, None], Fn * scale[:, None]
        w = wet[:, None]
        F = np.where(w, Fn, 0.0)
        E_i = np.where(w, En, 0.0)
        S = sxx(E_i, n[:, :K], cs)
        hbar = 0.5 * (h_prev + hd)
        eta = np.where(wet, eta - (S - S_prev) / hbar, eta)
        S_prev, h_prev = np.where(wet, S, S_prev), np.where(wet, hd, h_prev)
        hm0_tot = 4.0 * np.sqrt(E_i.sum(axis=1))
        hit = wet & ~found & (qb >= SETS_SHARE)
        up = hit | (wet & ~found & (hm0_tot > best))
        found = found | hit
        if up.any():
            best = np.where(up, hm0_tot, best)
            i_break = np.where(up, j, i_break)
            m0_b = np.where(up[:, None], E_i, m0_b)
            ang_b = np.where(up[:, None], np.degrees(np.arcsin(sn)), ang_b)
            qb_b = np.where(up, qb, qb_b)
            d_b = np.where(up, hd, d_b)
        x_shore = np.where(wet, j * dx, x_shore)
        setup = np.where(wet, eta, setup)
        if prof is not None:
            prof[0][:, j] = np.where(wet, np.sqrt(8.0 * E_i.sum(axis=1)), np.nan)
            prof[1][:, j] = np.where(wet, hd, np.nan)
            prof[2][:, j] = np.where(wet, eta, np.nan)
            prof[3][:, j] = np.where(wet, qb, np.nan)
    return SurfZone(
        i_break=i_break, x_break=i_break * dx, depth_break=d_b, m0_break=m0_b, angle_break=ang_b, qb_break=qb_b,
        setup_shore=setup, x_shore=x_shore, gamma=gam,
        hrms_profile=prof[0] if prof else None, depth_profile=prof[1] if prof else None,
        eta_profile=prof[2] if prof else None, qb_profile=prof[3] if prof else None,
    )  # fmt: skip


# --------------------------------------------------------------------------- heights at breaking


def _cwd_parts(htr: float) -> tuple[float, float]:
    """(H̃1, H̃2) of the composite Weibull distribution normalised by H_rms, for H̃tr = H_tr/H_rms:
    continuity (H̃tr/H̃1)^k1 = (H̃tr/H̃2)^k2 and H̃_rms = 1 (Battjes & Groenendijk 2000;
    Groenendijk 1998 eqs 3.4, 7.11), with the unnormalised incomplete gamma functions."""

    def h2_of(h1: float) -> float:
        return htr * (htr / h1) ** (-K1 / K2)

    def rms(h1: float) -> float:
        h2 = h2_of(h1)
        a1, a2 = 2.0 / K1 + 1.0, 2.0 / K2 + 1.0
        low = gammainc(a1, (htr / h1) ** K1) * gamma_fn(a1)
        up = gammaincc(a2, (htr / h2) ** K2) * gamma_fn(a2)
        return h1 * h1 * low + h2 * h2 * up - 1.0

    h1 = brentq(rms, 1e-3, 1e4, xtol=1e-13)
    return h1, h2_of(h1)


@cache
def _cwd_table() -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """(H̃tr, H̃1, H̃2) on a grid of H̃tr; beyond its end the distribution is Rayleigh."""
    htr = np.concatenate([np.linspace(0.05, 1.0, 40), np.linspace(1.02, 4.0, 150)])
    h1, h2 = zip(*(_cwd_parts(float(v)) for v in htr), strict=True)
    return htr, np.array(h1), np.array(h2)


def _upper(a: float, x: NDArray[np.float64]) -> NDArray[np.float64]:
    return gammaincc(a, x) * gamma_fn(a)


def composite_weibull(htr_tilde: ArrayLike, n: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """(H̃_1/n, H̃_n): the mean of the highest 1/n of the waves and the height exceeded with
    probability 1/n, both / H_rms, for H̃tr = H_tr / H_rms (Battjes & Groenendijk 2000)."""
    grid, g1, g2 = _cwd_table()
    x = np.asarray(htr_tilde, dtype=float)
    nn = np.broadcast_to(np.asarray(n, dtype=float), x.shape)
    xc = np.clip(x, grid[0], grid[-1])
    h1 = np.interp(xc, grid, g1)
    h2 = np.interp(xc, grid, g2)
    ray = x >= grid[-1]  # effectively Rayleigh: H̃1 = 1, H̃tr out of reach
    h1 = np.where(ray, 1.0, h1)
    xr = np.where(ray, np.inf, x)
    ln = np.log(nn)
    hn1 = h1 * ln ** (1.0 / K1)
    first = hn1 < xr
    hn = np.where(first, hn1, h2 * ln ** (1.0 / K2))
    with np.errstate(over="ignore", invalid="ignore"):
        t1 = (np.where(ray, 0.0, xr) / h1) ** K1
        case1 = nn * h1 * (_upper(1.0 / K1 + 1.0, ln) - np.where(ray, 0.0, _upper(1.0 / K1 + 1.0, t1)))
        case1 = case1 + np.where(
            ray, 0.0, nn * h2 * _upper(1.0 / K2 + 1.0, (np.where(ray, 1.0, xr) / h2) ** K2)
        )
        case2 = nn * h2 * _upper(1.0 / K2 + 1.0, ln)
    return np.where(first, case1, case2), hn


def shallow_hrms(m0: ArrayLike, depth: ArrayLike) -> NDArray[np.float64]:
    """H_rms = (2.69 + 3.24 √m0 / h) √m0 (Battjes & Groenendijk 2000)."""
    s = np.sqrt(np.asarray(m0, dtype=float))
    return (2.69 + 3.24 * s / np.asarray(depth, dtype=float)) * s


def breaker_heights(
    m0: ArrayLike,
    depth: ArrayLike,
    slope: ArrayLike,
    period_s: ArrayLike,
    n_waves: ArrayLike,
    *,
    g: float = G,
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """(typical H1/3, sets H1/10, largest of `n_waves`) [m] at total depth `depth` on the local
    `slope`, each capped by Weggel's breaker height at that depth (models.breaking)."""
    m0 = np.asarray(m0, dtype=float)
    h = np.asarray(depth, dtype=float)
    m = np.clip(np.asarray(slope, dtype=float), 1e-4, 0.5)
    hrms = shallow_hrms(m0, h)
    htr = (0.35 + 5.8 * m) * h
    with np.errstate(divide="ignore", invalid="ignore"):
        x = np.where(hrms > 0, htr / np.where(hrms > 0, hrms, 1.0), np.inf)
    h13, _ = composite_weibull(x, 3.0)
    h110, _ = composite_weibull(x, 10.0)
    nw = np.maximum(np.asarray(n_waves, dtype=float), 2.0)
    _, hn = composite_weibull(x, nw)
    kk = np.where(hn * 1.0 < np.where(np.isfinite(x), x, np.inf), K1, K2)
    largest = hn * (1.0 + EULER_GAMMA / (kk * np.log(nw)))
    cap = weggel_breaker_height(np.maximum(h, 1e-6), period_s, m, g=g)
    return (np.minimum(h13 * hrms, cap), np.minimum(h110 * hrms, cap), np.minimum(largest * hrms, cap))


# --------------------------------------------------------------------------- run-up


def stockdon_runup(
    h0: ArrayLike, period_s: ArrayLike, foreshore_slope: ArrayLike, *, g: float = G
) -> NDArray[np.float64]:
    """2 % exceedance run-up R2 [m] (Stockdon et al. 2006, eq. 19):
    R2 = 1.1 (0.35 β √(H0 L0) + ½ √(H0 L0 (0.563 β² + 0.004))), H0 the deep-water significant
    height, L0 = g T²/2π at the peak period, β the foreshore slope; on dissipative beaches
    (ξ0 = β/√(H0/L0) < 0.3) R2 = 0.043 √(H0 L0) (eq. 18)."""
    H0 = np.asarray(h0, dtype=float)
    T = np.asarray(period_s, dtype=float)
    b = np.asarray(foreshore_slope, dtype=float)
    if np.any(H0 < 0) or np.any(T <= 0) or np.any(b < 0):
        raise InvalidInput("`h0` >= 0, `period_s` > 0 and `foreshore_slope` >= 0 are required")
    L0 = g * T**2 / TWO_PI
    hl = H0 * L0
    r2 = 1.1 * (0.35 * b * np.sqrt(hl) + 0.5 * np.sqrt(hl * (0.563 * b**2 + 0.004)))
    with np.errstate(divide="ignore", invalid="ignore"):
        xi = np.where(H0 > 0, b / np.sqrt(H0 / L0), np.inf)
    return np.where(xi < 0.3, 0.043 * np.sqrt(hl), r2)
