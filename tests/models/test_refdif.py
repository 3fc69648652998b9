"""Refraction–diffraction transfer tables (models.refdif) against analytic solutions."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import fresnel

from models import refdif, transfer
from models.bathymetry import DepthGrid
from models.errors import InvalidInput
from models.parabolic import PADE
from models.waves import deep_phase_speed, phase_speed, shoaling_coefficient, wavenumber

RAYS = dict(launch_spacing_deg=1.0, refine_levels=3, smoothing_m=0.0)


@pytest.fixture(scope="module")
def beach():
    # straight parallel contours, 1:50, shore at x = 0, capped at 120 m; reference point at 10 m
    dx = 40.0
    x = np.arange(-6000.0, 400.0 + 1, dx)
    y = np.arange(-5000.0, 5000.0 + 1, dx)
    X, _ = np.meshgrid(x, y)
    grid = DepthGrid(np.minimum(-X * 0.02, 120.0), x[0], y[0], dx, dx)
    pe = dict(upstream_m=3500.0, half_width_m=1500.0)
    return grid, refdif.build_tables(grid, [(-500.0, 0.0)], periods_s=[10.0], direction_bin_deg=10.0,
                                     pe_options=pe, **RAYS)[0]  # fmt: skip


def test_planar_beach_matches_snell_and_shoaling_within_the_angle_limit(beach):
    # analytic: Snell's law + shoaling over straight parallel contours (SPM 1984 §2-III), K within 2 %
    # for every bin the parabolic method answered (the wave within PADE.limit_deg of the march axis);
    # the bins beyond the limit come from the rays (K equal to the ray table). The march axis is
    # turned by half the refraction, so the wave leans half of it: Snell's turning decides which
    # bins lie inside the stated limit (1° of slack for the phase-gradient direction)
    grid, tab = beach
    rays = transfer.build_tables(grid, [(-500.0, 0.0)], periods_s=[10.0], direction_bin_deg=10.0, **RAYS)[0]
    f, h = 0.1, tab.reference_depth_m
    used = tab.meta["refraction_diffraction_mask"][0]
    assert {240, 270, 300} <= {int(tab.directions_deg[i]) for i in used}
    inside = beyond = 0
    for j, d in enumerate(tab.directions_deg):
        if abs(d - 270.0) >= 90.0:
            continue
        K, near = _snell_shoaling(f, h, float(d))
        lean = 0.5 * abs(d - near)
        if lean < PADE.limit_deg - 1.0:
            assert j in used, d
            inside += 1
        if lean > PADE.limit_deg + 1.0:
            assert j not in used, d
            beyond += 1
        if j in used:
            assert abs(tab.coefficient[0, j] / K - 1.0) <= 0.02, d
            assert abs(tab.nearshore_direction_deg[0, j] - near) <= 1.0, d
        else:
            assert tab.coefficient[0, j] == pytest.approx(rays.coefficient[0, j])
    assert inside >= 7 and beyond >= 4  # both sides of the limit are exercised
    assert tab.meta["beyond_angle_limit"] >= beyond
    assert tab.meta["method"] == refdif.METHOD
    assert tab.meta["aperture"]["limit_deg"] == PADE.limit_deg == 10.0


def test_travel_time_matches_the_ray_table_at_normal_incidence(beach):
    # both measure from a plane crest through the local origin; at normal incidence the ray and the
    # march line coincide, so the crest times agree (to the trapezoid and ray step errors)
    grid, tab = beach
    rays = transfer.build_tables(grid, [(-500.0, 0.0)], periods_s=[10.0], direction_bin_deg=10.0, **RAYS)[0]
    j = int(np.flatnonzero(tab.directions_deg == 270.0)[0])
    assert tab.travel_time_s[0, j] == pytest.approx(rays.travel_time_s[0, j], abs=2.0)
    # the surf-zone profile is the ray table's (the outlook's surf-zone path uses it)
    assert tab.profile is not None and np.array_equal(tab.profile.bed_m, rays.profile.bed_m)


def _snell_shoaling(f: float, h: float, d: float) -> tuple[float, float]:
    """K and nearshore FROM direction over straight parallel contours facing 270° (Snell's law +
    shoaling, SPM 1984 §2-III)."""
    a0 = math.radians(d - 270.0)
    an = math.asin(math.sin(a0) * float(phase_speed(f, h) / deep_phase_speed(f)))
    return float(shoaling_coefficient(f, h)) * math.sqrt(math.cos(a0) / math.cos(an)), 270.0 + math.degrees(an)


def _planar(x0: float, x1: float, half: float, dx: float, cap: float) -> DepthGrid:
    x = np.arange(x0, x1 + 1, dx)
    y = np.arange(-half, half + 1, dx)
    X, _ = np.meshgrid(x, y)
    return DepthGrid(np.minimum(-X * 0.02, cap), x[0], y[0], dx, dx)


def test_regional_grid_carries_the_start_lines_to_deep_water():
    # a 1:50 beach on a fine local grid that ends at 50 m (short of the 10 s wave base, 78 m),
    # nested in a coarse regional grid of the same beach out to 300 m. The start lines take the
    # rays' wave, and those rays now reach the wave base on the regional grid instead of being
    # continued over assumed straight contours beyond the local edge; K stays within 3 % of
    # Snell + shoaling (SPM 1984 §2-III) in every bin this method answers
    local = _planar(-2500.0, 400.0, 3000.0, 20.0, 50.0)
    region = _planar(-20000.0, 2000.0, 20000.0, 200.0, 300.0)
    kw = dict(periods_s=[10.0], direction_bin_deg=10.0, pe_options=dict(upstream_m=2000.0, half_width_m=1000.0), **RAYS)
    nested = refdif.build_tables(local, [(-500.0, 0.0)], regional=[region], **kw)[0]
    alone = refdif.build_tables(local, [(-500.0, 0.0)], **kw)[0]
    used = nested.meta["refraction_diffraction_mask"][0]
    sea = [j for j in used if abs(nested.directions_deg[j] - 270.0) < 90.0]
    assert {240, 270, 300} <= {int(nested.directions_deg[j]) for j in sea}
    assert nested.meta["regional_grids"]
    for j in sea:
        K, _ = _snell_shoaling(0.1, nested.reference_depth_m, float(nested.directions_deg[j]))
        assert abs(nested.coefficient[0, j] / K - 1.0) <= 0.03, nested.directions_deg[j]
        assert nested.continued_fraction[0, j] == 0.0  # on data to the wave base
        assert alone.continued_fraction[0, j] > 0.99  # beyond the local edge: assumed contours


def _lens_grid():
    # flat 30 m with a round shoal (Gaussian, 15 m high) 1 km offshore of the reference point, on
    # the bearing 272° (a bin centre for 1°, 2° and 4° bins)
    dx = 25.0
    x = np.arange(-6000.0, 1000.0 + 1, dx)
    y = np.arange(-3000.0, 3000.0 + 1, dx)
    X, Y = np.meshgrid(x, y)
    cx, cy = 1000.0 * math.cos(math.radians(-182.0)), 1000.0 * math.sin(math.radians(-182.0))
    d = 30.0 - 15.0 * np.exp(-((X - cx) ** 2 + (Y - cy) ** 2) / (2 * 400.0**2))
    return DepthGrid(d, x[0], y[0], dx, dx)


def test_shoal_lens_does_not_depend_on_the_direction_bin_width():
    # the ray caustic behind a lens grows as the bins shrink; the parabolic amplitude is finite and
    # the same within 3 % for 1°, 2° and 4° bins (the acceptance check); focusing: K > 1
    grid = _lens_grid()
    pe = dict(upstream_m=3000.0, half_width_m=1200.0)
    ks = []
    for width in (1.0, 2.0, 4.0):
        tab = refdif.build_tables(grid, [(0.0, 0.0)], periods_s=[12.0], direction_bin_deg=width,
                                  pe_options=pe, **RAYS)[0]  # fmt: skip
        j = int(np.flatnonzero(np.isclose(tab.directions_deg, 272.0))[0])
        assert j in tab.meta["refraction_diffraction_mask"][0]
        ks.append(tab.coefficient[0, j])
    assert max(ks) / min(ks) - 1.0 <= 0.03
    assert min(ks) > 1.5


def test_shadow_behind_a_breakwater_is_filled():
    # flat 20 m, a breakwater (land two cells thick) along y = 0 for x > 0, waves from the south;
    # rays leave the point 4 wavelengths behind, 1 wavelength into the shadow, empty; the table is
    # near the Sommerfeld / Penney & Price (1952) incident-wave term there (absorbing barrier; the
    # thick barrier and the 20 m grid allow 0.07)
    T, h, dx = 8.0, 20.0, 20.0
    k = float(wavenumber(1.0 / T, h))
    L = 2 * math.pi / k
    x = np.arange(-3000.0, 3000.0 + 1, dx)
    y = np.arange(-3000.0, 1500.0 + 1, dx)
    X, Y = np.meshgrid(x, y)
    d = np.where((np.abs(Y) <= 20.0) & (X > 0.0), -2.0, h)
    grid = DepthGrid(d, x[0], y[0], dx, dx)
    px, py = 1.0 * L, 4.0 * L
    pe = dict(upstream_m=2000.0, half_width_m=1200.0)
    tab = refdif.build_tables(grid, [(px, py)], periods_s=[T], direction_bin_deg=5.0, pe_options=pe, **RAYS)[
        0
    ]
    rays = transfer.build_tables(grid, [(px, py)], periods_s=[T], direction_bin_deg=5.0, **RAYS)[0]
    j = int(np.flatnonzero(np.isclose(tab.directions_deg, 180.0))[0])
    assert rays.coefficient[0, j] == 0.0
    r, th = math.hypot(px, py), math.atan2(py, px)
    sigma = 2.0 * math.sqrt(k * r / math.pi) * math.sin(0.5 * (th - 0.5 * math.pi))
    S, C = fresnel(sigma)
    expected = abs(0.5 * (1 + 1j) * ((C + 0.5) - 1j * (S + 0.5)))
    assert tab.coefficient[0, j] == pytest.approx(expected, abs=0.07)
    assert tab.coefficient[0, j] > 0.1


def test_a_grid_too_coarse_for_a_period_is_refused_with_the_reason():
    grid = _lens_grid()  # 25 m spacing: the 4 s wave (about 24 m long at 30 m) is not resolved
    tab = refdif.build_tables(grid, [(0.0, 0.0)], periods_s=[4.0, 12.0], direction_bin_deg=10.0,
                              pe_options=dict(upstream_m=2000.0, half_width_m=800.0), **RAYS)[0]  # fmt: skip
    assert "4" in tab.meta["refused_periods"]
    assert "coarser than half the wavelength" in tab.meta["refused_periods"]["4"]
    assert tab.meta["refraction_diffraction_bins"][0] == 0
    assert tab.meta["refraction_diffraction_bins"][1] > 0
    with pytest.raises(InvalidInput, match="unknown"):
        refdif.build_tables(grid, [(0.0, 0.0)], periods_s=[12.0], pe_options={"upstream": 1.0})
