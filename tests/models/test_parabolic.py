"""Parabolic mild-slope march (models.parabolic) against laboratory data and analytic solutions."""

from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np
import pytest
from scipy.interpolate import RegularGridInterpolator
from scipy.special import fresnel

from models.errors import InvalidInput
from models.parabolic import MINIMAX_70, PADE, SMALL_ANGLE, march
from models.waves import shoaling_coefficient, wavenumber

DATA = Path(__file__).resolve().parents[1] / "data" / "berkhoff1982_shoal.csv"


# ----------------------------------------------------------------------------- operator


@pytest.mark.parametrize(
    ("aperture", "upto_deg", "tol"),
    [(SMALL_ANGLE, 20.0, 0.0035), (PADE, 45.0, 0.0072), (MINIMAX_70, 70.0, 0.0054)],
)
def test_rational_approximation_of_cos(aperture, upto_deg, tol):
    # analytic: cos θ against (a0 + a1 sin²θ)/(1 + b1 sin²θ); the minimax bound 0.0053 over 0-70°
    # is the one quoted for these coefficients (Kirby 1986, from memory)
    th = np.radians(np.linspace(0.0, upto_deg, 701))
    s = np.sin(th) ** 2
    approx = (aperture.a0 + aperture.a1 * s) / (1.0 + aperture.b1 * s)
    assert np.max(np.abs(approx - np.cos(th))) <= tol


def test_normal_incidence_on_a_planar_beach_shoals_like_linear_theory():
    # analytic: laterally uniform plane wave, |A| = Ks = sqrt(Cg0/Cg) relative to the deep start
    # (energy-flux conservation; SPM 1984 Vol. II App. C), incident amplitude 1 in 200 m water
    T = 10.0
    x = np.arange(0.0, 3000.0 + 1e-9, 20.0)
    depth = 200.0 - (200.0 - 3.0) * x / 3000.0
    D = np.broadcast_to(depth[None, :, None], (1, x.size, 40)).copy()
    m = march(D, 20.0, 15.0, T, lateral="wall")
    ks = shoaling_coefficient(1.0 / T, depth) / shoaling_coefficient(1.0 / T, 200.0)
    amp = np.abs(m.amplitude[0, :, 20])
    assert np.max(np.abs(amp / ks - 1.0)) < 0.005


def test_bad_input_is_refused_with_the_reason():
    with pytest.raises(InvalidInput, match="depth"):
        march(np.ones((2, 3)), 1.0, 1.0, 8.0)
    with pytest.raises(InvalidInput, match="lateral"):
        march(np.ones((1, 3, 5)), 1.0, 1.0, 8.0, lateral="open")
    with pytest.raises(InvalidInput, match="dy"):
        march(np.ones((1, 3, 5)), 1.0, -1.0, 8.0)


# ----------------------------------------------------------------------------- Berkhoff et al. 1982

SCALE = 100.0  # Froude: lengths x100, periods x10 (header of the data file)


def _berkhoff_depth(x, y):
    """Depth [m, field scale] at field coordinates (geometry in the data file's header)."""
    x, y = x / SCALE, y / SCALE
    c, s = math.cos(math.radians(20.0)), math.sin(math.radians(20.0))
    xr, yr = x * c - y * s, x * s + y * c
    d = np.where(xr < -5.82, 0.45, 0.45 - 0.02 * (5.82 + xr))
    inside = (xr / 3.0) ** 2 + (yr / 4.0) ** 2 <= 1.0
    bump = -0.3 + 0.5 * np.sqrt(np.maximum(1.0 - (xr / 3.75) ** 2 - (yr / 5.0) ** 2, 0.0))
    return SCALE * np.maximum(np.where(inside, d - bump, d), 0.07)


def _measured():
    with DATA.open(encoding="utf-8") as fh:
        rows = list(csv.DictReader(line for line in fh if not line.startswith("#")))
    return np.array(
        [[float(r["section"]), float(r["x_m"]), float(r["y_m"]), float(r["H_over_H0"])] for r in rows]
    )


@pytest.fixture(scope="module")
def berkhoff():
    # tank x from -10 to 12 m, walls at y = +-10 m (field x100); T = 10 s; 10 points per 100 m
    # across, 6 along (the shortest wave, over the shoal top, is about 100 m long)
    dx, dy = 100.0 / 6.0, 10.0
    x = np.arange(-1000.0, 1200.0 + dx / 2, dx)
    y = np.arange(-1000.0, 1000.0 + dy / 2, dy)
    X, Y = np.meshgrid(x, y, indexing="ij")
    # the tank waves were moderately steep (ka about 0.1): the weakly nonlinear (Stokes) amplitude
    # dispersion of Kirby & Dalrymple (1983) is switched on with the tank amplitude 23.2 mm x100
    m = march(_berkhoff_depth(X, Y)[None], dx, dy, 10.0, lateral="wall", nonlinear_amplitude_m=2.32)
    return RegularGridInterpolator((x, y), np.abs(m.amplitude[0]))


@pytest.mark.parametrize("section", [1, 2, 3, 4, 6, 7])
def test_berkhoff_shoal_sections(berkhoff, section):
    # Berkhoff, Booij & Radder (1982), measured H/H0 on each section: RMSE <= 0.15
    d = _measured()
    d = d[d[:, 0] == section]
    model = berkhoff(np.c_[d[:, 1] * SCALE, d[:, 2] * SCALE])
    rmse = float(np.sqrt(np.mean((model - d[:, 3]) ** 2)))
    assert rmse <= 0.15, f"section {section}: RMSE {rmse:.3f}"


def test_berkhoff_centreline_peak(berkhoff):
    # Berkhoff, Booij & Radder (1982), section 7 (y = 0): the measured peak 2.02 at x = 5 m (tank);
    # the model's peak within 10 % of it and within 1 m (tank) of the place
    d = _measured()
    d = d[d[:, 0] == 7]
    i = int(np.argmax(d[:, 3]))
    xs = np.linspace(0.0, 1100.0, 221)
    h = berkhoff(np.c_[xs, np.zeros_like(xs)])
    j = int(np.argmax(h))
    assert abs(h[j] / d[i, 3] - 1.0) <= 0.10
    assert abs(xs[j] / SCALE - d[i, 1]) <= 1.0


# ----------------------------------------------------------------------------- breakwater


def _fresnel_f(sigma):
    """f(σ) = ((1+i)/2) ∫_{-∞}^{σ} exp(-iπu²/2) du (Penney & Price 1952, via scipy's Fresnel integrals)."""
    S, C = fresnel(sigma)
    return 0.5 * (1.0 + 1.0j) * ((C + 0.5) - 1.0j * (S + 0.5))


def _sommerfeld_terms(r, theta, theta0, k):
    """The two terms of the Sommerfeld solution for a semi-infinite breakwater along θ = 0 as given by
    Penney & Price (1952), Phil. Trans. R. Soc. A 244, 236-253: incident-wave term and the term of the
    wave reflected by the breakwater (waves travel toward θ0)."""
    s1 = 2.0 * np.sqrt(k * r / np.pi) * np.sin(0.5 * (theta - theta0))
    s2 = -2.0 * np.sqrt(k * r / np.pi) * np.sin(0.5 * (theta + theta0))
    t1 = _fresnel_f(s1) * np.exp(-1j * k * r * np.cos(theta - theta0))
    t2 = _fresnel_f(s2) * np.exp(-1j * k * r * np.cos(theta + theta0))
    return t1, t2


@pytest.fixture(scope="module")
def breakwater():
    T, h = 8.0, 20.0
    k = float(wavenumber(1.0 / T, h))
    L = 2.0 * math.pi / k
    dx, dy = L / 5.0, L / 10.0
    t = np.arange(-16.0 * L, 16.0 * L + dy / 2, dy)  # along the breakwater line
    xs = np.arange(-1.0 * L, 10.0 * L + dx / 2, dx)  # behind it (the march)
    D = np.full((1, xs.size, t.size), h)
    ib = int(np.argmin(np.abs(xs)))
    D[0, ib, t > 0] = -1.0  # one row of land for t > 0: the breakwater, tip at t = 0
    m = march(D, dx, dy, T)
    return k, L, RegularGridInterpolator((xs - xs[ib], t), np.abs(m.amplitude[0]))


def test_breakwater_diffraction_against_penney_and_price(breakwater):
    # Penney & Price (1952) / Sommerfeld, normal incidence: from 2 wavelengths behind the tip, within
    # 45° of the shadow line, in the shadow and in the lit region. Land absorbs in this model, so the
    # reference is the incident-wave term (the second term is the wave reflected off the breakwater
    # face, which an absorbing barrier does not make); its size behind the barrier is bounded too.
    k, L, field = breakwater
    R, P = np.meshgrid(np.linspace(2.0, 9.0, 29), np.radians(np.linspace(-45.0, 45.0, 31)))
    across, along = R * L * np.cos(P), R * L * np.sin(P)
    model = field(np.c_[across.ravel(), along.ravel()]).reshape(R.shape)
    t1, t2 = _sommerfeld_terms(R * L, np.arctan2(across, along), 0.5 * np.pi, k)
    lit, shadow = P < 0, P > 0
    err = np.abs(model - np.abs(t1))
    assert err[lit].max() <= 0.05
    assert err[shadow].max() <= 0.05
    # against the full reflecting-breakwater solution the difference is at most that plus the
    # reflected term, |t2| <= 0.061 at 2 wavelengths, 0.029 at 9
    assert np.abs(model - np.abs(t1 + t2)).max() <= 0.05 + np.abs(t2).max()
    # and the shadow is filled: half the incident height on the shadow line, >0.1 at 30° inside
    assert abs(float(field([[6.0 * L, 0.0]])[0]) - 0.5) < 0.05
    assert (
        float(field([[6.0 * L * math.cos(math.radians(30)), 6.0 * L * math.sin(math.radians(30))]])[0]) > 0.1
    )
