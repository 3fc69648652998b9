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
    # the bins beyond come from the rays (K equal to the ray table)
    grid, tab = beach
    rays = transfer.build_tables(grid, [(-500.0, 0.0)], periods_s=[10.0], direction_bin_deg=10.0, **RAYS)[0]
    f, h = 0.1, tab.reference_depth_m
    used = tab.meta["refraction_diffraction_mask"][0]
    assert {240, 270, 300} <= {int(tab.directions_deg[i]) for i in used}
    for j, d in enumerate(tab.directions_deg):
        a0 = math.radians(d - 270.0)
        if abs(a0) >= math.pi / 2:
            continue
        an = math.asin(math.sin(a0) * float(phase_speed(f, h) / deep_phase_speed(f)))
        K = float(shoaling_coefficient(f, h)) * math.sqrt(math.cos(a0) / math.cos(an))
        if j in used:
            assert abs(tab.coefficient[0, j] / K - 1.0) <= 0.02, d
            assert abs(tab.nearshore_direction_deg[0, j] - (270.0 + math.degrees(an))) <= 1.0, d
        else:
            assert tab.coefficient[0, j] == pytest.approx(rays.coefficient[0, j])
    assert tab.meta["method"] == refdif.METHOD
    assert tab.meta["aperture"]["limit_deg"] == PADE.limit_deg


def test_travel_time_matches_the_ray_table_at_normal_incidence(beach):
    # both measure from a plane crest through the local origin; at normal incidence the ray and the
    # march line coincide, so the crest times agree (to the trapezoid and ray step errors)
    grid, tab = beach
    rays = transfer.build_tables(grid, [(-500.0, 0.0)], periods_s=[10.0], direction_bin_deg=10.0, **RAYS)[0]
    j = int(np.flatnonzero(tab.directions_deg == 270.0)[0])
    assert tab.travel_time_s[0, j] == pytest.approx(rays.travel_time_s[0, j], abs=2.0)
    # the surf-zone profile is the ray table's (the outlook's surf-zone path uses it)
    assert tab.profile is not None and np.array_equal(tab.profile.bed_m, rays.profile.bed_m)


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
    assert "coarser than the wavelength" in tab.meta["refused_periods"]["4"]
    assert tab.meta["refraction_diffraction_bins"][0] == 0
    assert tab.meta["refraction_diffraction_bins"][1] > 0
    with pytest.raises(InvalidInput, match="unknown"):
        refdif.build_tables(grid, [(0.0, 0.0)], periods_s=[12.0], pe_options={"upstream": 1.0})
