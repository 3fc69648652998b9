"""WGS 84 latitude/longitude <-> local metric grid (x east, y north) about an origin.

The projection is a **transverse Mercator** centred on the origin's meridian, scale factor 1 on
that meridian, shifted so the origin maps to (0, 0): ``y`` is the meridian arc length from the
origin's latitude along the central meridian, ``x`` the distance east of it. It is evaluated with
Krüger's series in the third flattening n, to order n⁶, as given by Karney (2011).

Accuracy
--------
* Numerical: the series reproduces the exact ellipsoidal transverse Mercator to about 5 nm within
  3900 km of the central meridian (Karney 2011, §5); the inverse is its numerical inverse to well
  below 1 µm. For a spot grid (±50 km) the implementation error is negligible.
* Projection distortion (inherent to any plane): the map is conformal (angles true locally) and
  true to scale on the central meridian; elsewhere the point scale is k ≈ 1 + x²/(2 R²), i.e.
  +3.1e-5 (3 cm per km, 1.5 m over 50 km) at x = ±50 km, and +7.7e-6 at ±25 km.
* Grid north is true north only on the central meridian. At x = ±50 km the meridian convergence
  is γ ≈ Δλ·sin φ — about 0.45° at 45° latitude (see :func:`meridian_convergence_deg`). Directions
  given as true bearings far from the origin's meridian differ from grid bearings by γ.

References
----------
Karney, C.F.F. (2011) Transverse Mercator with an accuracy of a few nanometers. Journal of
    Geodesy 85, 475-485, eqs. (7)-(11), (19)-(21), (35)-(36).
NIMA (2000) TR8350.2 Department of Defense World Geodetic System 1984, 3rd ed.: a = 6378137 m,
    1/f = 298.257223563.
Snyder, J.P. (1987) Map Projections - A Working Manual. USGS Professional Paper 1395, §8 (the
    spherical transverse Mercator used as a check in the tests).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.errors import ConvergenceError, InvalidInput

__all__ = [
    "WGS84",
    "Ellipsoid",
    "meridian_arc",
    "meridian_convergence_deg",
    "to_local",
    "to_lonlat",
]

_MAX_DLON_DEG = 30.0  # far beyond a spot grid; keeps callers from using this as a world projection


class Ellipsoid(NamedTuple):
    """A reference ellipsoid: semi-major axis ``a`` [m] and flattening ``f``."""

    a: float
    f: float


WGS84 = Ellipsoid(a=6378137.0, f=1.0 / 298.257223563)


class _Series(NamedTuple):
    e: float  # first eccentricity
    big_a: float  # rectifying radius A (meridian quadrant = A π/2)
    alpha: tuple[float, ...]  # forward (conformal -> rectifying) coefficients α1..α6
    beta: tuple[float, ...]  # inverse coefficients β1..β6


def _series(ell: Ellipsoid) -> _Series:
    """Krüger coefficients to order n⁶ (Karney 2011, eqs. 14, 35, 36)."""
    f = ell.f
    n = f / (2.0 - f)
    n2, n3, n4, n5, n6 = n**2, n**3, n**4, n**5, n**6
    big_a = ell.a / (1.0 + n) * (1.0 + n2 / 4.0 + n4 / 64.0 + n6 / 256.0)
    alpha = (
        n / 2 - 2 * n2 / 3 + 5 * n3 / 16 + 41 * n4 / 180 - 127 * n5 / 288 + 7891 * n6 / 37800,
        13 * n2 / 48 - 3 * n3 / 5 + 557 * n4 / 1440 + 281 * n5 / 630 - 1983433 * n6 / 1935360,
        61 * n3 / 240 - 103 * n4 / 140 + 15061 * n5 / 26880 + 167603 * n6 / 181440,
        49561 * n4 / 161280 - 179 * n5 / 168 + 6601661 * n6 / 7257600,
        34729 * n5 / 80640 - 3418889 * n6 / 1995840,
        212378941 * n6 / 319334400,
    )
    beta = (
        n / 2 - 2 * n2 / 3 + 37 * n3 / 96 - n4 / 360 - 81 * n5 / 512 + 96199 * n6 / 604800,
        n2 / 48 + n3 / 15 - 437 * n4 / 1440 + 46 * n5 / 105 - 1118711 * n6 / 3870720,
        17 * n3 / 480 - 37 * n4 / 840 - 209 * n5 / 4480 + 5569 * n6 / 90720,
        4397 * n4 / 161280 - 11 * n5 / 504 - 830251 * n6 / 7257600,
        4583 * n5 / 161280 - 108847 * n6 / 3991680,
        20648693 * n6 / 638668800,
    )
    e = float(np.sqrt(f * (2.0 - f)))
    return _Series(e=e, big_a=big_a, alpha=alpha, beta=beta)


_WGS84_SERIES = _series(WGS84)


def _get_series(ell: Ellipsoid) -> _Series:
    return _WGS84_SERIES if ell == WGS84 else _series(ell)


def _conformal_tan(tau: NDArray[np.float64], e: float) -> NDArray[np.float64]:
    """tan of the conformal latitude from tan φ (Karney 2011, eqs. 7-9)."""
    if e == 0.0:
        return tau
    sigma = np.sinh(e * np.arctanh(e * tau / np.hypot(1.0, tau)))
    return tau * np.hypot(1.0, sigma) - sigma * np.hypot(1.0, tau)


def _geographic_tan(taup: NDArray[np.float64], e: float) -> NDArray[np.float64]:
    """Invert :func:`_conformal_tan` by Newton's method (Karney 2011, eqs. 19-21)."""
    if e == 0.0:
        return taup
    e2m = 1.0 - e * e
    tau = taup.copy()
    for _ in range(10):
        taupi = _conformal_tan(tau, e)
        dtau = (taup - taupi) / np.hypot(1.0, taupi) * (1.0 + e2m * tau**2) / (e2m * np.hypot(1.0, tau))
        tau = tau + dtau
        if np.all(np.abs(dtau) <= 1e-14 * np.maximum(1.0, np.abs(tau))):
            return tau
    raise ConvergenceError("inverse transverse Mercator: latitude iteration did not converge")


def _forward(lat_rad, dlon_rad, s: _Series):
    """(ξ, η) in units of A for geodetic latitude and longitude offset from the central meridian."""
    taup = _conformal_tan(np.tan(lat_rad), s.e)
    cos_l = np.cos(dlon_rad)
    xip = np.arctan2(taup, cos_l)
    etap = np.arcsinh(np.sin(dlon_rad) / np.hypot(taup, cos_l))
    xi, eta = xip.copy(), etap.copy()
    for j, a in enumerate(s.alpha, start=1):
        xi += a * np.sin(2 * j * xip) * np.cosh(2 * j * etap)
        eta += a * np.cos(2 * j * xip) * np.sinh(2 * j * etap)
    return xi, eta


def _inverse(xi, eta, s: _Series):
    xip, etap = xi.copy(), eta.copy()
    for j, b in enumerate(s.beta, start=1):
        xip -= b * np.sin(2 * j * xi) * np.cosh(2 * j * eta)
        etap -= b * np.cos(2 * j * xi) * np.sinh(2 * j * eta)
    sinh_e, cos_x = np.sinh(etap), np.cos(xip)
    taup = np.sin(xip) / np.hypot(sinh_e, cos_x)
    lat = np.arctan(_geographic_tan(taup, s.e))
    dlon = np.arctan2(sinh_e, cos_x)
    return lat, dlon


def _as_float(name: str, value: ArrayLike) -> NDArray[np.float64]:
    arr = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(arr)):
        raise InvalidInput(f"`{name}` must be finite, got {arr[~np.isfinite(arr)].ravel()[0]!r}")
    return arr


def _check_lat(name: str, lat: NDArray[np.float64], *, open_interval: bool = False) -> None:
    bad = (np.abs(lat) >= 90.0) if open_interval else (np.abs(lat) > 90.0)
    if np.any(bad):
        limit = "strictly between -90 and 90" if open_interval else "within [-90, 90]"
        raise InvalidInput(f"`{name}` must be {limit} degrees, got {lat[bad].ravel()[0]!r}")


def _wrap_dlon(lon, lon0) -> NDArray[np.float64]:
    dlon = (np.asarray(lon - lon0) + 180.0) % 360.0 - 180.0
    if np.any(np.abs(dlon) > _MAX_DLON_DEG):
        raise InvalidInput(
            f"`lon` must be within {_MAX_DLON_DEG:g} degrees of `lon0` for a local projection, "
            f"got an offset of {dlon[np.abs(dlon) > _MAX_DLON_DEG].ravel()[0]!r} degrees"
        )
    return dlon


def meridian_arc(lat: ArrayLike, *, ellipsoid: Ellipsoid = WGS84) -> NDArray[np.float64]:
    """Meridian arc length from the equator to latitude ``lat`` [deg] on ``ellipsoid`` [m].

    Uses the rectifying-latitude series of Krüger/Karney (2011, eq. 35 with η = 0); the quadrant
    (equator to pole) is A·π/2 = 10 001 965.729 m on WGS 84.
    """
    lat = _as_float("lat", lat)
    _check_lat("lat", lat)
    s = _get_series(ellipsoid)
    xi, _ = _forward(np.radians(lat), np.zeros_like(lat), s)
    return s.big_a * xi


def to_local(
    lat: ArrayLike,
    lon: ArrayLike,
    lat0: float,
    lon0: float,
    *,
    ellipsoid: Ellipsoid = WGS84,
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Project WGS 84 latitude/longitude [deg] to local metres about the origin (lat0, lon0).

    Returns ``(x_east_m, y_north_m)``, broadcast over ``lat`` and ``lon``; the origin maps to
    (0, 0). Longitude offsets wrap across ±180°. Accuracy: see the module docstring (nanometre
    series error; point scale 1 + 3.1e-5 at 50 km east or west of the origin's meridian).
    """
    lat_a = _as_float("lat", lat)
    lon_a = _as_float("lon", lon)
    lat0_a = _as_float("lat0", lat0)
    lon0_a = _as_float("lon0", lon0)
    if lat0_a.ndim or lon0_a.ndim:
        raise InvalidInput(f"`lat0` and `lon0` must be scalars, got shapes {lat0_a.shape} and {lon0_a.shape}")
    _check_lat("lat", lat_a)
    _check_lat("lat0", lat0_a, open_interval=True)
    lat_a, lon_a = np.broadcast_arrays(lat_a, lon_a)
    dlon = _wrap_dlon(lon_a, lon0_a)
    s = _get_series(ellipsoid)
    xi, eta = _forward(np.radians(lat_a), np.radians(dlon), s)
    xi0, _ = _forward(np.radians(lat0_a), np.zeros(()), s)
    return s.big_a * eta, s.big_a * (xi - xi0)


def to_lonlat(
    x: ArrayLike,
    y: ArrayLike,
    lat0: float,
    lon0: float,
    *,
    ellipsoid: Ellipsoid = WGS84,
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Inverse of :func:`to_local`: local metres about (lat0, lon0) -> ``(lon, lat)`` [deg].

    Note the order: longitude first, as in GeoJSON and x/y. Longitudes are wrapped to [-180, 180).
    """
    x_a = _as_float("x", x)
    y_a = _as_float("y", y)
    lat0_a = _as_float("lat0", lat0)
    lon0_a = _as_float("lon0", lon0)
    if lat0_a.ndim or lon0_a.ndim:
        raise InvalidInput(f"`lat0` and `lon0` must be scalars, got shapes {lat0_a.shape} and {lon0_a.shape}")
    _check_lat("lat0", lat0_a, open_interval=True)
    x_a, y_a = np.broadcast_arrays(x_a, y_a)
    s = _get_series(ellipsoid)
    limit = 0.1 * s.big_a  # ~640 km: far outside any spot grid, well inside the series' range
    if np.any(np.abs(x_a) > limit) or np.any(np.abs(y_a) > limit):
        raise InvalidInput(f"`x` and `y` must be within {limit:.0f} m of the origin for a local projection")
    xi0, _ = _forward(np.radians(lat0_a), np.zeros(()), s)
    lat, dlon = _inverse(y_a / s.big_a + xi0, x_a / s.big_a, s)
    lon = (lon0_a + np.degrees(dlon) + 180.0) % 360.0 - 180.0
    return lon, np.degrees(lat)


def meridian_convergence_deg(
    lat: ArrayLike,
    lon: ArrayLike,
    lat0: float,
    lon0: float,
    *,
    ellipsoid: Ellipsoid = WGS84,
) -> NDArray[np.float64]:
    """Meridian convergence γ [deg]: the angle clockwise from true north to grid north (+y).

    Convert bearings with ``grid_bearing = true_bearing - γ``. γ is positive east of the origin's
    meridian in the northern hemisphere, about Δλ·sin φ (on the sphere tan γ = tan Δλ · sin φ;
    Snyder 1987 §8, from memory). Computed from the projection itself by a central difference
    along the meridian (±1e-6 deg), so it is consistent with :func:`to_local` to ~1e-9 deg.
    """
    lat_a = np.asarray(lat, dtype=float)
    h = 1e-6
    x1, y1 = to_local(np.minimum(lat_a + h, 90.0), lon, lat0, lon0, ellipsoid=ellipsoid)
    x0, y0 = to_local(np.maximum(lat_a - h, -90.0), lon, lat0, lon0, ellipsoid=ellipsoid)
    # arctan2 gives the grid bearing of true north, which is -γ.
    return -np.degrees(np.arctan2(x1 - x0, y1 - y0))
