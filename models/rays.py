"""Vectorised wave-ray tracing over a `DepthGrid` (many rays, one numpy pass per step).

Ray equations in arclength s (θ = direction of travel, math angle, CCW from +x east):
    dx/ds = cos θ,  dy/ds = sin θ,  dθ/ds = (sin θ ∂C/∂x − cos θ ∂C/∂y) / C
(Munk & Arthur 1952). With C = C0·G(k0 h), G = tanh(kh), and ∇C = dC/dh ∇h this is
    dθ/ds = Q(k0 h)/h · (sin θ ∂h/∂x − cos θ ∂h/∂y),   Q = kh sech²kh / (tanh kh + kh sech²kh),
so one dimensionless table (in u = sqrt(k0 h), smooth down to h → 0) serves every period; it is
built once from the exact dispersion relation in `models.waves`. Travel times ∫ds/C (crests) and
∫ds/Cg (energy) are integrated alongside. Fixed-step classical RK4; the step is `step_m`, shortened
where the ray turns fast (at most `max_turn_rad` per step).

A ray traced *backwards* from a nearshore point is simply launched in the opposite (seaward)
direction. Each ray ends
    OPEN     depth > wave_base_fraction·L0 (the bottom no longer bends it), or it leaves the grid
             where the edge depth is >= `edge_min_depth`;
    BLOCKED  depth < `min_depth` (land, sheltering), or it leaves the grid through a shallow edge;
    LOST     step budget `max_steps` used up (counted, reported by the caller).
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.bathymetry import DepthGrid
from models.constants import TWO_PI, G
from models.errors import InvalidInput
from models.waves import group_velocity_ratio, wavenumber

__all__ = ["BLOCKED", "LOST", "OPEN", "RayResult", "dispersion_table", "trace_rays"]

OPEN, BLOCKED, LOST = 0, 1, 2

# Dimensionless table in u = sqrt(k0 h): columns [Q, u/G, u/(G n)], G = C/C0, n = Cg/C (all smooth
# in u down to 0, where G ~ u; the kernel divides by u).
_U_MAX = math.sqrt(60.0)  # k0 h = 60: tanh = 1 to machine precision
_NU = 12001
_H_FLOOR = 1e-3  # [m] depth floor inside the kernel (rays stop long before at `min_depth`)


def _build_table() -> tuple[NDArray[np.float64], float]:
    u = np.linspace(0.0, _U_MAX, _NU)
    y = np.maximum(u * u, 1e-12)
    # k0 h = y with k0 = ω²/g: take g = 1, ω = 1 so k0 = 1 and h = y
    f = np.full_like(y, 1.0 / TWO_PI)
    kh = wavenumber(f, y, g=1.0) * y
    t = np.tanh(kh)
    s2 = 1.0 - t * t
    q = kh * s2 / (t + kh * s2)
    n = group_velocity_ratio(f, y, g=1.0)
    tab = np.stack([q, u / t, u / (t * n)], axis=-1)
    tab[0] = [0.5, 1.0, 1.0]  # shallow-water limits at u = 0
    return np.ascontiguousarray(tab), _U_MAX / (_NU - 1)


_TABLE, _DU = _build_table()


def dispersion_table(k0h: ArrayLike) -> NDArray[np.float64]:
    """Interpolated [Q, C0/C, C0/Cg] at k0·h (the kernel's lookup; exposed for tests)."""
    u = np.sqrt(np.clip(np.asarray(k0h, dtype=float), 1e-12, _U_MAX**2))
    tab = _lookup(u)
    tab[..., 1:] /= u[..., None]
    return tab


def _lookup(u: NDArray[np.float64]) -> NDArray[np.float64]:
    fu = np.minimum(u * (1.0 / _DU), _NU - 1.000001)
    i = fu.astype(np.intp)
    t = (fu - i)[..., None]
    return _TABLE[i] * (1.0 - t) + _TABLE[i + 1] * t


class RayResult(NamedTuple):
    """End state of each ray (arrays of shape (n,)); angles in math radians, lengths in metres.

    `theta` is the direction of travel at the end (for a backward-traced ray: pointing away from
    the target, so the wave there comes FROM `theta`). `depth` is the depth where the ray ended
    (the exit depth). `path` is (n_iter + 1, n, 2) positions when asked for, else None.
    """

    status: NDArray[np.int8]
    x: NDArray[np.float64]
    y: NDArray[np.float64]
    theta: NDArray[np.float64]
    depth: NDArray[np.float64]
    length: NDArray[np.float64]
    crest_time: NDArray[np.float64]
    energy_time: NDArray[np.float64]
    steps: NDArray[np.int64]
    path: NDArray[np.float64] | None = None

    @property
    def n_open(self) -> int:
        return int(np.count_nonzero(self.status == OPEN))

    @property
    def n_blocked(self) -> int:
        return int(np.count_nonzero(self.status == BLOCKED))

    @property
    def n_lost(self) -> int:
        return int(np.count_nonzero(self.status == LOST))


def _positive(name: str, v: float, *, allow_inf: bool = False) -> float:
    ok = isinstance(v, int | float | np.floating | np.integer) and v > 0 and (allow_inf or math.isfinite(v))
    if not ok:
        raise InvalidInput(f"`{name}` must be a positive number, got {v!r}")
    return float(v)


def trace_rays(
    grid: DepthGrid,
    x: ArrayLike,
    y: ArrayLike,
    theta: ArrayLike,
    period_s: ArrayLike,
    *,
    g: float = G,
    min_depth: float = 0.5,
    wave_base_fraction: float = 0.5,
    edge_min_depth: float = 20.0,
    step_m: float | None = None,
    max_turn_rad: float = 0.05,
    adaptive: bool = True,
    max_steps: int = 20000,
    record_path: bool = False,
) -> RayResult:
    """Trace rays from (x, y) [m] heading `theta` [rad, math] for wave period `period_s` [s].

    All four broadcast to one shape (n,). `step_m` defaults to the smaller grid spacing;
    `adaptive=False` keeps every step exactly `step_m` (used by reversibility checks).
    `wave_base_fraction=np.inf` disables the wave-base stop. See the module docstring for fates.
    """
    x, y, theta, period = (np.array(a, dtype=float).ravel() for a in np.broadcast_arrays(x, y, theta, period_s))
    for name, a in (("x", x), ("y", y), ("theta", theta)):
        if not np.all(np.isfinite(a)):
            raise InvalidInput(f"`{name}` must be finite, got {a[~np.isfinite(a)][0]!r}")
    if np.any(~np.isfinite(period) | (period <= 0)):
        raise InvalidInput(f"`period_s` must be positive and finite [s], got {period[~(period > 0)][0]!r}")
    g = _positive("g", g)
    min_depth = _positive("min_depth", min_depth)
    wave_base_fraction = _positive("wave_base_fraction", wave_base_fraction, allow_inf=True)
    edge_min_depth = _positive("edge_min_depth", edge_min_depth)
    step = _positive("step_m", min(grid.dx, grid.dy) if step_m is None else step_m)
    max_turn_rad = _positive("max_turn_rad", max_turn_rad)
    if not isinstance(max_steps, int | np.integer) or max_steps < 1:
        raise InvalidInput(f"`max_steps` must be a positive integer, got {max_steps!r}")
    outside = ~grid.contains(x, y)
    if np.any(outside):
        k = int(np.flatnonzero(outside)[0])
        raise InvalidInput(f"ray start ({x[k]!r}, {y[k]!r}) [m] is off the grid (ray {k})")

    n = x.size
    omega = TWO_PI / period
    k0_all = omega * omega / g
    c0_all = g / omega
    base_all = wave_base_fraction * TWO_PI / k0_all  # wave-base depth [m]
    xmin, xmax, ymin, ymax = grid.extent

    out_status = np.full(n, LOST, dtype=np.int8)
    out = {k: np.zeros(n) for k in ("x", "y", "theta", "depth", "length", "ct", "et")}
    out_steps = np.zeros(n, dtype=np.int64)

    idx = np.arange(n)
    X, Y, TH = x.copy(), y.copy(), theta.copy()
    S = np.zeros(n)
    TC = np.zeros(n)
    TE = np.zeros(n)
    k0, c0, base = k0_all, c0_all, base_all
    XP, YP, THP, SP, TCP, TEP, HP = X, Y, TH, S, TC, TE, np.zeros(n)  # state before the last step
    path = [np.stack([x, y], axis=-1)] if record_path else None

    def rhs(px, py, pth, k0v, c0v):
        smp = grid.sample(px, py)
        h = np.maximum(smp[:, 0], _H_FLOOR)
        u = np.sqrt(k0v * h)
        tab = _lookup(u)
        sn, cs = np.sin(pth), np.cos(pth)
        kap = tab[:, 0] / h * (sn * smp[:, 1] - cs * smp[:, 2])
        uc = u * c0v
        return cs, sn, kap, tab[:, 1] / uc, tab[:, 2] / uc, smp[:, 0]

    def finish(sel, status, depth):
        r = idx[sel]
        out_status[r] = status
        out["x"][r], out["y"][r], out["theta"][r] = X[sel], Y[sel], TH[sel]
        out["depth"][r], out["length"][r], out["ct"][r], out["et"][r] = depth, S[sel], TC[sel], TE[sel]
        out_steps[r] = it

    it = 0
    while idx.size:
        c1, s1, kap1, ic1, ie1, h1 = rhs(X, Y, TH, k0, c0)
        blocked = h1 < min_depth
        opened = ~blocked & (h1 > base)
        lost = ~blocked & ~opened & (it >= max_steps)
        done = blocked | opened | lost
        if np.any(done):
            finish(blocked, BLOCKED, h1[blocked])
            if np.any(opened):
                # end exactly at the wave base (linear within the last step), so neighbouring rays
                # end alike and the direction mapping has no step-count kinks
                with np.errstate(divide="ignore", invalid="ignore"):
                    fr = np.clip((base - HP) / (h1 - HP), 0.0, 1.0)
                fr = np.where(opened & (it > 0) & np.isfinite(fr), fr, 1.0)
                for A, Ap in ((X, XP), (Y, YP), (TH, THP), (S, SP), (TC, TCP), (TE, TEP)):
                    A[opened] = Ap[opened] + fr[opened] * (A[opened] - Ap[opened])
                h1 = np.where(opened & (it > 0), np.minimum(h1, base), h1)
            finish(opened, OPEN, h1[opened])
            finish(lost, LOST, h1[lost])
            keep = ~done
            idx = idx[keep]
            X, Y, TH, S, TC, TE = X[keep], Y[keep], TH[keep], S[keep], TC[keep], TE[keep]
            k0, c0, base = k0[keep], c0[keep], base[keep]
            XP, YP, THP, SP, TCP, TEP, HP = (a[keep] for a in (XP, YP, THP, SP, TCP, TEP, HP))
            c1, s1, kap1, ic1, ie1, h1 = c1[keep], s1[keep], kap1[keep], ic1[keep], ie1[keep], h1[keep]
            if not idx.size:
                break
        if adaptive:
            ds = np.clip(max_turn_rad / np.maximum(np.abs(kap1), 1e-30), step / 20.0, step)
        else:
            ds = np.full(idx.size, step)
        hs = 0.5 * ds
        c2, s2, kap2, ic2, ie2, _ = rhs(X + hs * c1, Y + hs * s1, TH + hs * kap1, k0, c0)
        c3, s3, kap3, ic3, ie3, _ = rhs(X + hs * c2, Y + hs * s2, TH + hs * kap2, k0, c0)
        c4, s4, kap4, ic4, ie4, _ = rhs(X + ds * c3, Y + ds * s3, TH + ds * kap3, k0, c0)
        w = ds / 6.0
        dX = w * (c1 + 2.0 * (c2 + c3) + c4)
        dY = w * (s1 + 2.0 * (s2 + s3) + s4)
        X1, Y1 = X + dX, Y + dY
        TH0 = TH
        TH = TH + w * (kap1 + 2.0 * (kap2 + kap3) + kap4)
        dTC = w * (ic1 + 2.0 * (ic2 + ic3) + ic4)
        dTE = w * (ie1 + 2.0 * (ie2 + ie3) + ie4)
        it += 1
        out_x = (X1 < xmin) | (X1 > xmax) | (Y1 < ymin) | (Y1 > ymax)
        if np.any(out_x):
            # cut the last step at the edge (linear), then end the ray there
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                fr = np.ones(idx.size)
                for lim, v0, dv in ((xmin, X, dX), (xmax, X, dX), (ymin, Y, dY), (ymax, Y, dY)):
                    f = (lim - v0) / dv
                    fr = np.where((f >= 0) & (f < fr), f, fr)
            fr = np.where(out_x, fr, 1.0)
            X1, Y1 = X + fr * dX, Y + fr * dY
            X1 = np.clip(X1, xmin, xmax)
            Y1 = np.clip(Y1, ymin, ymax)
            dTC, dTE, ds = fr * dTC, fr * dTE, fr * ds
        XP, YP, THP, SP, TCP, TEP, HP = X, Y, TH0, S, TC, TE, h1
        X, Y = X1, Y1
        S = S + ds
        TC = TC + dTC
        TE = TE + dTE
        if path is not None:
            p = np.full((n, 2), np.nan)
            p[idx, 0], p[idx, 1] = X, Y
            path.append(p)
        if np.any(out_x):
            he = grid.depth_at(X[out_x], Y[out_x])
            ok = he >= edge_min_depth
            sel = np.flatnonzero(out_x)
            m_open = np.zeros(idx.size, dtype=bool)
            m_block = np.zeros(idx.size, dtype=bool)
            m_open[sel[ok]] = True
            m_block[sel[~ok]] = True
            finish(m_open, OPEN, he[ok])
            finish(m_block, BLOCKED, he[~ok])
            keep = ~out_x
            idx = idx[keep]
            X, Y, TH, S, TC, TE = X[keep], Y[keep], TH[keep], S[keep], TC[keep], TE[keep]
            k0, c0, base = k0[keep], c0[keep], base[keep]
            XP, YP, THP, SP, TCP, TEP, HP = (a[keep] for a in (XP, YP, THP, SP, TCP, TEP, HP))

    return RayResult(
        status=out_status,
        x=out["x"],
        y=out["y"],
        theta=out["theta"],
        depth=out["depth"],
        length=out["length"],
        crest_time=out["ct"],
        energy_time=out["et"],
        steps=out_steps,
        path=np.stack(path) if path is not None else None,
    )
