"""Ray tracer and transfer-table benchmarks (issue 4).

1. ray-steps per second of the vectorised tracer vs the same rays one at a time with
   scipy.integrate.solve_ivp (RK45) at equal accuracy (end direction error vs a fine reference);
2. a full set of tables: 20 km × 20 km grid at 20 m, 32 periods, 0.25° launch spacing, 5 break
   points, on a process pool over (point, period-chunk), with wall time and memory peak;
3. a refraction-diffraction table of one demo spot against its ray table (issue 14), memory peak;
4. one point's table with a regional grid around the local one (rays handed on to it out to the
   wave base) against the local grid alone (issue 12: aim at most 1.5x).
"""

from __future__ import annotations

import os
import resource
import time
import tracemalloc
from concurrent.futures import ProcessPoolExecutor

import numpy as np
from scipy.integrate import solve_ivp

from models.bathymetry import DepthGrid
from models.rays import dispersion_table, trace_rays
from models.transfer import build_tables


def synthetic_coast(size_m: float = 20000.0, dx: float = 20.0) -> DepthGrid:
    """Invented coast: shore in the west with a headland, a shoal, an island, noise; 300 m cap."""
    n = int(round(size_m / dx)) + 1
    x = np.arange(n) * dx
    X, Y = np.meshgrid(x, x)
    s = size_m / 20000.0
    shore = 2000 * s + 800 * s * np.exp(-(((Y - 10000 * s) / (1500 * s)) ** 2))
    d = (X - shore) * 0.02
    d = np.where(d > 0, np.minimum(d, 10 + (d - 10) * 2.0), d)
    d = np.minimum(d, 300.0)
    d -= 15 * np.exp(-((X - 9000 * s) ** 2 / (1e6 * s * s) + (Y - 6000 * s) ** 2 / (4e6 * s * s)))
    rng = np.random.default_rng(0)
    d = d + np.where(d > 1, rng.normal(0, 0.3, d.shape), 0)
    d[(X - 12000 * s) ** 2 + (Y - 15000 * s) ** 2 < (600 * s) ** 2] = -5.0
    return DepthGrid(d, 0.0, 0.0, dx, dx)


def regional_coast(local_size_m: float, dx: float = 200.0, reach_m: float = 40000.0) -> DepthGrid:
    """The synthetic coast's plane continued seaward (east) to `reach_m` on coarse cells, down to
    1500 m instead of the local 300 m cap, covering the local grid with 4 km to spare north and south."""
    s = local_size_m / 20000.0
    x = np.arange(0.0, reach_m + dx / 2, dx)
    y = np.arange(-4000.0, local_size_m + 4000.0 + dx / 2, dx)
    X, Y = np.meshgrid(x, y)
    shore = 2000 * s + 800 * s * np.exp(-(((Y - 10000 * s) / (1500 * s)) ** 2))
    d = (X - shore) * 0.02
    d = np.where(d > 0, np.minimum(d, 10 + (d - 10) * 2.0), d)
    return DepthGrid(np.minimum(d, 1500.0), float(x[0]), float(y[0]), dx, dx)


def _ivp_rays(grid, x0, y0, thetas, period, lengths, rtol):
    k0 = (2 * np.pi / period) ** 2 / 9.80665

    def rhs(s, u):
        h, hx, hy = grid.sample(u[0], u[1])
        h = max(h, 1e-3)
        q = dispersion_table(k0 * h)[0]
        return [np.cos(u[2]), np.sin(u[2]), q / h * (np.sin(u[2]) * hx - np.cos(u[2]) * hy)]

    out = []
    for th, L in zip(thetas, lengths, strict=True):
        sol = solve_ivp(rhs, (0.0, L), [x0, y0, th], method="RK45", rtol=rtol, atol=rtol * 1e3)
        out.append(sol.y[2, -1])
    return np.array(out)


def bench_kernel(quick: bool) -> list[dict]:
    grid = synthetic_coast(8000.0 if quick else 20000.0, 20.0).smoothed(100.0)
    x0, y0 = (1400.0, 1600.0) if quick else (2600.0, 4000.0)
    T = 14.0
    nr = 200 if quick else 1440
    th = np.linspace(-1.2, 1.2, nr)
    # fixed 50 m steps over a fixed path length (N steps), so every method integrates the same arc
    nsteps = 40 if quick else 80
    kw = dict(step_m=50.0, adaptive=False, wave_base_fraction=np.inf, edge_min_depth=1.0, max_steps=nsteps)
    t0 = time.perf_counter()
    r = trace_rays(grid, x0, y0, th, T, **kw)
    t_vec = time.perf_counter() - t0
    steps = int(r.steps.sum())
    full = np.flatnonzero(r.status == 2)  # rays that ran the whole arc (not blocked / out of the grid)
    sub = full[np.linspace(0, full.size - 1, 8 if quick else 16).astype(int)]
    L = np.full(sub.size, 50.0 * nsteps)
    # reference: same equations, 1 m steps
    kref = dict(kw, step_m=1.0, max_steps=50 * nsteps)
    ref = trace_rays(grid, x0, y0, th[sub], T, **kref)
    sub = sub[ref.status == 2]  # drop rays that reach the coast (a fixed 50 m step cannot follow them)
    L = L[: sub.size]
    th_ref = ref.theta[ref.status == 2]
    err_vec = float(np.max(np.abs(np.angle(np.exp(1j * (r.theta[sub] - th_ref))))))
    # solve_ivp: loosest rtol whose error is no worse than ours
    chosen = None
    for rtol in (1e-3, 1e-4, 1e-5, 1e-6, 1e-7, 1e-8):
        e = _ivp_rays(grid, x0, y0, th[sub], T, L, rtol)
        err = float(np.max(np.abs(np.angle(np.exp(1j * (e - th_ref))))))
        if err <= max(err_vec, 1e-9):
            chosen = (rtol, err)
            break
    rtol = chosen[0] if chosen else 1e-8
    t0 = time.perf_counter()
    _ivp_rays(grid, x0, y0, th[sub], T, L, rtol)
    t_ivp = (time.perf_counter() - t0) * nr / sub.size  # scaled to all rays
    rate = steps / t_vec
    return [
        {
            "benchmark": "rays: vectorised RK4 ray-steps per second (1 core)",
            "result": f"{rate:,.0f} steps/s ({nr} rays, {steps:,} steps, {t_vec:.2f} s; end-direction error {err_vec:.1e} rad)",
            "ratio": None,
            "ratio_of": "",
            "target": "report",
        },
        {
            "benchmark": "rays: vectorised tracer vs solve_ivp one ray at a time, equal accuracy",
            "result": f"vectorised {t_vec:.3f} s vs solve_ivp RK45 rtol={rtol:g} {t_ivp:.2f} s (extrapolated from {sub.size} rays"
            + (f", its error {chosen[1]:.1e} rad)" if chosen else ", never as accurate)"),
            "ratio": t_ivp / t_vec,
            "ratio_of": "solve_ivp time / vectorised time",
            "target": ">= 100x",
        },
    ]


def bench_tables(quick: bool) -> list[dict]:
    size = 8000.0 if quick else 20000.0
    grid = synthetic_coast(size, 20.0)
    s = size / 20000.0
    pts = [(2000.0 * s + 600.0, 4000.0 * s + k * 600.0 * s) for k in range(5)]  # ~14 m depth
    nper = 8 if quick else 32
    periods = np.round(np.geomspace(4.0, 25.0, nper), 3)
    workers = min(2, os.cpu_count() or 1)
    kw = dict(periods_s=periods, launch_spacing_deg=0.25, smoothing_m=100.0, edge_min_depth=20.0)
    t0 = time.perf_counter()
    with ProcessPoolExecutor(workers) as ex:
        tables = build_tables(grid, pts, executor=ex, period_chunks=2, **kw)
    t_pool = time.perf_counter() - t0
    # memory peak of one table built in this process (tracemalloc sees numpy buffers)
    tracemalloc.start()
    t0 = time.perf_counter()
    build_tables(grid, pts[:1], **kw)
    t_one = time.perf_counter() - t0
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    lost = max(t.lost_fraction for t in tables)
    n = grid.shape[0]
    return [
        {
            "benchmark": f"tables: {n}x{n} grid at 20 m, {nper} periods, 0.25 deg launch, 5 points, {workers} processes",
            "result": f"{t_pool:.1f} s wall (one point serial {t_one:.1f} s); lost fraction <= {lost:.4f}",
            "ratio": t_pool / 20.0,
            "ratio_of": "wall time / 20 s target",
            "target": "< 1 (under 20 s on 2 cores)" if not quick else "report (quick size)",
        },
        {
            "benchmark": "tables: memory peak building one point's table",
            "result": f"{peak / 2**20:.0f} MiB traced peak (process max RSS {rss:.0f} MiB)",
            "ratio": None,
            "ratio_of": "",
            "target": "report",
        },
    ]


def bench_refraction_diffraction(quick: bool) -> list[dict]:
    """One demo spot (the island bay, first break point), its profile's periods: the
    refraction-diffraction build against its ray build, in this process, and its memory peak."""
    from app.demo import coast
    from models import refdif
    from models.transfer import reference_point

    spot = next(s for s in coast.SPOTS if s.kind == "bay")
    lg = coast.spot_grid(spot)
    grid = DepthGrid(lg.depth, lg.x[0], lg.y[0], lg.spacing, lg.spacing)
    _, bx, by = coast.break_points(spot)[0]
    ref = reference_point(grid, bx, by, spot.reference_depth_m)[:2]
    n = 4 if quick else coast.PERIOD_COUNT
    periods = np.round(np.geomspace(coast.PERIOD_MIN_S, coast.PERIOD_MAX_S, coast.PERIOD_COUNT), 3)[-n:]
    kw = dict(periods_s=periods, launch_spacing_deg=coast.LAUNCH_SPACING_DEG)
    t0 = time.perf_counter()
    rays = build_tables(grid, [ref], **kw)[0]
    t_rays = time.perf_counter() - t0
    t0 = time.perf_counter()
    pe = refdif.build_tables(grid, [ref], **kw)[0]
    t_pe = time.perf_counter() - t0
    # memory: the two shortest periods computed (the largest local grids), traced separately
    # (tracemalloc slows the build)
    short = [float(p) for p in periods if f"{float(p):g}" not in pe.meta["refused_periods"]][:2]
    tracemalloc.start()
    refdif.build_tables(grid, [ref], **dict(kw, periods_s=short))
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    # the island's shadow: west swell (250-290°), the largest K over the periods
    west = (pe.directions_deg >= 250) & (pe.directions_deg <= 290)
    refused = len(pe.meta["refused_periods"])
    return [
        {
            "benchmark": f"refraction-diffraction table: demo bay, 1 point, {n} periods, 1 process",
            "result": f"{t_pe:.1f} s vs its ray table {t_rays:.1f} s ({refused} period(s) refused, rays there); "
            f"west-swell K max {pe.coefficient[:, west].max():.2f} vs rays {rays.coefficient[:, west].max():.2f}",
            "ratio": t_pe / t_rays,
            "ratio_of": "refraction-diffraction build time / ray build time",
            "target": "<= 10x",
        },
        {
            "benchmark": "refraction-diffraction table: memory peak (its two shortest computed periods)",
            "result": f"{peak / 2**20:.0f} MiB traced peak",
            "ratio": peak / 2**31,
            "ratio_of": "peak / 2 GiB",
            "target": "< 1",
        },
    ]


def bench_regional(quick: bool) -> list[dict]:
    size = 8000.0 if quick else 20000.0
    grid = synthetic_coast(size, 20.0)
    region = regional_coast(size)
    s = size / 20000.0
    pt = [(2000.0 * s + 600.0, 4000.0 * s)]
    nper = 8 if quick else 32
    kw = dict(periods_s=np.round(np.geomspace(4.0, 25.0, nper), 3), launch_spacing_deg=0.25, smoothing_m=100.0)
    t0 = time.perf_counter()
    alone = build_tables(grid, pt, **kw)[0]
    t_local = time.perf_counter() - t0
    t0 = time.perf_counter()
    nested = build_tables(grid, pt, regional=[region], **kw)[0]
    t_nested = time.perf_counter() - t0
    # share of the table's energy (Σ K² over periods and directions) that rests on assumed contours
    cont = [float((t.coefficient**2 * t.continued_fraction).sum() / (t.coefficient**2).sum()) for t in (alone, nested)]
    n = grid.shape[0]
    return [
        {
            "benchmark": f"tables: one point, {n}x{n} local grid at 20 m + {region.shape[1]}x{region.shape[0]} regional at 200 m vs local alone",
            "result": f"nested {t_nested:.1f} s vs local alone {t_local:.1f} s ({nper} periods, serial); "
            f"energy on assumed straight contours beyond the edges {cont[0]:.0%} -> {cont[1]:.0%}",
            "ratio": t_nested / t_local,
            "ratio_of": "with regional grid / local grid alone",
            "target": "<= 1.5x",
        },
    ]


def run(quick: bool = False) -> list[dict]:
    return bench_kernel(quick) + bench_tables(quick) + bench_refraction_diffraction(quick) + bench_regional(quick)


if __name__ == "__main__":
    from bench.common import print_rows

    print_rows(run())
