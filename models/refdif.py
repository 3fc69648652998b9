"""Transfer tables by refraction–diffraction: the parabolic march (`models.parabolic`) per component,
into the same `TransferTable` the ray tables fill (`models.transfer`).

For each period and each offshore direction bin θ0 (nautical FROM), a local grid is laid along the
direction the component travels: at least `upstream_m` up-wave of the reference point and on past
the farthest land of the spot grid in its width (`reach_land`: every island or headland that can
shade the point is inside), not beyond the grid's edge, `half_width_m` to each side (plus an
absorbing sponge), resampled from the (smoothed) spot grid, beyond it the regional grids, by
bilinear interpolation to `POINTS_PER_WAVELENGTH` across and `MARCH_POINTS_PER_WAVELENGTH` along,
at the wavelength of the reference depth. The start line carries the wave the rays bring to it
(`models.transfer.arrivals` at RAY_SAMPLES points across it: the ray tables' tracer, regional grids
and edge continuation): A = Ks(h)·(K/Ks), K/Ks interpolated between the points, tilted by their
direction, so |A| at the reference point is K with the ray tables' deep-water normalisation and
the offshore part beyond the local grid is the rays'. All directions of one period march together
in batches of similar length (`models.parabolic.march` stacks them into one banded system).

From the amplitude at the reference point:
- K = |A|;
- the nearshore direction from the phase gradient ∇S, S = ∫k̄ dx + arg A (centred differences
  around the reference node), rotated back to a nautical FROM bearing;
- the travel times: the rays' to the start line's centre, then ∫dx/C (∫dx/Cg for energy) along
  the line through the reference point, the same reference as the ray tables' times;
- the continued fraction: the start wave's share on rays continued over assumed contours.

Rays fill in where this method does not apply, so one table covers the whole window:
- directions where the wave leans from the march axis by more than the aperture's angle limit
  (`Aperture.limit_deg`: 10° for the default Padé form, whose planar-beach K stays within 2 % of
  Snell there; the axis is turned by half the rays' turning, so that covers about 20° of turning),
  checked on the result (bins the rays turn by more than 2 × (limit + TURN_MARGIN_DEG) are not
  marched); where the rays bring nothing (a geometric shadow) the parabolic value is kept up to
  `SHADOW_LIMIT_DEG` (45°, the Padé form's phase error is below 0.007 in cos θ there);
- periods the spot grid is too coarse for (fewer than CELLS_PER_WAVELENGTH cells per wavelength at
  the reference depth: coastline and obstacles are not known at the wave's scale) or whose local
  grid would exceed `max_nodes` per component; each refused period is listed with its reason in
  `meta["refused_periods"]`.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from concurrent.futures import Executor
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models import transfer
from models.bathymetry import DepthGrid
from models.constants import G
from models.errors import InvalidInput
from models.parabolic import (
    MARCH_POINTS_PER_WAVELENGTH,
    PADE,
    POINTS_PER_WAVELENGTH,
    Aperture,
    march,
)
from models.waves import group_velocity, phase_speed, shoaling_coefficient, wavenumber

__all__ = ["METHOD", "build_tables", "pe_rows"]

METHOD = "refraction-diffraction"
LAND_MARGIN_WAVELENGTHS = 4.0  # the start line lies this far up-wave of the farthest land
# a period needs this many bathymetry cells per wavelength at the reference depth (common practice,
# the sampling theorem: shapes shorter than two cells are not in the grid), or it is refused
CELLS_PER_WAVELENGTH = 2.0
TURN_MARGIN_DEG = 2.0  # bins the rays turn by more than 2 × (limit + this) are not marched
RAY_SAMPLES = 3  # points across the start line (centre, ±2/3 of the half-width) where the rays' wave is taken
SHADOW_LIMIT_DEG = 45.0  # where the rays bring nothing, the parabolic value is kept up to this angle

PE_DEFAULTS: dict[str, Any] = dict(
    upstream_m=2500.0,
    half_width_m=1000.0,
    direction_step_deg=4.0,
    max_nodes=400_000,
    reach_land=True,
    land_depth_m=0.5,
    chunk=24,
)


def _math_of_from(deg: NDArray[np.float64]) -> NDArray[np.float64]:
    """Nautical FROM bearing -> math angle (CCW from east) of the direction of travel [rad]."""
    return np.radians(90.0 - np.asarray(deg, dtype=float)) + math.pi


def _from_of_math(rad: NDArray[np.float64]) -> NDArray[np.float64]:
    """Math angle of travel -> nautical FROM bearing [deg]."""
    return (90.0 - np.degrees(np.asarray(rad, dtype=float) + math.pi)) % 360.0


def refusal(
    grid: DepthGrid, period: float, h_ref: float, opts: dict[str, Any], *, g: float = G
) -> str | None:
    """Why `period` cannot be computed on this grid (None if it can)."""
    L = 2.0 * math.pi / float(wavenumber(1.0 / period, h_ref, g=g))
    spacing = max(grid.dx, grid.dy)
    if spacing * CELLS_PER_WAVELENGTH > L:
        return (
            f"bathymetry spacing {spacing:.0f} m is coarser than half the wavelength {L:.0f} m at the reference "
            f"depth {h_ref:.1f} m (fewer than {CELLS_PER_WAVELENGTH:g} cells per wavelength: coastline and "
            "obstacles are not resolved at the wave's scale)"
        )
    nodes = _shape(period, h_ref, opts, g=g)
    n = nodes[0] * nodes[1]
    if n > opts["max_nodes"]:
        return f"local grid of {nodes[0]} x {nodes[1]} nodes exceeds max_nodes={opts['max_nodes']}"
    return None


def _spacing(period: float, h_ref: float, *, g: float) -> tuple[float, float, float]:
    L = 2.0 * math.pi / float(wavenumber(1.0 / period, h_ref, g=g))
    return L / MARCH_POINTS_PER_WAVELENGTH, L / POINTS_PER_WAVELENGTH, L


def _shape(
    period: float, h_ref: float, opts: dict[str, Any], *, g: float, upstream_m: float | None = None
) -> tuple[int, int]:
    dx, dy, L = _spacing(period, h_ref, g=g)
    up = opts["upstream_m"] if upstream_m is None else upstream_m
    nx = int(math.ceil(up / dx)) + 2
    half = opts["half_width_m"] + 2.0 * L  # sponge outside the half-width
    ny = 2 * int(math.ceil(half / dy)) + 1
    return nx, ny


def _to_edge(grid: DepthGrid, x: float, y: float, ex: NDArray[np.float64], ey: NDArray[np.float64]) -> NDArray[np.float64]:
    """Distance [m] from (x, y) up-wave, along −(ex, ey), to the edge of `grid`."""
    xmin, xmax, ymin, ymax = grid.extent
    with np.errstate(divide="ignore", invalid="ignore"):
        tx = np.where(ex > 0, (x - xmin) / ex, np.where(ex < 0, (x - xmax) / ex, np.inf))
        ty = np.where(ey > 0, (y - ymin) / ey, np.where(ey < 0, (y - ymax) / ey, np.inf))
    return np.maximum(np.minimum(tx, ty), 0.0)


def _depth(grid: DepthGrid, X: NDArray[np.float64], Y: NDArray[np.float64], regional: Sequence[dict]) -> NDArray[np.float64]:
    """Depth at (X, Y) from the spot grid, and beyond it from the first regional grid (finest
    first, as the rays take them) that covers the point; elsewhere the spot grid's edge values."""
    depth = grid.depth_at(X, Y)
    left = ~grid.contains(X, Y)
    for r in regional:
        if not left.any():
            break
        here = left & r["grid"].contains(X, Y)
        depth[here] = r["grid"].depth_at(X[here], Y[here])
        left &= ~here
    return depth


def _farthest_land(
    grid: DepthGrid, x: float, y: float, ex: NDArray[np.float64], ey: NDArray[np.float64],
    edge: NDArray[np.float64], half_width: float, land: float,
) -> NDArray[np.float64]:
    """Per direction (ex, ey) of travel: the largest distance up-wave of (x, y), within `edge`,
    at which the strip `half_width` to each side holds land (0 if none), sampled every cell."""
    step = min(grid.dx, grid.dy)
    t = np.arange(-half_width, half_width + 0.5 * step, step)
    out = np.zeros(ex.size)
    for q in range(ex.size):
        s = np.arange(0.0, edge[q] + 0.5 * step, step)
        X = x - s[:, None] * ex[q] - t[None, :] * ey[q]
        Y = y - s[:, None] * ey[q] + t[None, :] * ex[q]
        dry = (grid.depth_at(X, Y) <= land) & grid.contains(X, Y)
        rows = np.flatnonzero(dry.any(axis=1))
        out[q] = s[rows[-1]] if rows.size else 0.0
    return out


def pe_rows(
    grid: DepthGrid,
    x_ref: float,
    y_ref: float,
    period: float,
    directions_deg: ArrayLike,
    opts: dict[str, Any],
    *,
    turn_deg: ArrayLike | None = None,
    aperture: Aperture = PADE,
    rays: dict[str, Any] | None = None,
    g: float = G,
) -> dict[str, NDArray[np.float64]]:
    """K, nearshore FROM direction, crest and energy times and the largest angle between the wave
    and the march axis [deg] at (x_ref, y_ref) for offshore FROM `directions_deg`, one period.

    `turn_deg` (per direction; NaN or None = 0): how far the rays turn between offshore and the
    reference point (nearshore minus offshore direction of travel, counter-clockwise positive).
    The march axis is turned by half of it, and the start line carries the plane wave tilted by
    the other half, so the wave never leans more than about half its turning from the axis.

    `rays`: tracing options from `models.transfer.prepare` (with its regional grids); the start
    line then carries what the rays bring to its centre (`models.transfer.arrivals`: K, direction
    and times). None: the deep-water wave shoaled over straight contours, A = Ks(h), travelling
    offshore's way.
    """
    dirs = np.asarray(directions_deg, dtype=float).ravel()
    turn = (
        np.zeros(dirs.size) if turn_deg is None else np.nan_to_num(np.asarray(turn_deg, dtype=float).ravel())
    )
    f = 1.0 / period
    h_ref = float(grid.depth_at(x_ref, y_ref))
    dx, dy, L = _spacing(period, h_ref, g=g)
    _, ny = _shape(period, h_ref, opts, g=g)
    jc = ny // 2
    t = (np.arange(ny) - jc) * dy
    longest = (opts["max_nodes"] // ny - 2) * dx  # the longest local grid max_nodes allows
    out = {k: np.full(dirs.size, np.nan) for k in ("K", "ndir", "tc", "te", "dev", "cont")}
    out["short"] = np.zeros(dirs.size)  # 1: the start line lies short of the grid's edge
    land = float(opts["land_depth_m"])
    step = int(opts["chunk"])
    # up-wave at least upstream_m, and (reach_land) on past the farthest land of the spot grid in
    # the march's width, so every island or headland that can cast a shadow is inside it (the
    # rays bring the wave to the start line, shoals included); batches of similar length
    th_all = _math_of_from(dirs) + 0.5 * np.radians(turn)
    ex_all, ey_all = np.cos(th_all), np.sin(th_all)
    edge_all = _to_edge(grid, x_ref, y_ref, ex_all, ey_all)
    need = np.full(dirs.size, float(opts["upstream_m"]))
    if opts["reach_land"]:
        far = _farthest_land(grid, x_ref, y_ref, ex_all, ey_all, edge_all, opts["half_width_m"], float(opts["land_depth_m"]))
        need = np.maximum(need, far + LAND_MARGIN_WAVELENGTHS * L)
    need = np.minimum(need, np.maximum(edge_all, 2.0 * L))  # beyond the grid's edge the rays take over
    order = np.argsort(need, kind="stable")
    batches, start = [], 0
    for q in range(1, dirs.size + 1):  # at most `chunk` per batch, lengths within 25 % of its shortest
        if q == dirs.size or q - start == step or need[order[q]] > 1.25 * need[order[start]]:
            batches.append(order[start:q])
            start = q
    for sl in batches:
        th0 = _math_of_from(dirs[sl])  # offshore direction of travel
        psi = -0.5 * np.radians(turn[sl])  # the incident wave's angle to the axis
        th = th0 - psi  # march axis
        ex, ey = np.cos(th), np.sin(th)
        up = min(float(need[sl].max()), max(longest, float(opts["upstream_m"])))
        out["short"][sl] = (need[sl] > up).astype(float)
        nx, _ = _shape(period, h_ref, opts, g=g, upstream_m=up)
        i_ref = nx - 2  # one row beyond the reference for the centred x-derivative
        s = (np.arange(nx) - i_ref) * dx  # along the march, 0 at the reference
        X = x_ref + s[None, :, None] * ex[:, None, None] - t[None, None, :] * ey[:, None, None]
        Y = y_ref + s[None, :, None] * ey[:, None, None] + t[None, None, :] * ex[:, None, None]
        depth = _depth(grid, X, Y, () if rays is None else rays["regional"])
        h0 = np.maximum(depth[:, 0, :], land)
        kc = wavenumber(f, h0[:, jc], g=g)
        ks = shoaling_coefficient(f, h0, g=g)
        lean = psi  # the start wave's angle to the axis
        cont = np.ones(th.size)  # share of the start wave resting on assumed straight contours
        i0 = np.zeros(th.size, dtype=int)  # the row where the times along the march line begin
        if rays is None:
            amp0 = np.ones(th.size)
            ahead = (x_ref + s[0] * ex) * np.cos(th0) + (y_ref + s[0] * ey) * np.sin(th0)
            t0c, t0e = ahead / phase_speed(f, h0[:, jc], g=g), ahead / group_velocity(f, h0[:, jc], g=g)
        else:
            # the rays' wave at RAY_SAMPLES points across the first row inside the grid (water
            # nodes only): their K over Ks scales Ks along the start line (linear in between),
            # their energy-weighted direction tilts it, the times start from the centre's
            b = np.arange(th.size)
            i0 = np.argmax(grid.contains(X[:, :, jc], Y[:, :, jc]), axis=1)  # per component
            js = np.unique(np.rint(jc + np.linspace(-2.0 / 3.0, 2.0 / 3.0, RAY_SAMPLES) * opts["half_width_m"] / dy).astype(int))
            bx, by = X[b[:, None], i0[:, None], js[None, :]], Y[b[:, None], i0[:, None], js[None, :]]
            hs = depth[b[:, None], i0[:, None], js[None, :]]
            use = (hs > max(land, float(rays["min_depth"]))) & grid.contains(bx, by)
            arr = transfer.arrivals(grid, bx[use], by[use], np.broadcast_to(dirs[sl, None], use.shape)[use], period, rays)
            ratio = np.full(use.shape, np.nan)
            ratio[use] = arr["K"] / shoaling_coefficient(f, hs[use], g=g)
            e = np.zeros(use.shape)
            e[use] = arr["K"] ** 2
            fr = np.zeros(use.shape)
            fr[use] = np.radians(np.nan_to_num(arr["from_deg"]))
            times = {key: np.full(use.shape, np.nan) for key in ("crest_time_s", "energy_time_s", "continued_fraction")}
            for key in times:
                times[key][use] = arr[key]
            amp0 = np.zeros((th.size, ny))
            t0c, t0e = np.zeros(th.size), np.zeros(th.size)
            lean = np.array(psi, dtype=float)
            cont = np.zeros(th.size)
            for q in range(th.size):
                ok_q = use[q]
                if not ok_q.any():
                    continue
                amp0[q] = np.interp(t, t[js[ok_q]], ratio[q, ok_q])
                lit = ok_q & (e[q] > 0)
                if lit.any():
                    mean = math.atan2((e[q] * np.sin(fr[q])).sum(), (e[q] * np.cos(fr[q])).sum())
                    travel = float(_math_of_from(np.degrees(mean)))
                    lean[q] = ((travel - th[q] + math.pi) % (2 * math.pi)) - math.pi
                    t0c[q] = np.interp(0.0, t[js[lit]], times["crest_time_s"][q, lit])
                    t0e[q] = np.interp(0.0, t[js[lit]], times["energy_time_s"][q, lit])
                    cont[q] = (e[q, lit] * times["continued_fraction"][q, lit]).sum() / e[q, lit].sum()
        inc = np.where(depth[:, 0, :] > land, ks, 0.0) * (amp0 if amp0.ndim == 2 else amp0[:, None])
        inc = inc * np.exp(1j * (kc * np.sin(lean))[:, None] * t[None, :])
        m = march(depth, dx, dy, period, incident=inc, land_depth_m=land, aperture=aperture,
                  keep=[i_ref - 1, i_ref, i_ref + 1], filter_wavenumber=2.0 * math.pi / L,
                  absorb_depth_m=0.5 * h_ref, g=g)  # fmt: skip
        A = m.amplitude  # (b, 3, ny)
        a = A[:, 1, jc]
        amp = np.abs(a)
        with np.errstate(invalid="ignore", divide="ignore"):
            ax = (A[:, 2, jc] - A[:, 0, jc]) / (2.0 * dx)
            ay = (A[:, 1, jc + 1] - A[:, 1, jc - 1]) / (2.0 * dy)
            sx = m.kbar[:, i_ref] + np.imag(np.conj(a) * ax) / amp**2
            sy = np.imag(np.conj(a) * ay) / amp**2
        phi = np.arctan2(sy, sx)  # local direction of travel relative to the march axis
        ok = amp > 1e-6
        out["K"][sl] = np.where(ok, amp, 0.0)
        out["ndir"][sl] = np.where(ok, _from_of_math(th + phi), np.nan)
        out["dev"][sl] = np.where(ok, np.degrees(np.maximum(np.abs(phi), np.abs(lean))), np.nan)
        out["cont"][sl] = np.where(ok, cont, 0.0)
        # times along the march line through the reference point (see the module docstring):
        # from row i0 on, where the rays' times (or a plane crest through the origin at t = 0,
        # travelling offshore's way, meeting the start point) leave off
        hl = np.maximum(depth[:, : i_ref + 1, jc], land)
        for key, t0, speed in (("tc", t0c, phase_speed(f, hl, g=g)), ("te", t0e, group_velocity(f, hl, g=g))):
            cum = np.concatenate([np.zeros((th.size, 1)), np.cumsum(0.5 * dx * (1 / speed[:, 1:] + 1 / speed[:, :-1]), axis=1)], axis=1)
            out[key][sl] = np.where(ok, t0 + cum[:, -1] - cum[np.arange(th.size), i0], np.nan)
    return out


def _pe_task(args: tuple) -> tuple[int, int, NDArray[np.float64], dict[str, NDArray[np.float64]]]:
    """Picklable unit of work: one point × one period × its directions. Only every `stride`-th bin
    (and the ends of each run of bins) is marched; the bins between take linear interpolation
    (circular for the direction): the parabolic K is smooth in the offshore direction."""
    k, p, grid, x, y, T, dirs, turn, opts, aperture, g, bin_deg, rays = args
    u = np.rint(np.asarray(dirs) / bin_deg).astype(int)
    nb = int(round(360.0 / bin_deg))
    stride = max(1, int(round(float(opts["direction_step_deg"]) / bin_deg)))
    have = set(u.tolist())
    ends = np.array([(v - 1) % nb not in have or (v + 1) % nb not in have for v in u])
    marched = (u % stride == 0) | ends
    rows = pe_rows(grid, x, y, T, dirs[marched], opts, turn_deg=turn[marched], aperture=aperture, rays=rays, g=g)
    if marched.all():
        return k, p, dirs, rows
    out = {key: np.full(u.size, np.nan) for key in rows}
    for key in rows:
        out[key][marched] = rows[key]
    um = u[marched]
    for i in np.flatnonzero(~marched):
        lo = next(j for j in range(1, stride + 1) if (u[i] - j) % nb in have and marched[u == (u[i] - j) % nb][0])
        hi = next(j for j in range(1, stride + 1) if (u[i] + j) % nb in have and marched[u == (u[i] + j) % nb][0])
        a = int(np.flatnonzero(um == (u[i] - lo) % nb)[0])
        b = int(np.flatnonzero(um == (u[i] + hi) % nb)[0])
        w = lo / (lo + hi)
        for key in ("K", "tc", "te", "cont"):
            out[key][i] = (1 - w) * rows[key][a] + w * rows[key][b]
        out["dev"][i] = np.fmax(rows["dev"][a], rows["dev"][b])
        out["short"][i] = max(rows["short"][a], rows["short"][b])
        va, vb = np.radians(rows["ndir"][a]), np.radians(rows["ndir"][b])
        if np.isfinite(va) and np.isfinite(vb):
            out["ndir"][i] = math.degrees(math.atan2((1 - w) * math.sin(va) + w * math.sin(vb),
                                                     (1 - w) * math.cos(va) + w * math.cos(vb))) % 360.0  # fmt: skip
        else:
            out["ndir"][i] = rows["ndir"][a] if np.isfinite(va) else rows["ndir"][b]
        if not (rows["K"][a] > 0 and rows["K"][b] > 0):
            out["tc"][i] = rows["tc"][a] if rows["K"][a] > 0 else rows["tc"][b]
            out["te"][i] = rows["te"][a] if rows["K"][a] > 0 else rows["te"][b]
    return k, p, dirs, out


def _candidates(row: NDArray[np.float64], width: float, reach_deg: float) -> NDArray[np.intp]:
    """Bins the rays reach, and those within `reach_deg` of one (where diffraction can fill in)."""
    nd = row.size
    reach = int(math.ceil(reach_deg / width))
    hit = row > 0
    near = np.zeros(nd, dtype=bool)
    for off in range(-reach, reach + 1):
        near |= np.roll(hit, off)
    return np.flatnonzero(near)


def build_tables(
    grid: DepthGrid,
    points: Sequence[tuple[float, float]],
    *,
    executor: Executor | None = None,
    progress: Callable[[int, int, str], None] | None = None,
    aperture: Aperture = PADE,
    shadow_reach_deg: float = 45.0,
    pe_options: dict[str, Any] | None = None,
    **ray_options: Any,
) -> list[transfer.TransferTable]:
    """Refraction–diffraction tables for the reference points of one grid (see the module
    docstring). `ray_options` are `models.transfer.build_tables` keywords (the ray tables are built
    first, with them, and fill in what this method does not cover); `pe_options` override
    `PE_DEFAULTS`. `progress(done, total, what)` reports the ray chunks ("rays") and then each
    component batch (one point × one period, all its directions) as it finishes.
    """
    opts = dict(PE_DEFAULTS)
    unknown = set(pe_options or {}) - set(opts)
    if unknown:
        raise InvalidInput(f"unknown refraction-diffraction option(s) {sorted(unknown)!r}")
    opts.update(pe_options or {})
    g = float(ray_options.get("g", G))
    rays = transfer.build_tables(
        grid, points, executor=executor,
        progress=(lambda done, total: progress(done, total, "rays")) if progress else None, **ray_options,
    )  # fmt: skip
    # the rays' grid and options (regional grids, edge continuation): the start lines take
    # their wave from them (`models.transfer.arrivals`)
    sg, ray_opts = transfer.prepare(grid, **ray_options)
    tasks, refused = [], [dict() for _ in rays]
    beyond_unmarched = [[0] * len(tab.periods_s) for tab in rays]
    for k, tab in enumerate(rays):
        for p, T in enumerate(tab.periods_s):
            why = refusal(sg, float(T), tab.reference_depth_m, opts, g=g)
            if why:
                refused[k][f"{float(T):g}"] = why
                continue
            idx = _candidates(tab.coefficient[p], tab.direction_bin_deg, shadow_reach_deg)
            turn = -(
                ((tab.nearshore_direction_deg[p, idx] - tab.directions_deg[idx] + 180.0) % 360.0) - 180.0
            )  # FROM cw -> CCW
            # the wave at the reference point leans half the rays' turning from the march axis: a
            # bin the rays reach turned by more than twice the angle limit (and a margin) would be
            # beyond it, so it keeps the ray value without a march
            keep = ~(np.abs(turn) > 2.0 * (aperture.limit_deg + TURN_MARGIN_DEG))
            idx, turn = idx[keep], turn[keep]
            beyond_unmarched[k][p] = int((~keep).sum())
            if idx.size:
                d0 = tab.directions_deg[idx]
                tasks.append(
                    (k, p, sg, tab.reference_x, tab.reference_y, float(T), d0, turn, opts, aperture, g,
                     tab.direction_bin_deg, ray_opts)
                )
    total = len(tasks)
    results = []

    def what(task: tuple) -> str:
        return f"point {task[0] + 1} T {task[5]:g} s ({len(task[6])} directions)"

    if executor is None:
        for i, task in enumerate(tasks):
            results.append(_pe_task(task))
            if progress:
                progress(i + 1, total, what(task))
    else:
        futs = [executor.submit(_pe_task, task) for task in tasks]
        for i, (task, fu) in enumerate(zip(tasks, futs, strict=True)):
            results.append(fu.result())
            if progress:
                progress(i + 1, total, what(task))
    return [
        _merge(tab, [r for r in results if r[0] == k], refused[k], aperture, opts, beyond_unmarched[k])
        for k, tab in enumerate(rays)
    ]


def _merge(tab, results, refused, aperture, opts, unmarched) -> transfer.TransferTable:
    coef = tab.coefficient.copy()
    ndir = tab.nearshore_direction_deg.copy()
    tt = tab.travel_time_s.copy()
    et = tab.energy_travel_time_s.copy()
    of = tab.open_fraction.copy()
    cf = tab.continued_fraction.copy()
    source = np.zeros(coef.shape, dtype=np.int8)  # 0 rays, 1 refraction-diffraction
    beyond = 0
    short = [0] * coef.shape[0]
    for _, p, dirs, r in results:
        idx = np.rint(np.asarray(dirs) / tab.direction_bin_deg).astype(int) % coef.shape[1]
        # within the angle limit the parabolic value replaces the rays; in a geometric shadow (the
        # rays bring nothing) it is kept up to SHADOW_LIMIT_DEG, as zero is the worse answer there
        dev = r["dev"]
        shadow = tab.coefficient[p, idx] == 0.0
        use = ~(dev > aperture.limit_deg) | (shadow & (dev <= SHADOW_LIMIT_DEG))  # NaN: nothing arrives
        beyond += int((~use).sum())
        i = idx[use]
        coef[p, i] = r["K"][use]
        ndir[p, i] = r["ndir"][use]
        tt[p, i] = r["tc"][use]
        et[p, i] = r["te"][use]
        of[p, i] = (r["K"][use] > 0).astype(float)
        cf[p, i] = r["cont"][use]
        source[p, i] = 1
        short[p] += int(r["short"][use].sum())
    meta = dict(tab.meta)
    meta.update(
        method=METHOD,
        aperture={"a0": aperture.a0, "a1": aperture.a1, "b1": aperture.b1, "limit_deg": aperture.limit_deg},
        refused_periods=refused,
        beyond_angle_limit=beyond + sum(unmarched),
        start_short_of_edge=short,
        refraction_diffraction_bins=source.sum(axis=1).astype(int).tolist(),
        refraction_diffraction_mask=[np.flatnonzero(r).tolist() for r in source],
        pe_options={key: v for key, v in opts.items() if key != "chunk"},
    )
    return transfer.TransferTable(
        periods_s=tab.periods_s, directions_deg=tab.directions_deg, coefficient=coef,
        nearshore_direction_deg=ndir, travel_time_s=tt, energy_travel_time_s=et, open_fraction=of,
        lost_fraction_by_period=tab.lost_fraction_by_period, reference_depth_m=tab.reference_depth_m,
        reference_x=tab.reference_x, reference_y=tab.reference_y, lost_fraction=tab.lost_fraction, meta=meta,
        profile=tab.profile,  # the surf-zone profile of the ray table (models.surfzone)
        continued_fraction=cf,  # the start lines' share on assumed contours (`models.transfer.arrivals`)
    )  # fmt: skip
