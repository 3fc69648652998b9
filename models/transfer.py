"""Transfer tables: offshore swell (period × direction) -> a nearshore reference point.

For every period, rays are launched from the reference point over the full circle and traced
backwards (`models.rays`). By Longuet-Higgins (1957), E(f,θ)·C·Cg is constant along a ray, so the
launch measure dβ that maps into offshore direction bin k (width Δθ0) gives

    K²(f, θ0_k) = (1/Δθ0) ∫_{β → bin k} (C·Cg)_exit / (C·Cg)_ref dβ,

with (C·Cg)_exit = C0·Cg0 = g²/(2ω²), deep water: a ray ends open at its wave-base crossing
(beyond it the bottom no longer matters, common practice) or where it leaves an open-ocean edge
short of it, and is then continued to deep water over straight contours beyond the edge (Snell;
see `models.rays`), which moves its offshore direction, not the invariant. Such directions are
marked per bin (`continued_fraction`: the share of the bin's energy carried by continued rays).
Each pair of neighbouring open rays is an *interval* [β_i, β_i+1] -> [θ0_i, θ0_i+1] whose measure
is spread uniformly over the offshore directions it covers (no ray-counting noise).

Adaptive launch refinement: the launch circle (spacing `launch_spacing_deg`) is subdivided up to
`refine_levels` times (factor 2 each, default 6: 1/64 of the spacing) wherever two neighbouring
rays end differently (open/blocked/lost) or their offshore directions differ by more than
`refine_jump_deg` (default `fold_jump_deg`). Shadow edges and the fans of rays that graze an island
tip are so resolved to the finest step. Pairs still split at the finest step (ends differ in
fate, or a jump > `fold_jump_deg`: the rays passed either side of an obstacle) carry no energy:
their measure (at most one finest step per edge) is reported per period in
`meta["unresolved_fraction_by_period"]`. Earlier versions gave each open end of a split pair
half the launch interval as a point mass at its own direction, so one stray ray between
blocked neighbours showed as an isolated "open" bin with K ≈ sqrt(Δβ/2/Δθ0·ratio) ≈ 0.25; now an
open arc always comes from resolved ray intervals (a beam that at least two rays share), so a
genuinely narrow gap stays open and a single unresolved ray opens nothing. Folds (caustics)
need nothing special: overlapping intervals add, and every bin stays finite.

Steep faces: a bottom steeper than `max_slope` (default 1:3) blocks rays (`models.rays`): a
gridded cliff or island wall is a one-cell ramp, and rays grazing it would otherwise refract
into its geometric shadow, leaking a few per cent of the energy into directions the wall blocks.

Directions at this module's edges are nautical FROM degrees (clockwise from north). An offshore
FROM direction of a backward ray is the bearing it is heading at its end.
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Callable, Sequence
from concurrent.futures import Executor
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.bathymetry import DepthGrid
from models.constants import G
from models.errors import InvalidInput
from models.rays import BLOCKED, EDGES, LOST, OPEN, PASSED, trace_rays
from models.surfzone import SurfProfile, extract_profile, profile_bearing
from models.waves import group_velocity, phase_speed

__all__ = [
    "DEFAULT_PERIODS_S",
    "ENGINE_VERSION",
    "NearshoreSpectrum",
    "TransferTable",
    "apply",
    "build_table",
    "arrivals",
    "build_tables",
    "input_hash",
    "prepare",
    "reference_point",
    "swell_window",
    "wave_base_period_s",
]

# 3: tables carry the surf-zone depth profile (models.surfzone); 4: rays leaving an edge short of the
# wave base are continued to deep water (Snell), the invariant is read as C0·Cg0, regional grids;
# 5: the contours beyond an edge come from plane fits over km-long strips, coasts that reach an
# edge go on beyond it (models.edges); 6: beyond a flat edge strip rays go on straight (no
# contours to refract over) and read the invariant as Ce·Cg0
ENGINE_VERSION = "shoalcast-rays-6"

# 32 periods, 4-25 s, geometric spacing (finer where short-period swell changes fastest)
DEFAULT_PERIODS_S = np.round(np.geomspace(4.0, 25.0, 32), 3)

_SCALARS = ("reference_depth_m", "reference_x", "reference_y", "lost_fraction")


def _nautical_to_math(deg: ArrayLike) -> NDArray[np.float64]:
    """Bearing (nautical, clockwise from north) -> math angle (CCW from east) of the same vector [rad]."""
    return np.radians(90.0 - np.asarray(deg, dtype=float))


def _math_to_nautical(rad: ArrayLike) -> NDArray[np.float64]:
    return (90.0 - np.degrees(np.asarray(rad, dtype=float))) % 360.0


@dataclass(frozen=True, eq=False)
class TransferTable:
    """Per-break-point table on periods (np,) × offshore FROM direction bin centres (nd,).

    coefficient               K = H_ref / H_offshore (0 where nothing arrives)
    nearshore_direction_deg   energy-weighted mean FROM direction at the reference point (NaN if none)
    travel_time_s             crest arrival time at the reference point after a plane crest through
                              the local origin (x = y = 0), which travels at the exit phase speed
                              beyond the ray's end; comparable between points of one grid (peel)
    energy_travel_time_s      the same with group speed (energy)
    open_fraction             fraction of the bin's width covered by rays that reach the point
    continued_fraction        share of the bin's energy from rays continued beyond a grid edge
                              over assumed straight contours (0 where none; all 0 in tables
                              stored before it existed)
    lost_fraction             rays that used up the step budget / all rays (by period in
                              `lost_fraction_by_period`)
    profile                   the bed from the reference point to the shore along the direction the
                              arriving energy travels (`models.surfzone`), sampled once from the
                              grid the rays saw; None when there is none (nothing arrives, no shore
                              on the line, or a table from before engine 3)
    """

    periods_s: NDArray[np.float64]
    directions_deg: NDArray[np.float64]
    coefficient: NDArray[np.float64]
    nearshore_direction_deg: NDArray[np.float64]
    travel_time_s: NDArray[np.float64]
    energy_travel_time_s: NDArray[np.float64]
    open_fraction: NDArray[np.float64]
    lost_fraction_by_period: NDArray[np.float64]
    reference_depth_m: float
    reference_x: float
    reference_y: float
    lost_fraction: float
    meta: dict[str, Any] = field(default_factory=dict)
    profile: SurfProfile | None = None
    continued_fraction: NDArray[np.float64] | None = None

    def __post_init__(self) -> None:
        if self.continued_fraction is None:
            object.__setattr__(self, "continued_fraction", np.zeros(np.shape(self.coefficient)))

    @property
    def direction_bin_deg(self) -> float:
        return 360.0 / self.directions_deg.size

    def to_arrays(self) -> dict[str, Any]:
        """Arrays and scalars for storage; `meta` as a JSON string under "meta_json"."""
        out: dict[str, Any] = {
            k: np.asarray(getattr(self, k))
            for k in (
                "periods_s",
                "directions_deg",
                "coefficient",
                "nearshore_direction_deg",
                "travel_time_s",
                "energy_travel_time_s",
                "open_fraction",
                "lost_fraction_by_period",
                "continued_fraction",
            )
        }
        out.update({k: float(getattr(self, k)) for k in _SCALARS})
        out["meta_json"] = json.dumps(self.meta, sort_keys=True, default=float)
        if self.profile is not None:
            out.update(self.profile.to_arrays())
        return out

    @classmethod
    def from_arrays(cls, data: dict[str, Any]) -> TransferTable:
        """Inverse of `to_arrays` (missing keys raise InvalidInput naming them)."""
        names = [
            "periods_s", "directions_deg", "coefficient", "nearshore_direction_deg", "travel_time_s",
            "energy_travel_time_s", "open_fraction", "lost_fraction_by_period", *_SCALARS,
        ]  # fmt: skip
        missing = [k for k in names if k not in data]
        if missing:
            raise InvalidInput(f"`data` lacks {', '.join(missing)}")
        kw: dict[str, Any] = {k: np.asarray(data[k], dtype=float) for k in names[:8]}
        kw.update({k: float(data[k]) for k in _SCALARS})
        kw["meta"] = json.loads(data.get("meta_json", "{}"))
        kw["profile"] = SurfProfile.from_arrays(data)
        if "continued_fraction" in data:  # absent in tables stored before it existed
            kw["continued_fraction"] = np.asarray(data["continued_fraction"], dtype=float)
        t = cls(**kw)
        npd = (t.periods_s.size, t.directions_deg.size)
        for k in [*names[2:7], "continued_fraction"]:
            if getattr(t, k).shape != npd:
                raise InvalidInput(f"`{k}` has shape {getattr(t, k).shape}, expected {npd}")
        return t


# --------------------------------------------------------------------------- reference point


def reference_point(
    grid: DepthGrid,
    x_break: float,
    y_break: float,
    reference_depth_m: float,
    *,
    step_m: float | None = None,
) -> tuple[float, float, float]:
    """Walk seaward (up the depth gradient) from the break point to `reference_depth_m`.

    Returns (x, y, depth) with depth = `reference_depth_m` to interpolation accuracy (the break
    point itself when it is already that deep). Raises InvalidInput when the break point is on
    land or off the grid, or the walk meets a flat bottom / the grid edge first.
    """
    if not (isinstance(reference_depth_m, int | float | np.floating | np.integer) and reference_depth_m > 0):
        raise InvalidInput(f"`reference_depth_m` must be a positive depth [m], got {reference_depth_m!r}")
    xb, yb = float(x_break), float(y_break)
    if not (math.isfinite(xb) and math.isfinite(yb)) or not bool(grid.contains(xb, yb)):
        raise InvalidInput(f"break point ({x_break!r}, {y_break!r}) [m] is off the grid {grid.extent}")
    h = float(grid.depth_at(xb, yb))
    if h <= 0:
        raise InvalidInput(f"break point ({xb:.1f}, {yb:.1f}) [m] is on land (depth {h:.2f} m)")
    if h >= reference_depth_m:
        return xb, yb, h
    ds = 0.25 * min(grid.dx, grid.dy) if step_m is None else float(step_m)
    xmin, xmax, ymin, ymax = grid.extent
    nmax = int(4 * (xmax - xmin + ymax - ymin) / ds) + 10
    x, y = xb, yb
    for _ in range(nmax):
        s = grid.sample(x, y)
        gx, gy = float(s[1]), float(s[2])
        gn = math.hypot(gx, gy)
        if gn < 1e-9:
            break
        # midpoint step along the unit gradient (follows curved depth contours' normals)
        xm, ym = x + 0.5 * ds * gx / gn, y + 0.5 * ds * gy / gn
        sm = grid.sample(xm, ym)
        gn2 = math.hypot(float(sm[1]), float(sm[2]))
        if gn2 < 1e-9:
            break
        x1, y1 = x + ds * float(sm[1]) / gn2, y + ds * float(sm[2]) / gn2
        if not bool(grid.contains(x1, y1)):
            break
        h1 = float(grid.depth_at(x1, y1))
        if h1 >= reference_depth_m:
            f = (reference_depth_m - h) / (h1 - h) if h1 > h else 1.0
            xr, yr = x + f * (x1 - x), y + f * (y1 - y)
            return xr, yr, float(grid.depth_at(xr, yr))
        x, y, h = x1, y1, h1
    raise InvalidInput(
        f"reference depth {reference_depth_m} m is never reached walking seaward from the break point "
        f"({xb:.1f}, {yb:.1f}) [m] (stopped at ({x:.1f}, {y:.1f}), depth {h:.2f} m)"
    )


# --------------------------------------------------------------------------- table building


def _check_bins(name: str, v: float) -> int:
    if not (isinstance(v, int | float | np.floating | np.integer) and v > 0):
        raise InvalidInput(f"`{name}` must be a positive angle [deg], got {v!r}")
    n = round(360.0 / v)
    if abs(n * v - 360.0) > 1e-9 * 360:
        raise InvalidInput(f"`{name}` must divide 360 degrees, got {v!r}")
    return n


def _cdf_bin(lo, hi, q, nd: int, width: float) -> NDArray[np.float64]:
    """Spread each quantity q[:, c] uniformly over [lo, hi] (degrees, hi > lo, may pass 0/360);
    return per-bin sums (nd, ncol) on bins centred at k*width (cyclic)."""
    half = 0.5 * width
    length = hi - lo
    slope = q / length[:, None]
    pts = np.concatenate([lo, hi])
    dsl = np.concatenate([slope, -slope])
    order = np.argsort(pts, kind="stable")
    pts = pts[order]
    dsl = dsl[order]
    s1 = np.vstack([np.zeros((1, q.shape[1])), np.cumsum(dsl, axis=0)])
    s2 = np.vstack([np.zeros((1, q.shape[1])), np.cumsum(dsl * pts[:, None], axis=0)])
    edges = -half - 360.0 + width * np.arange(3 * nd + 1)
    pos = np.searchsorted(pts, edges, side="right")
    cdf = edges[:, None] * s1[pos] - s2[pos]
    return np.diff(cdf, axis=0).reshape(3, nd, -1).sum(axis=0)


def _point_bin(d, q, nd: int, width: float) -> NDArray[np.float64]:
    k = np.floor((d + 0.5 * width) / width).astype(np.intp) % nd
    return np.stack([np.bincount(k, weights=q[:, c], minlength=nd) for c in range(q.shape[1])], axis=-1)


def _wrap(d):
    return ((d + 180.0) % 360.0) - 180.0


def _map_period(status, d_off, beta_near, w, tc, te, cont, gap, unit: float, nd: int, width: float, fold: float, d_exit=None):
    """Interval mapping for one period. Inputs (nr,) in launch order (cyclic); `gap` (nr,) is the
    launch measure from each ray to the next in units of `unit` [deg]; `cont` (nr,) 1.0 for rays
    continued beyond an edge, `d_exit` (nr,) their direction where they left the grid [deg].
    Returns the per-bin sums (nd, 7: energy, its direction vector, crest and energy times,
    covered width, continued energy) and the unresolved launch measure [deg] (split pairs with
    an open end)."""
    nxt = np.roll(np.arange(status.size), -1)
    op = status == OPEN
    jump = _wrap(d_off[nxt] - d_off)
    bjump = _wrap(beta_near[nxt] - beta_near)
    regular = op & op[nxt] & (np.abs(jump) <= fold)
    lo_all = d_off + np.minimum(jump, 0.0)
    hi_all = d_off + np.maximum(jump, 0.0)
    if d_exit is not None:
        # Snell over straight contours only spreads a beam: dθ0/dθe = (C0/Ce)·cos αe / cos α0 > 1.
        # A pair of continued rays whose offshore interval is narrower than their exit interval
        # got it from contour normals that differ between the two (tube compression, a spurious
        # caustic near grazing incidence): it is spread over its exit interval's width instead.
        both = regular & (cont > 0.5) & (cont[nxt] > 0.5)
        ej = np.abs(_wrap(d_exit[nxt] - d_exit))
        narrow = both & (ej > np.abs(jump))
        mid = d_off + 0.5 * jump
        lo_all = np.where(narrow, mid - 0.5 * ej, lo_all)
        hi_all = np.where(narrow, mid + 0.5 * ej, hi_all)
    tiny = regular & (hi_all - lo_all < 1e-9)
    spread = regular & ~tiny
    meas = gap * unit

    # regular intervals: quantities at the interval middle
    a = np.flatnonzero(spread)
    b = nxt[a]
    lo = lo_all[a]
    hi = hi_all[a]
    wm = 0.5 * (w[a] + w[b])
    bm = np.radians(beta_near[a] + 0.5 * bjump[a])
    m = meas[a] * wm
    q = np.stack(
        [m, m * np.cos(bm), m * np.sin(bm), m * 0.5 * (tc[a] + tc[b]), m * 0.5 * (te[a] + te[b]), hi - lo,
         m * 0.5 * (cont[a] + cont[b])],
        axis=-1,
    )  # fmt: skip
    acc = _cdf_bin(lo, hi, q, nd, width) if a.size else np.zeros((nd, 7))

    # tiny intervals (both ends at one offshore direction): the whole measure at that direction
    t = np.flatnonzero(tiny)
    if t.size:
        pm = meas[t] * 0.5 * (w[t] + w[nxt[t]])
        br = np.radians(beta_near[t] + 0.5 * bjump[t])
        qp = np.stack(
            [pm, pm * np.cos(br), pm * np.sin(br), pm * tc[t], pm * te[t], np.zeros(t.size),
             pm * 0.5 * (cont[t] + cont[nxt[t]])],
            axis=-1,
        )  # fmt: skip
        acc = acc + _point_bin(d_off[t], qp, nd, width)
    # split pairs (ends differ in fate, or jump past `fold`) are left at the finest launch step:
    # their measure is not assigned to any direction (see the module docstring)
    unresolved = float(meas[~regular & (op | op[nxt])].sum())
    return acc, unresolved


def _trace_one(grid, x, y, theta, periods, opts, open_edges, step_m, outer):
    def passes(px, py):  # exit points that an enclosing (later) grid covers
        return np.any([g.contains(px, py) for g in outer], axis=0)

    return trace_rays(
        grid, x, y, theta, periods,
        g=opts["g"], min_depth=opts["min_depth"], wave_base_fraction=opts["wave_base_fraction"],
        edge_min_depth=opts["edge_min_depth"], open_edges=open_edges, max_slope=opts["max_slope"],
        step_m=step_m, max_turn_rad=opts["max_turn_rad"], max_steps=opts["max_steps"],
        pass_through=passes if outer else None,
    )  # fmt: skip


_ADDED = ("length", "crest_time", "energy_time", "steps")  # summed over the grids a ray crosses
_TAKEN = ("status", "x", "y", "theta", "depth", "offshore_theta", "continued", "straight")  # from its last grid


def _trace(grid, x_ref, y_ref, beta_rad, periods, opts):
    """Trace on the local grid, then hand the rays that leave it on to the regional grids
    (`opts["regional"]`, finest first): a ray goes on from its exit point, with its direction and
    travel so far, in the first later grid that covers that point, and ends there by the same
    rules (wave base, land, an open edge with continuation, or on to a coarser grid)."""
    regional = opts.get("regional") or ()
    levels = [(grid, opts["open_edges"], opts["step_m"])] + [(r["grid"], r["open_edges"], r["step_m"]) for r in regional]
    outer = [lv[0] for lv in levels]
    r = _trace_one(grid, x_ref, y_ref, beta_rad, periods, opts, levels[0][1], levels[0][2], outer[1:])
    if not regional:
        return r
    per = np.broadcast_to(np.asarray(periods, dtype=float), r.status.shape)
    out = {k: np.array(getattr(r, k)) for k in _ADDED + _TAKEN}
    for lev in range(1, len(levels)):
        g, open_edges, step = levels[lev]
        wait = np.flatnonzero(out["status"] == PASSED)
        here = wait[g.contains(out["x"][wait], out["y"][wait])]
        if not here.size:
            continue
        rr = _trace_one(g, out["x"][here], out["y"][here], out["theta"][here], per[here], opts, open_edges, step, outer[lev + 1 :])
        for k in _ADDED:
            out[k][here] += getattr(rr, k)
        for k in _TAKEN:
            out[k][here] = getattr(rr, k)
    out["status"][out["status"] == PASSED] = BLOCKED  # not reached: every exit a later grid covers is traced
    return r._replace(**out)


_RAY_FIELDS = ("status", "theta", "offshore_theta", "continued", "straight", "x", "y", "depth", "crest_time", "energy_time")


def _refined_rays(grid, x_ref, y_ref, periods, opts) -> list[dict[str, NDArray]]:
    """Rays per period on the base launch circle, then bisected `refine_levels` times wherever
    two neighbours differ in fate or in offshore direction by more than `refine_jump_deg`.
    Launch positions are integers `u` in units of the finest step (all periods in one trace per
    level)."""
    nb, L = opts["n_launch"], opts["refine_levels"]
    n_fine = nb << L
    unit = 360.0 / n_fine
    u0 = np.arange(nb, dtype=np.int64) << L
    r = _trace(grid, x_ref, y_ref, np.radians(unit * np.tile(u0, periods.size)), np.repeat(periods, nb), opts)
    per = [{"u": u0.copy(), **{k: getattr(r, k)[p * nb : (p + 1) * nb].copy() for k in _RAY_FIELDS}} for p in range(periods.size)]
    jlim = opts["refine_jump_deg"]
    # passes of up to three bisections at once (7 new rays per interval): fewer, larger traces
    left = L
    while left > 0:
        sub = 1 << min(3, left)
        left -= min(3, left)
        mids, owners = [], []
        for p, d in enumerate(per):
            st = d["status"]
            nxt = np.roll(np.arange(st.size), -1)
            gap = (d["u"][nxt] - d["u"]) % n_fine
            gap[gap == 0] = n_fine  # a single ray
            op = st == OPEN
            th0 = d["offshore_theta"]
            jump = np.abs(((np.degrees(th0[nxt] - th0) + 180.0) % 360.0) - 180.0)
            need = (gap > 1) & ((st != st[nxt]) | (op & op[nxt] & (jump > jlim)))
            k = np.flatnonzero(need)
            if k.size:
                # at most `sub` parts per interval, and never finer than the finest step
                parts = np.minimum(sub, gap[k])
                for j in range(1, sub):
                    ok = j < parts
                    mids.append((d["u"][k[ok]] + (gap[k[ok]] * j) // parts[ok]) % n_fine)
                    owners.append(np.full(int(ok.sum()), p))
        if not mids:
            break
        um = np.concatenate(mids)
        pm = np.concatenate(owners)
        rm = _trace(grid, x_ref, y_ref, np.radians(unit * um), periods[pm], opts)
        for p in np.unique(pm):
            sel = pm == p
            d = per[p]
            u = np.concatenate([d["u"], um[sel]])
            order = np.argsort(u, kind="stable")
            d["u"] = u[order]
            for key in _RAY_FIELDS:
                d[key] = np.concatenate([d[key], getattr(rm, key)[sel]])[order]
    return per


def _trace_table_rows(
    grid: DepthGrid,
    x_ref: float,
    y_ref: float,
    periods: NDArray[np.float64],
    opts: dict[str, Any],
) -> dict[str, NDArray[np.float64]]:
    """Trace and map one set of periods; rows of the table."""
    g = opts["g"]
    nd = opts["n_bins"]
    width = 360.0 / nd
    n_fine = opts["n_launch"] << opts["refine_levels"]
    unit = 360.0 / n_fine
    h_ref = float(grid.depth_at(x_ref, y_ref))
    per = _refined_rays(grid, x_ref, y_ref, periods, opts)
    coef = np.zeros((periods.size, nd))
    ndir = np.full((periods.size, nd), np.nan)
    tt = np.full((periods.size, nd), np.nan)
    et = np.full((periods.size, nd), np.nan)
    of = np.zeros((periods.size, nd))
    cf = np.zeros((periods.size, nd))
    lost = np.zeros(periods.size)
    blocked = np.zeros(periods.size)
    unresolved = np.zeros(periods.size)
    n_rays = np.zeros(periods.size)
    for p, T in enumerate(periods):
        d = per[p]
        st = d["status"]
        op = st == OPEN
        f = 1.0 / T
        he = np.where(op, np.maximum(d["depth"], 1e-3), 1.0)
        ce = phase_speed(f, he, g=g)
        cge = group_velocity(f, he, g=g)
        # the invariant E·C·Cg is read in deep water, C0·Cg0 = g²/(2ω²), for every open ray: those
        # past L0/2 (there C·Cg is still 1.6 % above it) and those continued beyond an edge
        c0cg0 = 0.5 * (g / (2.0 * math.pi * f)) ** 2
        w = np.full(st.size, c0cg0 / (phase_speed(f, h_ref, g=g) * group_velocity(f, h_ref, g=g)))
        # a ray continued straight on beyond a flat edge strip met the contours beyond square on:
        # Snell spreads its neighbours by dθ0/dθe = C0/Ce there, which its unbent deep-water
        # direction leaves out of the interval mapping, so the invariant carries it (Ks alone, Kr = 1)
        w = np.where(op & d["straight"], w * ce / (g / (2.0 * math.pi * f)), w)
        # plane-front reference through the origin: the wave travels toward -(cos θ, sin θ)
        proj = d["x"] * np.cos(d["theta"]) + d["y"] * np.sin(d["theta"])
        tc = d["crest_time"] - proj / ce
        te = d["energy_time"] - proj / cge
        nxt = np.roll(np.arange(st.size), -1)
        gap = (d["u"][nxt] - d["u"]) % n_fine
        gap[gap == 0] = n_fine
        # each ray stands for the launch measure halfway to its neighbours (fractions of the circle)
        share = 0.5 * (gap + np.roll(gap, 1)) / n_fine
        lost[p] = share[st == LOST].sum()
        blocked[p] = share[st == BLOCKED].sum()
        n_rays[p] = st.size
        acc, unresolved[p] = _map_period(
            st, _math_to_nautical(d["offshore_theta"]), _math_to_nautical(unit * d["u"] * (math.pi / 180.0)),
            w, tc, te, d["continued"].astype(float), gap, unit, nd, width, opts["fold_jump_deg"],
            _math_to_nautical(d["theta"]),
        )  # fmt: skip
        e = acc[:, 0]
        has = e > 1e-9 * unit  # below: round-off of the cumulative sums (an empty bin)
        e = np.where(has, e, 0.0)
        coef[p] = np.sqrt(np.maximum(e, 0.0) / width)
        # nearshore mean direction: circular mean of the math-angle unit vectors of the
        # nautical bearings (any consistent frame works: only the angle of the sum is kept)
        ang = np.degrees(np.arctan2(acc[:, 2], acc[:, 1])) % 360.0
        ndir[p] = np.where(has, ang, np.nan)
        with np.errstate(invalid="ignore", divide="ignore"):
            tt[p] = np.where(has, acc[:, 3] / e, np.nan)
            et[p] = np.where(has, acc[:, 4] / e, np.nan)
        of[p] = np.minimum(acc[:, 5] / width, 1.0)
        with np.errstate(invalid="ignore", divide="ignore"):
            cf[p] = np.where(has, np.clip(acc[:, 6] / e, 0.0, 1.0), 0.0)
    return {
        "coefficient": coef,
        "nearshore_direction_deg": ndir,
        "travel_time_s": tt,
        "energy_travel_time_s": et,
        "open_fraction": of,
        "continued_fraction": cf,
        "lost_fraction_by_period": lost,
        "blocked_fraction": blocked,
        "unresolved_fraction": unresolved / 360.0,
        "n_rays": n_rays,
    }


def prepare(grid: DepthGrid, **options: Any) -> tuple[DepthGrid, dict[str, Any]]:
    """The smoothed grid and the tracing options `build_tables` uses for these `options` (its
    keywords; `periods_s` is ignored), regional grids prepared: for callers that trace rays
    to points of their own (`arrivals`)."""
    defaults = dict(_DEFAULTS)
    unknown = set(options) - set(defaults) - {"periods_s"}
    if unknown:
        raise InvalidInput(f"unknown option(s) {sorted(unknown)!r}")
    defaults.update({k: v for k, v in options.items() if k != "periods_s"})
    opts = _options(grid, **defaults)
    return _prepared(grid, opts["smoothing_m"]), opts


def arrivals(
    grid: DepthGrid,
    x: ArrayLike,
    y: ArrayLike,
    offshore_deg: ArrayLike,
    period_s: float,
    opts: dict[str, Any],
    *,
    half_fan_deg: float = 50.0,
    fan_step_deg: float = 2.0,
    refine: int = 16,
) -> dict[str, NDArray[np.float64]]:
    """What the rays bring to each point (x[i], y[i]) in the direction bin centred on the offshore
    FROM direction offshore_deg[i], one period, on the grids and with the edge continuation of
    the tables (`grid`, `opts` from `prepare`): K with the tables' deep-water normalisation and
    bin (K² = C0·Cg0/(C·Cg) × launch measure mapped into the bin / bin width, the Longuet-Higgins
    invariant of `_map_period`), the FROM direction at the point [deg], crest and energy times
    [s] (plane-front reference through the origin, as the tables') and the share of the energy
    on rays continued beyond a grid edge over assumed straight contours, energy-weighted.

    A fan of backward rays every `fan_step_deg` within `half_fan_deg` of offshore_deg[i] is
    traced from each point, and each interval that changes fate or whose offshore span comes
    near the bin is split into `refine` parts (the continuation beyond a shallow edge stretches
    the mapping, as the tables' refinement allows for). Neighbours whose offshore directions
    differ by more than the fold jump count as single rays. Nothing arrives: K = 0, the rest NaN.
    """
    x, y, tgt = (np.asarray(a, dtype=float).ravel() for a in np.broadcast_arrays(x, y, offshore_deg))
    g = opts["g"]
    f = 1.0 / float(period_s)
    half_bin = 180.0 / opts["n_bins"]
    jump = float(opts["fold_jump_deg"])
    n = x.size

    def trace(owner, offs):
        r = _trace(grid, x[owner], y[owner], _nautical_to_math(tgt[owner] + offs), np.full(owner.size, float(period_s)), opts)
        he = np.where(r.status == OPEN, np.maximum(r.depth, 1e-3), 1.0)
        proj = r.x * np.cos(r.theta) + r.y * np.sin(r.theta)
        return {
            "own": owner, "offs": offs, "open": r.status == OPEN,
            "off": ((_math_to_nautical(r.offshore_theta) - tgt[owner] + 180.0) % 360.0) - 180.0,
            "tc": r.crest_time - proj / phase_speed(f, he, g=g), "te": r.energy_time - proj / group_velocity(f, he, g=g),
            "cont": r.continued.astype(float),
        }  # fmt: skip

    base = np.arange(-half_fan_deg, half_fan_deg + 0.5 * fan_step_deg, fan_step_deg)
    m = base.size
    c = trace(np.repeat(np.arange(n), m), np.tile(base, n))
    op, off = c["open"].reshape(n, m), c["off"].reshape(n, m)
    a, b = off[:, :-1], off[:, 1:]
    # refined: intervals whose offshore span straddles the bin, and fate changes next to it
    span = (np.minimum(a, b) <= half_bin) & (np.maximum(a, b) >= -half_bin)
    edge_of_fate = (op[:, :-1] != op[:, 1:]) & (np.minimum(np.where(op[:, :-1], np.abs(a), np.inf),
                                                             np.where(op[:, 1:], np.abs(b), np.inf)) <= half_bin + jump)
    need = edge_of_fate | (op[:, :-1] & op[:, 1:] & span)
    pi, ki = np.nonzero(need)
    parts = np.arange(1, refine) / refine
    fine = trace(np.repeat(pi, parts.size), (base[ki][:, None] + fan_step_deg * parts[None, :]).ravel())
    rays = {k: np.concatenate([c[k], fine[k]]) for k in c}
    h = np.maximum(grid.depth_at(x, y), 1e-3)
    w = 0.5 * (g / (2.0 * math.pi * f)) ** 2 / (phase_speed(f, h, g=g) * group_velocity(f, h, g=g))
    out = {key: np.full(n, np.nan) for key in ("from_deg", "crest_time_s", "energy_time_s")}
    out["K"] = np.zeros(n)
    out["continued_fraction"] = np.zeros(n)
    for i in range(n):
        sel = np.flatnonzero(rays["own"] == i)
        sel = sel[np.argsort(rays["offs"][sel], kind="stable")]
        o, d, ok = rays["offs"][sel], rays["off"][sel], rays["open"][sel]
        gap = np.diff(o)
        pa, pb = d[:-1], d[1:]
        pair = ok[:-1] & ok[1:] & (np.abs(pb - pa) <= jump)
        # launch measure of each interval mapped (linearly) into the bin
        lo, hi = np.minimum(pa, pb), np.maximum(pa, pb)
        over = np.clip(np.minimum(hi, half_bin) - np.maximum(lo, -half_bin), 0.0, None)
        with np.errstate(divide="ignore", invalid="ignore"):
            frac = np.where(hi > lo, over / (hi - lo), ((lo >= -half_bin) & (lo < half_bin)).astype(float))
        meas = np.where(pair, gap * frac, 0.0)
        # an open ray without an open neighbour within the fold jump on a side: half that gap
        lone = np.zeros(o.size)
        lone[:-1] += np.where(pair, 0.0, 0.5 * gap)
        lone[1:] += np.where(pair, 0.0, 0.5 * gap)
        per_ray = np.where(ok & (np.abs(d) < half_bin), lone, 0.0)
        per_ray[:-1] += 0.5 * meas
        per_ray[1:] += 0.5 * meas
        total = per_ray.sum()
        if not total > 0:
            continue
        out["K"][i] = math.sqrt(w[i] * total / (2.0 * half_bin))
        rad = np.radians(tgt[i] + o)
        out["from_deg"][i] = math.degrees(math.atan2((per_ray * np.sin(rad)).sum(), (per_ray * np.cos(rad)).sum())) % 360.0
        out["crest_time_s"][i] = (per_ray * np.where(ok, rays["tc"][sel], 0.0)).sum() / total
        out["energy_time_s"][i] = (per_ray * np.where(ok, rays["te"][sel], 0.0)).sum() / total
        out["continued_fraction"][i] = (per_ray * rays["cont"][sel]).sum() / total
    return out


_DEFAULTS: dict[str, Any] = dict(
    direction_bin_deg=2.0, launch_spacing_deg=0.25, smoothing_m=None, min_depth=0.5,
    edge_min_depth=20.0, open_edges=None, max_slope=1.0 / 3.0, wave_base_fraction=0.5, step_m=None, max_turn_rad=0.05,
    max_steps=20000, fold_jump_deg=10.0, refine_levels=6, refine_jump_deg=None, g=G, regional=(),
)  # fmt: skip


def _options(grid: DepthGrid, **kw: Any) -> dict[str, Any]:
    opts = dict(kw)
    opts["n_launch"] = _check_bins("launch_spacing_deg", kw["launch_spacing_deg"])
    opts["n_bins"] = _check_bins("direction_bin_deg", kw["direction_bin_deg"])
    sm = kw["smoothing_m"]
    if sm is None:
        sm = 2.0 * max(grid.dx, grid.dy)
    opts["smoothing_m"] = float(sm)
    if kw["step_m"] is None:
        opts["step_m"] = max(min(grid.dx, grid.dy), 0.5 * float(sm))
    if not (kw["fold_jump_deg"] > 0):
        raise InvalidInput(f"`fold_jump_deg` must be positive [deg], got {kw['fold_jump_deg']!r}")
    lv = kw["refine_levels"]
    if not (isinstance(lv, int | np.integer) and 0 <= lv <= 12):
        raise InvalidInput(f"`refine_levels` must be an integer 0..12, got {lv!r}")
    opts["refine_levels"] = int(lv)
    rj = kw["refine_jump_deg"]
    opts["refine_jump_deg"] = float(kw["fold_jump_deg"] if rj is None else rj)
    if not opts["refine_jump_deg"] > 0:
        raise InvalidInput(f"`refine_jump_deg` must be positive [deg], got {rj!r}")
    if kw["open_edges"] is None:
        # open ocean from the data: edges at least half of whose cells are edge_min_depth deep
        em = kw["edge_min_depth"]
        if not (isinstance(em, int | float | np.floating | np.integer) and em > 0):
            raise InvalidInput(f"`edge_min_depth` must be a positive depth [m], got {em!r}")
        opts["open_edges"] = grid.deep_edges(float(em)).open_edges()
    else:
        names = [kw["open_edges"]] if isinstance(kw["open_edges"], str) else list(kw["open_edges"])
        bad = [e for e in names if e not in EDGES]
        if bad:
            raise InvalidInput(f"`open_edges` must name edges among {EDGES}, got {bad!r}")
        opts["open_edges"] = names
    opts["regional"] = _regional(grid, kw.get("regional") or (), float(kw["edge_min_depth"]))
    return opts


def _regional(grid: DepthGrid, grids: Sequence[DepthGrid], edge_min_depth: float) -> list[dict[str, Any]]:
    """Regional grids around the local one, finest first, each smoothed by two of its cells (its
    own resolution; the smoothing length is kept in its meta) with open edges from its data."""
    out = []
    xmin, xmax, ymin, ymax = grid.extent
    for k, g in enumerate(grids):
        if not isinstance(g, DepthGrid):
            raise InvalidInput(f"`regional[{k}]` must be a DepthGrid, got {type(g).__name__}")
        gx0, gx1, gy0, gy1 = g.extent
        if gx1 <= xmin or gx0 >= xmax or gy1 <= ymin or gy0 >= ymax:
            raise InvalidInput(f"`regional[{k}]` {g.extent} does not overlap the local grid {grid.extent}")
        sm = float(g.meta.get("smoothing_m", 2.0 * max(g.dx, g.dy)))
        sg = _prepared(g, sm)
        out.append({"grid": sg, "smoothing_m": sm, "step_m": max(min(g.dx, g.dy), 0.5 * sm),
                    "open_edges": sg.deep_edges(edge_min_depth).open_edges(), "spacing": max(g.dx, g.dy)})  # fmt: skip
    out.sort(key=lambda r: r["spacing"])
    return out


def _prepared(grid: DepthGrid, smoothing_m: float) -> DepthGrid:
    if grid.meta.get("smoothing_m") == smoothing_m:
        return grid
    return grid.smoothed(smoothing_m)


def _periods(periods_s: ArrayLike) -> NDArray[np.float64]:
    p = np.asarray(periods_s, dtype=float).ravel()
    if p.size == 0 or not np.all(np.isfinite(p) & (p > 0)):
        raise InvalidInput(f"`periods_s` must be a non-empty list of positive periods [s], got {periods_s!r}")
    if np.any(np.diff(p) <= 0):
        raise InvalidInput("`periods_s` must be strictly increasing")
    return p


def build_table(
    grid: DepthGrid,
    x_ref: float,
    y_ref: float,
    *,
    periods_s: ArrayLike = DEFAULT_PERIODS_S,
    direction_bin_deg: float = 2.0,
    launch_spacing_deg: float = 0.25,
    smoothing_m: float | None = None,
    min_depth: float = 0.5,
    edge_min_depth: float = 20.0,
    open_edges: Sequence[str] | None = None,
    max_slope: float = 1.0 / 3.0,
    wave_base_fraction: float = 0.5,
    step_m: float | None = None,
    max_turn_rad: float = 0.05,
    max_steps: int = 20000,
    fold_jump_deg: float = 10.0,
    refine_levels: int = 6,
    refine_jump_deg: float | None = None,
    g: float = G,
    regional: Sequence[DepthGrid] = (),
) -> TransferTable:
    """Transfer table for the reference point (x_ref, y_ref) [m] (see the module docstring).

    `smoothing_m` (Gaussian standard deviation; default two grid cells) is applied to `grid`
    unless `grid.meta["smoothing_m"]` already equals it. `step_m` defaults to the larger of one
    cell and half the smoothing length. Rays end open where they leave the grid through an
    open-ocean edge (`open_edges`; default from the data: `grid.deep_edges(edge_min_depth)
    .open_edges()`) at least min(`edge_min_depth`, wave base) deep; beyond `wave_base_fraction`·L0
    (common practice: half the deep-water wavelength) they run straight and report their state
    at the wave base. Launch intervals are bisected `refine_levels` times where neighbours differ
    in fate or in offshore direction by more than `refine_jump_deg` (default: the bin width).
    `regional` are coarser grids around `grid` in the same local frame: rays leaving `grid` go on
    in them (see `_trace`); each is smoothed by two of its own cells.
    """
    periods = _periods(periods_s)
    opts = _options(
        grid, direction_bin_deg=direction_bin_deg, launch_spacing_deg=launch_spacing_deg,
        smoothing_m=smoothing_m, min_depth=min_depth, edge_min_depth=edge_min_depth,
        open_edges=open_edges, max_slope=max_slope, wave_base_fraction=wave_base_fraction, step_m=step_m,
        max_turn_rad=max_turn_rad, max_steps=max_steps, fold_jump_deg=fold_jump_deg,
        refine_levels=refine_levels, refine_jump_deg=refine_jump_deg, g=g, regional=regional,
    )  # fmt: skip
    sg = _prepared(grid, opts["smoothing_m"])
    x_ref, y_ref = float(x_ref), float(y_ref)
    if not bool(sg.contains(x_ref, y_ref)):
        raise InvalidInput(f"reference point ({x_ref!r}, {y_ref!r}) [m] is off the grid {sg.extent}")
    h_ref = float(sg.depth_at(x_ref, y_ref))
    if h_ref < min_depth:
        raise InvalidInput(f"reference point ({x_ref:.1f}, {y_ref:.1f}) [m] is too shallow or on land ({h_ref:.2f} m)")
    rows = _trace_table_rows(sg, x_ref, y_ref, periods, opts)
    return _assemble(periods, opts, sg, x_ref, y_ref, h_ref, [rows])


def _assemble(periods, opts, sg, x_ref, y_ref, h_ref, parts) -> TransferTable:
    cat = {k: np.concatenate([p[k] for p in parts]) for k in parts[0]}
    nd = opts["n_bins"]
    width = 360.0 / nd
    meta = {
        "engine_version": ENGINE_VERSION,
        "smoothing_m": opts["smoothing_m"],
        "launch_spacing_deg": float(opts["launch_spacing_deg"]),
        "direction_bin_deg": float(width),
        "step_m": float(opts["step_m"]),
        "min_depth_m": float(opts["min_depth"]),
        "edge_min_depth_m": float(opts["edge_min_depth"]),
        "wave_base_fraction": float(opts["wave_base_fraction"]),
        "fold_jump_deg": float(opts["fold_jump_deg"]),
        "refine_levels": int(opts["refine_levels"]),
        "max_slope": float(opts["max_slope"]),
        "refine_jump_deg": float(opts["refine_jump_deg"]),
        "open_edges": list(opts["open_edges"]),
        "max_steps": int(opts["max_steps"]),
        "g": float(opts["g"]),
        "regional_grids": [
            {"shape": list(r["grid"].shape), "spacing_m": [r["grid"].dx, r["grid"].dy], "smoothing_m": r["smoothing_m"],
             "step_m": r["step_m"], "open_edges": list(r["open_edges"])}
            for r in opts.get("regional") or ()
        ],  # fmt: skip
        "grid_shape": list(sg.shape),
        "grid_spacing_m": [sg.dx, sg.dy],
        "blocked_fraction_by_period": cat["blocked_fraction"].tolist(),
        "unresolved_fraction_by_period": cat["unresolved_fraction"].tolist(),
        "rays_by_period": cat["n_rays"].astype(int).tolist(),
    }
    lost = cat["lost_fraction_by_period"]
    profile = None
    bearing = profile_bearing(cat["coefficient"], cat["nearshore_direction_deg"])
    if bearing is None:
        meta["profile_note"] = "no surf-zone profile: nothing arrives at the reference point"
    else:
        try:
            profile = extract_profile(sg, x_ref, y_ref, bearing)
        except InvalidInput as exc:
            meta["profile_note"] = f"no surf-zone profile: {exc}"
    return TransferTable(
        periods_s=periods,
        directions_deg=width * np.arange(nd),
        coefficient=cat["coefficient"],
        nearshore_direction_deg=cat["nearshore_direction_deg"],
        travel_time_s=cat["travel_time_s"],
        energy_travel_time_s=cat["energy_travel_time_s"],
        open_fraction=cat["open_fraction"],
        continued_fraction=cat["continued_fraction"],
        lost_fraction_by_period=lost,
        reference_depth_m=h_ref,
        reference_x=x_ref,
        reference_y=y_ref,
        lost_fraction=float(lost.mean()),
        meta=meta,
        profile=profile,
    )


def _table_task(args: tuple) -> dict[str, NDArray[np.float64]]:
    """Picklable unit of work for executors: one point × one chunk of periods."""
    grid, x_ref, y_ref, periods, opts = args
    return _trace_table_rows(grid, x_ref, y_ref, periods, opts)


def build_tables(
    grid: DepthGrid,
    points: Sequence[tuple[float, float]],
    *,
    executor: Executor | None = None,
    period_chunks: int = 2,
    progress: Callable[[int, int], None] | None = None,
    **options: Any,
) -> list[TransferTable]:
    """Tables for several reference points of one grid, optionally on a concurrent.futures
    Executor (process pool, Dask `client.get_executor()`): work is split per point and into
    `period_chunks` chunks of periods. `options` are `build_table`'s keywords. `progress(done,
    total)` is called as chunks finish. Results are identical to `build_table` per point.
    """
    defaults = dict(_DEFAULTS, periods_s=DEFAULT_PERIODS_S)
    unknown = set(options) - set(defaults)
    if unknown:
        raise InvalidInput(f"unknown option(s) {sorted(unknown)!r}")
    defaults.update(options)
    periods = _periods(defaults.pop("periods_s"))
    opts = _options(grid, **defaults)
    sg = _prepared(grid, opts["smoothing_m"])
    refs = []
    for k, (x, y) in enumerate(points):
        x, y = float(x), float(y)
        if not bool(sg.contains(x, y)):
            raise InvalidInput(f"reference point {k} ({x!r}, {y!r}) [m] is off the grid {sg.extent}")
        h = float(sg.depth_at(x, y))
        if h < opts["min_depth"]:
            raise InvalidInput(f"reference point {k} ({x:.1f}, {y:.1f}) [m] is too shallow or on land ({h:.2f} m)")
        refs.append((x, y, h))
    # interleave chunks so each holds long and short periods (similar cost)
    nch = max(1, min(int(period_chunks), periods.size))
    chunks = [np.arange(c, periods.size, nch) for c in range(nch)]
    tasks = [(sg, x, y, periods[c], opts) for (x, y, _) in refs for c in chunks]
    if executor is None:
        results = []
        for i, t in enumerate(tasks):
            results.append(_table_task(t))
            if progress:
                progress(i + 1, len(tasks))
    else:
        futs = [executor.submit(_table_task, t) for t in tasks]
        results = []
        for i, fu in enumerate(futs):
            results.append(fu.result())
            if progress:
                progress(i + 1, len(tasks))
    tables = []
    order = np.argsort(np.concatenate(chunks))
    for k, (x, y, h) in enumerate(refs):
        parts = results[k * nch : (k + 1) * nch]
        cat = {key: np.concatenate([p[key] for p in parts])[order] for key in parts[0]}
        tables.append(_assemble(periods, opts, sg, x, y, h, [cat]))
    return tables


def wave_base_period_s(
    grids: Sequence[DepthGrid], *, edge_min_depth: float = 20.0, wave_base_fraction: float = 0.5, g: float = G
) -> float | None:
    """Longest period whose wave base the grids reach: h = wave_base_fraction·gT²/(2π) solved for T,
    with h the median depth of the open-ocean cells (>= `edge_min_depth`) along the open edges of
    the outermost grid (the coarsest; rays end on its edges). None when it has no open edge."""
    if not grids:
        raise InvalidInput("`grids` must hold at least one DepthGrid")
    outer = max(grids, key=lambda gr: max(gr.dx, gr.dy))
    masks = outer.deep_edges(edge_min_depth)
    d = outer.depth
    edge_depths = {"south": d[0, :], "north": d[-1, :], "west": d[:, 0], "east": d[:, -1]}
    cells = [edge_depths[e][getattr(masks, e)] for e in masks.open_edges()]
    if not cells:
        return None
    h = float(np.median(np.concatenate(cells)))
    return math.sqrt(2.0 * math.pi * h / (g * wave_base_fraction))


# --------------------------------------------------------------------------- applying a table


@dataclass(frozen=True, eq=False)
class NearshoreSpectrum:
    """Nearshore 1-D spectrum at the reference point: density (..., nf) [m²/Hz], energy-weighted
    mean FROM direction (..., nf) [deg, NaN where no energy], hs = 4·sqrt(m0) (trapezoid) (...)."""

    frequency_hz: NDArray[np.float64]
    density: NDArray[np.float64]
    mean_direction_deg: NDArray[np.float64]
    hs: NDArray[np.float64]


def _direction_matrix(src_deg: NDArray[np.float64], dst_deg: NDArray[np.float64]) -> NDArray[np.float64]:
    """A[k, j]: periodic linear interpolation from values on src directions to dst directions."""
    order = np.argsort(src_deg % 360.0)
    s = (src_deg % 360.0)[order]
    ext = np.concatenate([s[-1:] - 360.0, s, s[:1] + 360.0])
    jdx = np.concatenate([order[-1:], order, order[:1]])
    d = dst_deg % 360.0
    pos = np.clip(np.searchsorted(ext, d, side="right") - 1, 0, ext.size - 2)
    span = ext[pos + 1] - ext[pos]
    t = np.where(span > 0, (d - ext[pos]) / np.where(span > 0, span, 1.0), 0.0)
    A = np.zeros((dst_deg.size, src_deg.size))
    rows = np.arange(dst_deg.size)
    np.add.at(A, (rows, jdx[pos]), 1.0 - t)
    np.add.at(A, (rows, jdx[pos + 1]), t)
    return A


def apply(table: TransferTable, frequency_hz: ArrayLike, directions_deg: ArrayLike, efth: ArrayLike) -> NearshoreSpectrum:
    """Offshore directional spectrum efth (..., nf, nd) [m²/Hz/rad] on nautical FROM
    `directions_deg` -> nearshore spectrum at the table's reference point.

    E_near(f) = Σ_k K²(f, θ0_k) E_off(f, θ0_k) Δθ0: the offshore spectrum is interpolated
    (periodic, linear) to the table's direction bins and the table (K², linear in frequency) to the
    spectrum's frequencies; frequencies outside the table's period range take the nearest period.
    """
    f = np.asarray(frequency_hz, dtype=float).ravel()
    dirs = np.asarray(directions_deg, dtype=float).ravel()
    E = np.asarray(efth, dtype=float)
    if f.size == 0 or not np.all(np.isfinite(f) & (f > 0)):
        raise InvalidInput("`frequency_hz` must be non-empty, positive and finite [Hz]")
    if dirs.size == 0 or not np.all(np.isfinite(dirs)):
        raise InvalidInput("`directions_deg` must be non-empty and finite [deg]")
    if E.ndim < 2 or E.shape[-2:] != (f.size, dirs.size):
        raise InvalidInput(f"`efth` must have shape (..., {f.size}, {dirs.size}), got {E.shape}")
    if not np.all(np.isfinite(E)):
        raise InvalidInput("`efth` has non-finite values")
    tf = 1.0 / table.periods_s[::-1]  # ascending table frequencies
    k2 = (table.coefficient**2)[::-1]
    nd = table.directions_deg.size
    # K²(f) interpolated linearly in frequency per bin (clamped at the ends)
    K2 = np.stack([np.interp(f, tf, k2[:, k]) for k in range(nd)], axis=-1)  # (nf, nd_table)
    ndir = np.nan_to_num(table.nearshore_direction_deg[::-1], nan=0.0)
    nb = _nautical_to_math(ndir)
    cx = np.stack([np.interp(f, tf, (k2 * np.cos(nb))[:, k]) for k in range(nd)], axis=-1)
    cy = np.stack([np.interp(f, tf, (k2 * np.sin(nb))[:, k]) for k in range(nd)], axis=-1)
    A = _direction_matrix(dirs, table.directions_deg)  # (nd_table, nd_spec)
    dth = math.radians(table.direction_bin_deg)
    W = dth * K2 @ A  # (nf, nd_spec)
    Wx = dth * cx @ A
    Wy = dth * cy @ A
    dens = np.einsum("...fj,fj->...f", E, W)
    vx = np.einsum("...fj,fj->...f", E, Wx)
    vy = np.einsum("...fj,fj->...f", E, Wy)
    with np.errstate(invalid="ignore"):
        mdir = np.where(dens > 0, _math_to_nautical(np.arctan2(vy, vx)), np.nan)
    m0 = np.trapezoid(dens, f, axis=-1) if f.size > 1 else dens[..., 0] * 0.0
    return NearshoreSpectrum(frequency_hz=f, density=dens, mean_direction_deg=mdir, hs=4.0 * np.sqrt(m0))


# --------------------------------------------------------------------------- window and hashing


def swell_window(table: TransferTable, threshold: float = 0.05) -> list[list[tuple[float, float]]]:
    """Open arcs (K > threshold) of offshore FROM direction per period, as (from_deg, to_deg)
    running clockwise from `from` to `to` (bin edges). A fully open circle is [(0.0, 360.0)]."""
    if not (isinstance(threshold, int | float | np.floating | np.integer) and threshold >= 0):
        raise InvalidInput(f"`threshold` must be a number >= 0, got {threshold!r}")
    width = table.direction_bin_deg
    half = 0.5 * width
    out = []
    for row in table.coefficient:
        op = row > threshold
        if op.all():
            out.append([(0.0, 360.0)])
            continue
        arcs = []
        if op.any():
            # rotate so the row starts on a closed bin; then runs never wrap
            start = int(np.flatnonzero(~op)[0])
            idx = (start + np.arange(op.size)) % op.size
            r = op[idx]
            k = 0
            while k < r.size:
                if r[k]:
                    k0 = k
                    while k < r.size and r[k]:
                        k += 1
                    a = (table.directions_deg[idx[k0]] - half) % 360.0
                    b = (table.directions_deg[idx[k - 1]] + half) % 360.0
                    arcs.append((float(a), float(b)))
                else:
                    k += 1
            arcs.sort()
        out.append(arcs)
    return out


def input_hash(grid: DepthGrid | bytes, *, regional: Sequence[DepthGrid | bytes] = (), **parameters: Any) -> str:
    """sha256 hex digest of the grid bytes, every regional grid's bytes (in order), the parameters
    (sorted, JSON) and ENGINE_VERSION."""
    h = hashlib.sha256()
    h.update(ENGINE_VERSION.encode())
    for k, g in enumerate([grid, *regional]):
        b = g.to_bytes() if isinstance(g, DepthGrid) else bytes(g)
        h.update(f"grid {k} {len(b)}:".encode())
        h.update(b)

    def norm(v: Any) -> Any:
        if isinstance(v, np.ndarray):
            return v.tolist()
        if isinstance(v, np.generic):
            return v.item()
        return v

    h.update(json.dumps({k: norm(v) for k, v in sorted(parameters.items())}, sort_keys=True, default=str).encode())
    return h.hexdigest()
