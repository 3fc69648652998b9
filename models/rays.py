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
    OPEN     it leaves the grid through an open-ocean edge (`open_edges`) where the depth is at
             least min(`edge_min_depth`, wave base), and, if it is still short of its wave base
             there, Snell's law over the contours extended beyond the edge lets it reach deep
             water (it heads seaward and is not trapped along the coast). Such a ray is
             *continued*: beyond the edge the contours are taken straight and parallel, in the
             direction of a plane fitted over a km-long strip of the edge (straight on where that
             bottom is flat; `models.edges`), and Snell's law sin α0 / C0 = sin αe / Ce
             (Munk & Arthur 1952) gives its deep-water direction `offshore_theta`; `continued`
             marks it. A ray whose deep-water direction crosses a coast that reaches an edge
             (continued straight beyond it) would have come over land and is blocked;
    BLOCKED  depth < `min_depth` (land, sheltering); or a bottom slope steeper than `max_slope`
             (default 1:3, about where the mild-slope approximation behind ray refraction stops
             holding, Booij 1983, from memory): a cliff, jetty or island wall, which a grid can
             only show as a one-cell ramp, reflects or breaks the wave rather than bending it
             round (without this, rays grazing such a ramp refract into its shadow); or it
             leaves the grid through a shallow spot or an edge that is not open ocean;
    LOST     step budget `max_steps` used up (counted, reported by the caller);
    PASSED   it left the grid where `pass_through(x, y)` is true (a coarser grid around this one
             takes it on): its state at the exit point is returned, to be traced further there.
Beyond the wave base (depth > wave_base_fraction·L0, common practice: half the deep-water
wavelength) the bottom no longer bends a ray, so its offshore direction and exit state are taken
where it crossed the wave base. It is not declared open there, though: it goes on in a straight
line (one depth sample per step, no RK4) to check that open ocean is actually reachable. A ray
that reaches the wave base inside a sheltered basin and would run into an island or headland
further out is blocked, not open; one that runs back into shallower water (a shoal, a ridge)
refracts again and its later wave-base crossing counts.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Collection
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.bathymetry import DepthGrid
from models.constants import TWO_PI, G
from models.edges import EDGES, continue_to_deep
from models.errors import InvalidInput
from models.waves import group_velocity_ratio, wavenumber

__all__ = ["BLOCKED", "EDGES", "LOST", "OPEN", "PASSED", "RayResult", "dispersion_table", "trace_rays"]

OPEN, BLOCKED, LOST, PASSED = 0, 1, 2, 3

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
    (the exit depth). `offshore_theta` is the direction in deep water: `theta`, except for open
    rays that left an edge short of their wave base (`continued`), where it follows from Snell's
    law over straight contours beyond the edge. `path` is (n_iter + 1, n, 2) positions when
    asked for, else None.
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
    offshore_theta: NDArray[np.float64]
    continued: NDArray[np.bool_]
    path: NDArray[np.float64] | None = None
    straight: NDArray[np.bool_] | None = None  # continued straight on beyond a flat edge strip

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


def _edge_names(open_edges) -> NDArray[np.bool_]:
    """Boolean (4,) over EDGES: which grid edges count as open ocean (None: all four)."""
    if open_edges is None:
        return np.ones(4, dtype=bool)
    names = [open_edges] if isinstance(open_edges, str) else list(open_edges)
    bad = [e for e in names if e not in EDGES]
    if bad:
        raise InvalidInput(f"`open_edges` must name edges among {EDGES}, got {bad!r}")
    return np.array([e in names for e in EDGES])


def _edge_of(x: NDArray[np.float64], y: NDArray[np.float64], extent) -> NDArray[np.intp]:
    """Index into EDGES of the edge each point (on the grid's boundary) lies on."""
    xmin, xmax, ymin, ymax = extent
    dist = np.stack([y - ymin, ymax - y, x - xmin, xmax - x], axis=-1)
    return np.argmin(np.abs(dist), axis=-1)


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
    open_edges: Collection[str] | None = None,
    max_slope: float = 1.0 / 3.0,
    step_m: float | None = None,
    max_turn_rad: float = 0.05,
    adaptive: bool = True,
    max_steps: int = 20000,
    record_path: bool = False,
    pass_through: Callable[[NDArray[np.float64], NDArray[np.float64]], NDArray[np.bool_]] | None = None,
) -> RayResult:
    """Trace rays from (x, y) [m] heading `theta` [rad, math] for wave period `period_s` [s].

    All four broadcast to one shape (n,). `step_m` defaults to the smaller grid spacing;
    `adaptive=False` keeps every step exactly `step_m` (used by reversibility checks).
    `wave_base_fraction=np.inf` disables the wave-base test. `open_edges` names the grid edges
    that are open ocean (see `DepthGrid.deep_edges(...).open_edges()`; None: all four). See the
    module docstring for fates. `pass_through(x, y)` (vectorised) marks exit points where
    rays are handed on to an enclosing grid (status PASSED, state at the exit point).
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
    max_slope = _positive("max_slope", max_slope, allow_inf=True)
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
    edge_depth_all = np.minimum(edge_min_depth, base_all)
    xmin, xmax, ymin, ymax = grid.extent
    edge_open = _edge_names(open_edges)

    out_status = np.full(n, LOST, dtype=np.int8)
    out = {k: np.zeros(n) for k in ("x", "y", "theta", "length", "ct", "et", "depth", "theta0")}
    out_cont = np.zeros(n, dtype=bool)
    out_straight = np.zeros(n, dtype=bool)
    out_steps = np.zeros(n, dtype=np.int64)

    # Active-ray state, columns x, y, theta, s, crest time, energy time. `prev` is the state before
    # the last step (depth `hp`); `saved` the state where the ray last crossed its wave base
    # seaward (depth `hsv`), which is what an open end reports for a ray that was then deep.
    idx = np.arange(n)
    st = np.stack([x, y, theta, np.zeros(n), np.zeros(n), np.zeros(n)], axis=-1)
    prev = st.copy()
    hp = np.zeros(n)
    saved = st.copy()
    hsv = np.zeros(n)
    deep = np.zeros(n, dtype=bool)
    h_deep = np.zeros(n)  # depth at the current point of a deep ray (sampled after its step)
    k0, c0, base, edge_depth = k0_all, c0_all, base_all, edge_depth_all
    path = [np.stack([x, y], axis=-1)] if record_path else None

    def rhs(px, py, pth, k0v, c0v):
        smp = grid.sample(px, py)
        h = np.maximum(smp[:, 0], _H_FLOOR)
        u = np.sqrt(k0v * h)
        tab = _lookup(u)
        sn, cs = np.sin(pth), np.cos(pth)
        kap = tab[:, 0] / h * (sn * smp[:, 1] - cs * smp[:, 2])
        uc = u * c0v
        return np.stack([cs, sn, kap, tab[:, 1] / uc, tab[:, 2] / uc], axis=-1), smp

    def finish(sel, status, state, depth, theta0=None, cont=None, straight=None):
        r = idx[sel]
        out_status[r] = status
        s = state[sel]
        for j, key in enumerate(("x", "y", "theta", "length", "ct", "et")):
            out[key][r] = s[:, j]
        out["depth"][r] = depth[sel]
        out["theta0"][r] = s[:, 2] if theta0 is None else theta0[sel]
        if cont is not None:
            out_cont[r] = cont[sel]
            out_straight[r] = straight[sel]
        out_steps[r] = it

    it = 0
    while idx.size:
        # a deep ray that runs back into water shallower than its wave base refracts again
        deep &= h_deep > base
        ref = np.flatnonzero(~deep)
        h = h_deep.copy()
        k1 = np.zeros((idx.size, 5))
        k1[ref], smp1 = rhs(st[ref, 0], st[ref, 1], st[ref, 2], k0[ref], c0[ref])
        h[ref] = smp1[:, 0]
        blocked = h < min_depth
        # a face steeper than `max_slope` is a wall to ray theory (reflects or breaks the wave)
        blocked[ref] |= np.hypot(smp1[:, 1], smp1[:, 2]) > max_slope
        lost = ~blocked & (it >= max_steps)
        gone = blocked | lost
        if np.any(gone):
            finish(blocked, BLOCKED, st, h)
            finish(lost, LOST, st, h)
            keep = ~gone
            idx, st, prev, hp, saved, hsv, deep, h_deep, k0, c0, base, edge_depth, k1, h = (
                a[keep] for a in (idx, st, prev, hp, saved, hsv, deep, h_deep, k0, c0, base, edge_depth, k1, h)
            )  # fmt: skip
            if not idx.size:
                break
        cross = ~deep & (h > base)
        if np.any(cross):
            # crossing the wave base seaward: keep the crossing point (linear within the last step,
            # so neighbouring rays end alike and the direction mapping has no step-count kinks)
            c = np.flatnonzero(cross)
            if it > 0:
                with np.errstate(divide="ignore", invalid="ignore"):
                    fr = np.clip((base[c] - hp[c]) / (h[c] - hp[c]), 0.0, 1.0)
                fr = np.where(np.isfinite(fr), fr, 1.0)
                saved[c] = prev[c] + fr[:, None] * (st[c] - prev[c])
                hsv[c] = np.minimum(h[c], base[c])
            else:
                saved[c] = st[c]
                hsv[c] = h[c]
            deep[c] = True
            h_deep[c] = h[c]
        prev, hp = st, h
        new = st.copy()
        dsv = np.full(idx.size, step)
        # refracting rays: classical RK4
        r = np.flatnonzero(~deep)
        if r.size:
            X, Y, TH = st[r, 0], st[r, 1], st[r, 2]
            a1 = k1[r]
            kv, cv = k0[r], c0[r]
            if adaptive:
                ds = np.clip(max_turn_rad / np.maximum(np.abs(a1[:, 2]), 1e-30), step / 20.0, step)
            else:
                ds = np.full(r.size, step)
            hs = 0.5 * ds
            a2, _ = rhs(X + hs * a1[:, 0], Y + hs * a1[:, 1], TH + hs * a1[:, 2], kv, cv)
            a3, _ = rhs(X + hs * a2[:, 0], Y + hs * a2[:, 1], TH + hs * a2[:, 2], kv, cv)
            a4, _ = rhs(X + ds * a3[:, 0], Y + ds * a3[:, 1], TH + ds * a3[:, 2], kv, cv)
            inc = (ds / 6.0)[:, None] * (a1 + 2.0 * (a2 + a3) + a4)
            new[r, 0] += inc[:, 0]
            new[r, 1] += inc[:, 1]
            new[r, 2] += inc[:, 2]
            new[r, 4] += inc[:, 3]
            new[r, 5] += inc[:, 4]
            dsv[r] = ds
        # deep rays: straight (no refraction beyond the wave base); only their path is checked
        # for land and for shoals that bring them back into refracting water
        d = np.flatnonzero(deep)
        if d.size:
            new[d, 0] += step * np.cos(st[d, 2])
            new[d, 1] += step * np.sin(st[d, 2])
            # times still run (they matter if the ray refracts again): C0/C, C0/Cg at this depth
            tab = _lookup(np.sqrt(k0[d] * np.maximum(h[d], _H_FLOOR)))
            new[d, 4] += step * tab[:, 1] / c0[d]
            new[d, 5] += step * tab[:, 2] / c0[d]
        new[:, 3] += dsv
        it += 1
        out_x = (new[:, 0] < xmin) | (new[:, 0] > xmax) | (new[:, 1] < ymin) | (new[:, 1] > ymax)
        if np.any(out_x):
            # cut the last step at the edge (linear), then end the ray there
            dlt = new - st
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                fr = np.ones(idx.size)
                for lim, col in ((xmin, 0), (xmax, 0), (ymin, 1), (ymax, 1)):
                    f = (lim - st[:, col]) / dlt[:, col]
                    fr = np.where((f >= 0) & (f < fr), f, fr)
            fr = np.where(out_x, fr, 1.0)
            new = st + fr[:, None] * dlt
            new[:, 0] = np.clip(new[:, 0], xmin, xmax)
            new[:, 1] = np.clip(new[:, 1], ymin, ymax)
        st = new
        if path is not None:
            p = np.full((n, 2), np.nan)
            p[idx] = st[:, :2]
            path.append(p)
        if d.size:
            h_deep[d] = grid.depth_at(st[d, 0], st[d, 1])
        if np.any(out_x):
            sel = np.flatnonzero(out_x)
            smp = grid.sample(st[sel, 0], st[sel, 1])
            he = smp[:, 0]
            side = _edge_of(st[sel, 0], st[sel, 1], grid.extent)
            u = np.sqrt(k0[sel] * np.maximum(he, _H_FLOOR))
            reach, th0, flat = continue_to_deep(grid, st[sel, 0], st[sel, 1], he, st[sel, 2], u / _lookup(u)[:, 1], side)
            ok = (he >= edge_depth[sel]) & edge_open[side] & (deep[sel] | reach)
            handed = np.zeros(sel.size, dtype=bool) if pass_through is None else pass_through(st[sel, 0], st[sel, 1])
            m_open = np.zeros(idx.size, dtype=bool)
            m_block = np.zeros(idx.size, dtype=bool)
            m_pass = np.zeros(idx.size, dtype=bool)
            m_open[sel[ok & ~handed]] = True
            m_block[sel[~ok & ~handed]] = True
            m_pass[sel[handed]] = True
            hx = np.zeros(idx.size)
            hx[sel] = he
            # a ray that was deep when it left reports its wave-base crossing, others the edge
            # (and their deep-water direction by Snell over the contours beyond it)
            dp = m_open & deep
            fin = np.where(dp[:, None], saved, st)
            cont = m_open & ~deep
            theta0 = fin[:, 2].copy()
            theta0[sel] = np.where(deep[sel], theta0[sel], th0)
            straight = np.zeros(idx.size, dtype=bool)
            straight[sel] = flat
            finish(m_open, OPEN, fin, np.where(dp, hsv, hx), theta0, cont, cont & straight)
            finish(m_block, BLOCKED, st, hx)
            finish(m_pass, PASSED, st, hx)
            keep = ~out_x
            idx, st, prev, hp, saved, hsv, deep, h_deep, k0, c0, base, edge_depth = (
                a[keep] for a in (idx, st, prev, hp, saved, hsv, deep, h_deep, k0, c0, base, edge_depth)
            )  # fmt: skip

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
        offshore_theta=out["theta0"],
        continued=out_cont,
        straight=out_straight,
        path=np.stack(path) if path is not None else None,
    )
