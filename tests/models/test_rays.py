"""Ray tracer kernels: analytic limits, invariants and an independent ODE solution.

Analytic answers used:
- constant depth: rays are straight lines, θ constant, ∫ds/C = s/C, ∫ds/Cg = s/Cg;
- straight parallel contours (depth = depth(x)): Snell's law, sin θ / C conserved along a ray
  (Snell; e.g. Dean & Dalrymple 1991 ch. 4, from memory);
- reversibility: the ray equations are time-reversible (a ray run back retraces itself).
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp

from models.bathymetry import DepthGrid
from models.errors import InvalidInput
from models.rays import BLOCKED, LOST, OPEN, dispersion_table, trace_rays
from models.waves import group_velocity, phase_speed, phase_speed_depth_derivative

G = 9.80665


def flat(depth=12.0, n=101, dx=20.0):
    return DepthGrid(np.full((n, n), depth), 0.0, 0.0, dx, dx)


def slope(m=0.05, dx=50.0, xmax=8000.0, ymax=12000.0, cap=400.0):
    x = np.arange(0, xmax + dx, dx)
    y = np.arange(-ymax, ymax + dx, dx)
    return DepthGrid(np.minimum(m * x[None, :], cap) * np.ones((y.size, 1)), 0.0, -ymax, dx, dx)


def shoal():
    x = np.arange(0, 6001, 50.0)
    X, Y = np.meshgrid(x, x)
    d = 60.0 - 45.0 * np.exp(-((X - 3000) ** 2 + (Y - 3000) ** 2) / 800.0**2)
    return DepthGrid(d, 0.0, 0.0, 50.0, 50.0)


def test_dispersion_table_matches_exact_relation():
    # the kernel's lookup vs models.waves (exact dispersion): < 1e-5 relative
    for T in (4.0, 10.0, 25.0):
        f = 1.0 / T
        h = np.geomspace(0.5, 0.5 * G * T**2 / (2 * np.pi), 50)
        k0 = (2 * np.pi * f) ** 2 / G
        tab = dispersion_table(k0 * h)
        c0 = G * T / (2 * np.pi)
        c, cg = phase_speed(f, h), group_velocity(f, h)
        np.testing.assert_allclose(tab[:, 1], c0 / c, rtol=1e-5)
        np.testing.assert_allclose(tab[:, 2], c0 / cg, rtol=1e-5)
        np.testing.assert_allclose(tab[:, 0] / h, phase_speed_depth_derivative(f, h) / c, rtol=1e-5)


@settings(max_examples=25, deadline=None)
@given(st.floats(200, 1800), st.floats(200, 1800), st.floats(-np.pi, np.pi), st.floats(4.0, 20.0))
def test_constant_depth_rays_are_straight(x, y, theta, T):
    g = flat()
    r = trace_rays(g, x, y, theta, T, edge_min_depth=5.0, record_path=True)
    # out through an edge at 12 m, short of the wave base: beyond it the bottom is as flat as the
    # strip along the edge (no contours to refract over, models.edges), so the ray goes on straight
    # to deep water: open, continued, its deep-water direction its own
    assert r.status[0] == OPEN and r.continued[0]
    assert r.offshore_theta[0] == pytest.approx(theta, abs=1e-12)
    p = r.path[:, 0, :]
    p = p[np.isfinite(p[:, 0])]
    # perpendicular distance from the launch line (analytic: zero)
    perp = -(p[:, 0] - x) * np.sin(theta) + (p[:, 1] - y) * np.cos(theta)
    assert np.max(np.abs(perp)) < 1e-6
    assert r.theta[0] == pytest.approx(theta, abs=1e-12)
    f = 1.0 / T
    assert r.crest_time[0] == pytest.approx(r.length[0] / phase_speed(f, 12.0), rel=1e-5)
    assert r.energy_time[0] == pytest.approx(r.length[0] / group_velocity(f, 12.0), rel=1e-5)
    assert r.depth[0] == pytest.approx(12.0)


@settings(max_examples=25, deadline=None)
@given(st.floats(-1.2, 1.2), st.floats(5.0, 16.0))
def test_snell_invariant_on_planar_slope(beta, T):
    # depth = 0.05 x: sin θ / C is conserved (Snell); seaward rays start at 10 m depth
    g = slope()
    r = trace_rays(g, 200.0, 0.0, beta, T, edge_min_depth=5.0)
    f = 1.0 / T
    if r.status[0] == OPEN:
        lhs = np.sin(r.theta[0]) / phase_speed(f, r.depth[0])
        # near a turning point (grazing rays) the 50 m RK4 step leaves ~1e-4; elsewhere ~1e-7
        assert lhs == pytest.approx(np.sin(beta) / phase_speed(f, 10.0), rel=1e-3)
    else:
        # blocked only when Snell has no real angle at the wave base (turning point): total reflection
        assert r.status[0] == BLOCKED
        hb = 0.5 * G * T**2 / (2 * np.pi)
        assert abs(np.sin(beta)) * phase_speed(f, hb) / phase_speed(f, 10.0) > 0.99


@settings(max_examples=15, deadline=None)
@given(st.floats(0, 2 * np.pi), st.integers(20, 80))
def test_rays_are_reversible(theta, nsteps):
    g = shoal()
    kw = dict(adaptive=False, step_m=25.0, max_steps=nsteps, wave_base_fraction=np.inf, edge_min_depth=1.0)
    a = trace_rays(g, 2500.0, 2200.0, theta, 12.0, **kw)
    if a.status[0] != LOST:  # left the grid early: nothing to reverse
        return
    b = trace_rays(g, a.x[0], a.y[0], a.theta[0] + np.pi, 12.0, **kw)
    assert b.x[0] == pytest.approx(2500.0, abs=1e-3)
    assert b.y[0] == pytest.approx(2200.0, abs=1e-3)
    assert np.cos(b.theta[0] - theta - np.pi) == pytest.approx(1.0, abs=1e-9)
    assert b.crest_time[0] == pytest.approx(a.crest_time[0], rel=1e-6)


def test_matches_independent_ode_solution():
    # same ray equations solved by scipy's DOP853 at tight tolerance over the same path length
    g = shoal()
    T = 14.0
    theta0 = np.radians([40.0, 70.0])
    r = trace_rays(g, 1500.0, 1000.0, theta0, T, wave_base_fraction=np.inf, edge_min_depth=1.0, step_m=25.0)
    f = 1.0 / T

    def rhs(s, u):
        h, hx, hy = g.sample(u[0], u[1])
        c = phase_speed(f, h)
        dc = phase_speed_depth_derivative(f, h)
        return [np.cos(u[2]), np.sin(u[2]), dc / c * (np.sin(u[2]) * hx - np.cos(u[2]) * hy)]

    for k in range(theta0.size):
        assert r.status[k] == OPEN
        sol = solve_ivp(rhs, (0, r.length[k]), [1500.0, 1000.0, theta0[k]], method="DOP853", rtol=1e-9, atol=1e-7)
        xe, ye, te = sol.y[:, -1]
        assert r.x[k] == pytest.approx(xe, abs=0.5)
        assert r.y[k] == pytest.approx(ye, abs=0.5)
        assert r.theta[k] == pytest.approx(te, abs=2e-4)
    assert np.max(np.abs(r.theta - theta0)) > 0.05  # the shoal really bends these rays


def test_fates():
    g = slope()
    # shoreward: land (blocked); seaward normal: beyond the wave base (open, depth > L0/2)
    r = trace_rays(g, 200.0, 0.0, [np.pi, 0.0], 10.0, edge_min_depth=5.0)
    assert r.status.tolist() == [BLOCKED, OPEN]
    assert r.depth[1] >= 0.5 * G * 100 / (2 * np.pi)
    assert r.x[1] == pytest.approx(r.depth[1] / 0.05, abs=1.0)
    assert r.depth[0] < 0.5
    # exit through the north edge at ~ intermediate depth: open if deep enough, else blocked
    fl = flat(12.0)
    a = trace_rays(fl, 1000.0, 1500.0, np.pi / 2, 20.0, edge_min_depth=10.0)
    b = trace_rays(fl, 1000.0, 1500.0, np.pi / 2, 20.0, edge_min_depth=15.0)
    assert a.status[0] == OPEN and b.status[0] == BLOCKED
    assert a.depth[0] == pytest.approx(12.0)
    assert a.y[0] == pytest.approx(2000.0) and a.length[0] == pytest.approx(500.0, rel=1e-9)
    # step budget
    c = trace_rays(g, 200.0, 0.0, 0.0, 10.0, max_steps=3)
    assert c.status[0] == LOST and c.n_lost == 1


def test_vectorised_over_periods_and_starts_equals_one_by_one():
    g = shoal()
    th = np.linspace(0, 2 * np.pi, 9)
    T = np.linspace(6, 18, 9)
    r = trace_rays(g, 1000.0, 1500.0, th, T, edge_min_depth=1.0)
    for k in range(th.size):
        one = trace_rays(g, 1000.0, 1500.0, th[k], T[k], edge_min_depth=1.0)
        assert one.theta[0] == r.theta[k] and one.length[0] == r.length[k] and one.status[0] == r.status[k]


def test_invalid_input():
    g = flat()
    with pytest.raises(InvalidInput, match="off the grid"):
        trace_rays(g, -10.0, 0.0, 0.0, 10.0)
    with pytest.raises(InvalidInput, match="`period_s`"):
        trace_rays(g, 10.0, 10.0, 0.0, -1.0)
    with pytest.raises(InvalidInput, match="`theta`"):
        trace_rays(g, 10.0, 10.0, np.nan, 10.0)
    with pytest.raises(InvalidInput, match="`max_steps`"):
        trace_rays(g, 10.0, 10.0, 0.0, 10.0, max_steps=0)
