"""Local transverse-Mercator projection (models.geodesy) against closed-form geodesy."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import quad

from models.errors import InvalidInput
from models.geodesy import (
    WGS84,
    Ellipsoid,
    meridian_arc,
    meridian_convergence_deg,
    to_local,
    to_lonlat,
)

A = WGS84.a
E2 = WGS84.f * (2.0 - WGS84.f)


def meridian_radius(phi: float) -> float:
    """ρ = a(1-e²)/(1-e² sin²φ)^{3/2} (Snyder 1987 eq. 4-18, from memory)."""
    return A * (1.0 - E2) / (1.0 - E2 * math.sin(phi) ** 2) ** 1.5


def prime_vertical_radius(phi: float) -> float:
    """N = a/(1-e² sin²φ)^{1/2} (Snyder 1987 eq. 4-20, from memory)."""
    return A / math.sqrt(1.0 - E2 * math.sin(phi) ** 2)


def arc_by_quadrature(lat_deg: float) -> float:
    """Meridian arc length as the integral of ρ dφ (definition), by adaptive quadrature."""
    value, _ = quad(meridian_radius, 0.0, math.radians(lat_deg), epsabs=1e-8, epsrel=1e-13)
    return value


# --- exact and reference values --------------------------------------------------------------


def test_meridian_quadrant_wgs84():
    # Equator-to-pole meridian distance on WGS 84: 10 001 965.729 m (Karney 2011, from memory).
    assert meridian_arc(90.0) == pytest.approx(10_001_965.729, abs=1e-3)


@pytest.mark.parametrize("lat", [-60.0, -12.5, 0.0, 10.0, 33.3, 45.0, 71.0, 89.0])
def test_meridian_arc_matches_integral_of_meridian_radius(lat):
    assert meridian_arc(lat) == pytest.approx(arc_by_quadrature(lat), rel=1e-12, abs=1e-6)


@pytest.mark.parametrize("lat0", [-35.0, 0.0, 20.0, 52.0])
def test_central_meridian_is_true_arc_length(lat0):
    # On the central meridian x = 0 and y is the arc length from the origin's latitude.
    lats = lat0 + np.array([-0.45, -0.1, 0.0, 0.2, 0.45])
    x, y = to_local(lats, 7.0, lat0, 7.0)
    expected = [arc_by_quadrature(v) - arc_by_quadrature(lat0) for v in lats]
    np.testing.assert_allclose(x, 0.0, atol=1e-9)
    np.testing.assert_allclose(y, expected, rtol=0, atol=1e-6)


def test_degree_of_longitude_closed_form_against_table():
    # One degree of longitude at 45° = (π/180) N cos φ = 78 846.8 m (common geodesy table,
    # e.g. the "length of a degree" table on WGS 84; from memory). Guards the test formula.
    assert math.radians(1.0) * prime_vertical_radius(math.radians(45.0)) * math.cos(
        math.radians(45.0)
    ) == pytest.approx(78_846.8, abs=0.1)


@pytest.mark.parametrize("lat0", [0.0, 30.0, 45.0, 60.0, -40.0])
def test_small_longitude_step_is_parallel_arc(lat0):
    # A short step along the parallel through the origin has length N cos φ Δλ; transverse
    # Mercator's departure from that is O(Δλ³) (here ~1e-12 relative).
    dlon = 1e-3
    x, y = to_local(lat0, 5.0 + dlon, lat0, 5.0)
    phi = math.radians(lat0)
    assert float(x) == pytest.approx(
        prime_vertical_radius(phi) * math.cos(phi) * math.radians(dlon), rel=1e-9
    )
    assert abs(float(y)) < 1e-3  # the parallel curves away from the grid row only by ~x² tanφ/2N


def test_degree_of_latitude_at_equator():
    # One degree of latitude at the equator: 110 574.3 m on WGS 84 (common geodesy table, from memory).
    _, y = to_local(0.5, 0.0, -0.5, 0.0)
    assert float(y) == pytest.approx(110_574.3, abs=0.1)


# --- spherical limit (exact closed form) ------------------------------------------------------


SPHERE = Ellipsoid(a=6_371_000.0, f=0.0)


@pytest.mark.parametrize("lat0", [0.0, 25.0, -50.0])
@pytest.mark.parametrize("dlat, dlon", [(0.3, 0.4), (-0.4, -0.6), (2.0, 3.0)])
def test_sphere_matches_snyder_closed_form(lat0, dlat, dlon):
    # Spherical transverse Mercator, k0 = 1 (Snyder 1987 eqs. 8-1, 8-3, from memory):
    #   B = cos φ sin Δλ,  x = R atanh B,  y = R (atan(tan φ / cos Δλ) - φ0).
    phi, lam, phi0 = math.radians(lat0 + dlat), math.radians(dlon), math.radians(lat0)
    b = math.cos(phi) * math.sin(lam)
    x_ref = SPHERE.a * math.atanh(b)
    y_ref = SPHERE.a * (math.atan2(math.tan(phi), math.cos(lam)) - phi0)
    x, y = to_local(lat0 + dlat, 10.0 + dlon, lat0, 10.0, ellipsoid=SPHERE)
    assert float(x) == pytest.approx(x_ref, rel=1e-12, abs=1e-7)
    assert float(y) == pytest.approx(y_ref, rel=1e-12, abs=1e-7)


def test_sphere_convergence_matches_closed_form():
    # tan γ = tan Δλ sin φ on the sphere (Snyder 1987 §8, from memory).
    lat, dlon = 40.0, 0.7
    gamma = meridian_convergence_deg(lat, 1.0 + dlon, 40.0, 1.0, ellipsoid=SPHERE)
    expected = math.degrees(math.atan(math.tan(math.radians(dlon)) * math.sin(math.radians(lat))))
    assert float(gamma) == pytest.approx(expected, abs=1e-7)


# --- the accuracy statement in the docstring ----------------------------------------------------


@pytest.mark.parametrize("lat0", [10.0, 45.0, -62.0])
def test_point_scale_at_50_km_matches_docstring(lat0):
    # Conformal, so the scale along the meridian is the point scale: k = |d(x,y)/dφ| / ρ.
    # Leading term k ≈ 1 + x²/(2 ρ N) (Snyder 1987 eq. 8-11, from memory); ~3.1e-5 at 50 km.
    phi = math.radians(lat0)
    dlon = math.degrees(50_000.0 / (prime_vertical_radius(phi) * math.cos(phi)))
    h = 1e-5
    x1, y1 = to_local(lat0 + h, 3.0 + dlon, lat0, 3.0)
    x0, y0 = to_local(lat0 - h, 3.0 + dlon, lat0, 3.0)
    k = math.hypot(float(x1 - x0), float(y1 - y0)) / (meridian_radius(phi) * math.radians(2 * h))
    x_mid, _ = to_local(lat0, 3.0 + dlon, lat0, 3.0)
    expected = 1.0 + float(x_mid) ** 2 / (2.0 * meridian_radius(phi) * prime_vertical_radius(phi))
    assert k == pytest.approx(expected, abs=2e-9)
    assert 2.9e-5 < k - 1.0 < 3.3e-5


def test_convergence_at_50_km_about_half_a_degree_at_45n():
    # γ ≈ Δλ sin φ (common practice approximation); 50 km east at 45° N -> ~0.45°.
    gamma = float(meridian_convergence_deg(45.0, -3.0 + 0.636, 45.0, -3.0))
    assert gamma == pytest.approx(0.636 * math.sin(math.radians(45.0)), rel=1e-3)
    assert float(meridian_convergence_deg(45.0, -3.0 - 0.636, 45.0, -3.0)) == pytest.approx(-gamma, rel=1e-9)


# --- invariants --------------------------------------------------------------------------------


@settings(max_examples=200, deadline=None)
@given(
    lat0=st.floats(-80.0, 80.0),
    lon0=st.floats(-180.0, 179.999),
    x=st.floats(-60_000.0, 60_000.0),
    y=st.floats(-60_000.0, 60_000.0),
)
def test_round_trip_local_lonlat_local(lat0, lon0, x, y):
    lon, lat = to_lonlat(x, y, lat0, lon0)
    x2, y2 = to_local(lat, lon, lat0, lon0)
    assert abs(float(x2) - x) < 1e-6 and abs(float(y2) - y) < 1e-6


def test_origin_maps_to_zero_and_axes_point_east_and_north():
    x, y = to_local(12.0, 34.0, 12.0, 34.0)
    assert float(x) == 0.0 and abs(float(y)) < 1e-9
    x, _ = to_local(12.0, 34.01, 12.0, 34.0)
    _, y = to_local(12.01, 34.0, 12.0, 34.0)
    assert float(x) > 0 and float(y) > 0


def test_antimeridian_wraps():
    x, y = to_local(-10.0, -179.95, -10.0, 179.95)
    x_ref, _ = to_local(-10.0, 0.05, -10.0, -0.05)
    assert float(x) == pytest.approx(float(x_ref), rel=1e-12)
    lon, lat = to_lonlat(x, y, -10.0, 179.95)
    assert float(lon) == pytest.approx(-179.95, abs=1e-9)
    assert float(lat) == pytest.approx(-10.0, abs=1e-9)


def test_broadcasts_and_is_vectorised():
    lat = np.linspace(44.6, 45.4, 5)[:, None]
    lon = np.linspace(-3.5, -2.5, 7)[None, :]
    x, y = to_local(lat, lon, 45.0, -3.0)
    assert x.shape == y.shape == (5, 7)
    x1, y1 = to_local(float(lat[2, 0]), float(lon[0, 4]), 45.0, -3.0)
    assert x[2, 4] == pytest.approx(float(x1)) and y[2, 4] == pytest.approx(float(y1))


# --- validation --------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "args, name",
    [
        ((91.0, 0.0, 0.0, 0.0), "`lat`"),
        ((0.0, 0.0, 90.0, 0.0), "`lat0`"),
        ((float("nan"), 0.0, 0.0, 0.0), "`lat`"),
        ((0.0, 45.0, 0.0, 0.0), "`lon`"),
    ],
)
def test_to_local_rejects_bad_input(args, name):
    with pytest.raises(InvalidInput, match=name):
        to_local(*args)


def test_to_lonlat_rejects_far_points():
    with pytest.raises(InvalidInput, match="`x` and `y`"):
        to_lonlat(2_000_000.0, 0.0, 0.0, 0.0)
