"""Parabolic mild-slope (refraction–diffraction) march of a complex wave amplitude.

The mild-slope equation (Berkhoff 1972) ∇·(C Cg ∇φ) + k² C Cg φ = 0 is split into a wave
travelling along +x and its reflection, and the reflection dropped (Radder 1979, J. Fluid Mech.
95, 159–176; Booij 1981). With φ = A(x, y)·exp(i∫k̄ dx), k̄(x) the lateral mean wavenumber, the
one-way operator √(k² + ∂²_y) = k √(1 + X), X = (1/(k² p)) ∂_y(p ∂_y·), p = C Cg, is replaced by a
rational approximation of cos θ in sin²θ (Kirby 1986, Coastal Eng. 10, 355–378):

    cos θ ≈ (a0 + a1 sin²θ) / (1 + b1 sin²θ)    ⇒    (1 − b1 X) A_x = i [(a0 k − k̄) − (a1 k − b1 k̄) X] A

    small angle (Radder 1979; Kirby & Dalrymple 1983, J. Fluid Mech. 136, 453–466): a0 = 1, a1 = −½, b1 = 0
    Padé (Booij 1981; Kirby 1986):                                            a0 = 1, a1 = −¾, b1 = −¼
    minimax to 70° (Kirby 1986, from memory; its error |Δcos θ| ≤ 0.0053
    over 0–70° is checked in the tests):                           a0 = 0.994733, a1 = −0.890065, b1 = −0.451641

plus energy-flux conservation along x (|A|² Cg constant in a laterally uniform field, the
(k C Cg)_x term of Kirby & Dalrymple 1983) applied exactly as a split step A ← A·√(Cg_n/Cg_n+1).

Numerics: Crank–Nicolson in x with coefficients at the half step; the lateral operator is
conservative (p at half nodes), so each step is one tridiagonal solve per component. All
components of a batch (same grid shape, one period) are stacked into one block-tridiagonal
system (zero coupling between blocks) and solved with one `scipy.linalg.solve_banded` call per
step: vectorised across components.

Boundaries:
- Lateral edges are walls (no flux; the lab tank) or absorbing: a sponge layer relaxes the
  amplitude toward the laterally uncoupled plane wave of its own row (the incident wave continued
  straight on, with shoaling and land), so scattered waves leaving the grid are damped while the
  incident wave enters undisturbed.
- Land (depth ≤ `land_depth_m`) is total absorption: the amplitude is set to zero there after every
  step, so all energy that runs into land is removed and none is reflected back along the march
  (the parabolic form cannot carry a reflected wave anyway); energy running *alongside* a coast
  sees a zero-amplitude edge, which returns part of the small lateral flux into it.

Resolution: the lateral spacing must resolve the shortest wavelength on the grid (`POINTS_PER_WAVELENGTH`
across, `MARCH_POINTS_PER_WAVELENGTH` along); `grid_spacing` gives the spacings for a period and
depth, and callers refuse periods whose grid would be too large (see `models.refdif_table`).
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.fft import dct, idct
from scipy.linalg import solve_banded

from models.constants import G
from models.errors import InvalidInput
from models.waves import group_velocity, wavenumber

__all__ = [
    "MARCH_POINTS_PER_WAVELENGTH",
    "MINIMAX_70",
    "PADE",
    "POINTS_PER_WAVELENGTH",
    "SMALL_ANGLE",
    "Aperture",
    "March",
    "grid_spacing",
    "march",
]


class Aperture(NamedTuple):
    """Coefficients of cos θ ≈ (a0 + a1 sin²θ)/(1 + b1 sin²θ) and the angle [deg] up to which
    the form is used (the table falls back to rays beyond it)."""

    a0: float
    a1: float
    b1: float
    limit_deg: float


SMALL_ANGLE = Aperture(1.0, -0.5, 0.0, 30.0)
PADE = Aperture(1.0, -0.75, -0.25, 10.0)
MINIMAX_70 = Aperture(0.994733030, -0.890064831, -0.451641229, 60.0)

POINTS_PER_WAVELENGTH = 8.0  # across the march (lateral derivative); common practice 8-10
MARCH_POINTS_PER_WAVELENGTH = 5.0  # along the march (Crank–Nicolson step); common practice 4-6


class March(NamedTuple):
    """Result of `march`.

    amplitude   (B, nkeep, ny) complex A at the kept rows (the surface elevation amplitude is
                |A| in the units of `incident`)
    rows        (nkeep,) indices of the kept rows
    kbar        (B, nx) lateral mean wavenumber per row [rad/m]
    phase       (B, nx) reference phase ∫k̄ dx at each row [rad] (0 at row 0)
    """

    amplitude: NDArray[np.complex128]
    rows: NDArray[np.intp]
    kbar: NDArray[np.float64]
    phase: NDArray[np.float64]


def grid_spacing(period: float, depth: float, *, g: float = G) -> tuple[float, float]:
    """(dx along, dy across) [m] resolving the wavelength at `depth` for `period`."""
    L = 2.0 * math.pi / float(wavenumber(1.0 / period, depth, g=g))
    return L / MARCH_POINTS_PER_WAVELENGTH, L / POINTS_PER_WAVELENGTH


def _stokes_shift(omega, k, h, cg):
    """δk/a² [rad/m per m²]: at fixed ω a Stokes wave of amplitude a has k − δk, from
    ω = ω_lin(k)(1 + ½(ka)² D), D = (cosh 4kh + 8 − 2 tanh² kh)/(8 sinh⁴ kh) (Kirby & Dalrymple
    1983/1986): δk = ω k² D a² / (2 Cg)."""
    kh = np.minimum(k * h, 10.0)
    D = (np.cosh(4 * kh) + 8.0 - 2.0 * np.tanh(kh) ** 2) / (8.0 * np.sinh(kh) ** 4)
    return omega * k * k * D / (2.0 * cg)


def _lateral(q, w, dy):
    """Lower/upper coefficients of (1/w) ∂y(q ∂y·) on nodes (B, ny); q averaged to half nodes."""
    qh = 0.5 * (q[:, 1:] + q[:, :-1])
    lo = np.zeros_like(q)
    up = np.zeros_like(q)
    lo[:, 1:] = qh / (dy * dy * w[:, 1:])
    up[:, :-1] = qh / (dy * dy * w[:, :-1])
    return lo, up


def _check(depth: NDArray[np.float64], dx: float, dy: float, period: float) -> None:
    if depth.ndim != 3 or depth.shape[1] < 2 or depth.shape[2] < 3:
        raise InvalidInput(f"`depth` must have shape (components, nx >= 2, ny >= 3), got {depth.shape}")
    if not np.all(np.isfinite(depth)):
        raise InvalidInput("`depth` must be finite (land as depth <= 0)")
    for name, v in (("dx", dx), ("dy", dy), ("period", period)):
        if not (isinstance(v, int | float | np.floating | np.integer) and math.isfinite(v) and v > 0):
            raise InvalidInput(f"`{name}` must be positive and finite, got {v!r}")


def march(
    depth: ArrayLike,
    dx: float,
    dy: float,
    period: float,
    *,
    incident: ArrayLike | None = None,
    lateral: str = "absorbing",
    sponge_width_m: float | None = None,
    aperture: Aperture = MINIMAX_70,
    land_depth_m: float = 0.0,
    keep: ArrayLike | None = None,
    nonlinear_amplitude_m: float | None = None,
    filter_wavenumber: float | None = None,
    absorb_depth_m: float | None = None,
    g: float = G,
) -> March:
    """March A(x, y) from row 0 along x over `depth` (B, nx, ny) [m] (row i at x = i·dx, node j at
    y = j·dy) for one `period` [s]; B components are solved together.

    `incident` (B, ny) or (ny,) complex: A on row 0 (default: 1 on water, 0 on land).
    `lateral`: "absorbing" (sponge, default width two wavelengths at the row-0 depth) or "wall".
    `keep`: row indices to return (default all rows).
    `nonlinear_amplitude_m`: when given, the physical amplitude [m] that |A| = 1 stands for, and the
    Stokes amplitude dispersion of Kirby & Dalrymple (1983) is added (see `_stokes_shift`); the
    transfer tables are linear and leave it off.
    `filter_wavenumber` [rad/m]: lateral wavenumbers beyond it are damped as evanescent (default:
    the largest k on each row); give the k the grid was resolved for when the rows reach much
    shallower water than that.
    `absorb_depth_m`: water shallower than this is a graded sponge toward land (a beach or surf zone
    that takes the energy instead of the zero-amplitude edge returning lateral flux).
    """
    h = np.asarray(depth, dtype=float)
    _check(h, dx, dy, period)
    if lateral not in ("absorbing", "wall"):
        raise InvalidInput(f"`lateral` must be 'absorbing' or 'wall', got {lateral!r}")
    B, nx, ny = h.shape
    f = 1.0 / period
    omega = 2.0 * math.pi * f
    water = h > land_depth_m
    floor = max(land_depth_m, 1e-3)  # land nodes get a shallow stand-in depth (their A is zeroed)
    hc = np.where(water, np.maximum(h, floor), floor)
    k = wavenumber(f, hc, g=g)
    cg = group_velocity(f, hc, g=g)
    p = omega / k * cg  # C·Cg
    # lateral mean wavenumber over water (all nodes if a row is dry)
    nw = water.sum(axis=2)
    kbar = np.where(nw > 0, (k * water).sum(axis=2) / np.maximum(nw, 1), k.mean(axis=2))
    # land nodes (amplitude zeroed) take their row's mean water values, so a thin barrier acts
    # only by absorption, not by a spurious jump in the coefficients of the next step
    for arr in (k, cg, p):
        mean = np.where(nw > 0, (arr * water).sum(axis=2) / np.maximum(nw, 1), arr.mean(axis=2))
        arr[...] = np.where(water, arr, mean[:, :, None])
    phase = np.concatenate(
        [np.zeros((B, 1)), np.cumsum(0.5 * (kbar[:, 1:] + kbar[:, :-1]) * dx, axis=1)], axis=1
    )

    if nonlinear_amplitude_m is not None:
        stokes = _stokes_shift(omega, k, hc, cg)
    if incident is None:
        a = water[:, 0, :].astype(complex)
    else:
        a = np.broadcast_to(np.asarray(incident, dtype=complex), (B, ny)).copy()
        a[~water[:, 0, :]] = 0.0
    a_free = a.copy()  # laterally uncoupled plane wave of each row (sponge target)

    if lateral == "absorbing":
        L0 = 2.0 * math.pi / float(np.max(k[:, 0, :]))
        w = 2.0 * L0 if sponge_width_m is None else float(sponge_width_m)
        ns = max(2, int(round(w / dy)))
        if 2 * ns >= ny:
            raise InvalidInput(
                f"grid of {ny} lateral nodes is too narrow for a sponge of {ns} nodes each side"
            )
        ramp = np.zeros(ny)
        s = (np.arange(ns, 0, -1) / ns) ** 2
        ramp[:ns] = s
        ramp[ny - ns :] = s[::-1]
        mu = ramp * (6.0 / L0)  # damping rate [1/m]; ∫μ over the layer ≈ 4 e-folds across it
        sponge = np.exp(-mu * dx)
    else:
        sponge = None

    coast = None
    if absorb_depth_m is not None and absorb_depth_m > land_depth_m:
        Lc = 2.0 * math.pi / np.maximum(k, 1e-9)
        ramp_c = np.clip((absorb_depth_m - h) / (absorb_depth_m - land_depth_m), 0.0, 1.0) ** 2
        coast = np.exp(-ramp_c * (6.0 / Lc) * dx)  # (B, nx, ny)

    rows_keep = np.arange(nx) if keep is None else np.unique(np.asarray(keep, dtype=np.intp))
    if rows_keep.size and (rows_keep.min() < 0 or rows_keep.max() >= nx):
        raise InvalidInput(f"`keep` rows must lie in 0..{nx - 1}")
    out = np.zeros((B, rows_keep.size, ny), dtype=complex)
    kpos = {int(r): i for i, r in enumerate(rows_keep)}
    if 0 in kpos:
        out[:, kpos[0], :] = a

    a0, a1, b1 = aperture.a0, aperture.a1, aperture.b1
    n_all = B * ny
    ky = math.pi * np.arange(ny) / (ny * dy)  # DCT-II lateral wavenumbers [rad/m]
    ab = np.zeros((3, n_all), dtype=complex)
    for n in range(nx - 1):
        km = 0.5 * (k[:, n] + k[:, n + 1])
        pm = 0.5 * (p[:, n] + p[:, n + 1])
        kb = 0.5 * (kbar[:, n] + kbar[:, n + 1])[:, None]
        # lateral operators in symmetric form, X = (1/(k p)) ∂y((p/k) ∂y): coefficients at half
        # nodes, no flux at the ends. Weighted by k·p = ω·Cg both M and R are symmetric, so
        # Crank–Nicolson conserves the energy flux Σ Cg|A|² wherever M stays positive (the
        # evanescent filter below keeps the modes beyond the rational form's pole empty); the
        # small-angle case is exactly the (C Cg A_y)_y / (2k C Cg) term of Kirby & Dalrymple (1983)
        alpha = a0 * km - kb  # (B, ny)
        if nonlinear_amplitude_m is not None:
            alpha = alpha - stokes[:, n] * (nonlinear_amplitude_m * np.abs(a)) ** 2
        beta = -(a1 * km - b1 * kb)  # R = i(α + (1/(k p))∂y((β p/k) ∂y))
        w = pm * km
        q = pm / km
        lo, up = _lateral(q, w, dy)
        lob, upb = _lateral(beta * q, w, dy)
        dg, dgb = -(lo + up), -(lob + upb)
        hdx = 0.5j * dx
        # M = I − b1 X;  (M − dx/2 R) A⁺ = (M + dx/2 R) A
        ld = -b1 * lo - hdx * lob
        dd = 1.0 - b1 * dg - hdx * (alpha + dgb)
        ud = -b1 * up - hdx * upb
        lr = -b1 * lo + hdx * lob
        dr = 1.0 - b1 * dg + hdx * (alpha + dgb)
        ur = -b1 * up + hdx * upb
        rhs = dr * a
        rhs[:, 1:] += lr[:, 1:] * a[:, :-1]
        rhs[:, :-1] += ur[:, :-1] * a[:, 1:]
        # banded storage of the stacked block-diagonal system (zero coupling across blocks)
        ab[0, :] = np.concatenate([np.zeros((B, 1)), ud[:, :-1]], axis=1).ravel()
        ab[1, :] = dd.ravel()
        ab[2, :] = np.concatenate([ld[:, 1:], np.zeros((B, 1))], axis=1).ravel()
        a = solve_banded((1, 1), ab, rhs.ravel(), check_finite=False, overwrite_b=True).reshape(B, ny)
        # evanescent filter: lateral wavenumbers beyond the row's largest k decay as the full
        # Helmholtz operator makes them, exp(−dx √(ky² − k²)); the rational approximations
        # would instead carry them on as grid-scale noise (a jump at a breakwater tip or a coast
        # excites them). Even extension (DCT-II) matches the no-flux ends.
        if filter_wavenumber is None:
            kmax = np.max(np.where(water[:, n + 1], k[:, n + 1], 0.0), axis=1, keepdims=True)
            kmax = np.where(kmax > 0, kmax, np.max(km, axis=1, keepdims=True))
        else:
            kmax = float(filter_wavenumber)
        damp = np.exp(-dx * np.sqrt(np.maximum(ky * ky - kmax * kmax, 0.0)))
        a = idct(dct(a, type=2, axis=1, norm="ortho") * damp, type=2, axis=1, norm="ortho")
        # exact 1-D energy-flux conservation along x (split step), the plane wave likewise
        shoal = np.sqrt(cg[:, n] / cg[:, n + 1])
        a *= shoal
        a_free *= shoal * (1.0 + hdx * alpha) / (1.0 - hdx * alpha)
        wet = water[:, n + 1]
        if coast is not None:
            a *= coast[:, n + 1]
            a_free *= coast[:, n + 1]
        a[~wet] = 0.0
        a_free[~wet] = 0.0
        if sponge is not None:
            a = a_free + (a - a_free) * sponge
        if n + 1 in kpos:
            out[:, kpos[n + 1], :] = a
    return March(amplitude=out, rows=rows_keep, kbar=kbar, phase=phase)
